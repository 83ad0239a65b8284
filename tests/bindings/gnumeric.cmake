# Gnumeric plugin (bindings-c/gnumeric): the real host recalculates workbooks
# headless and every computed cell is compared with the C interface (host
# test) and with the batch tool (demo workbook). Debian's /usr/bin/python3
# (NumPy, for the Python binding's independent check).
find_program(ELLIPSA_SYSTEM_PYTHON3 NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)
if(ELLIPSA_SYSTEM_PYTHON3 AND TARGET gnumeric_plugin)
  foreach(name host demo)
    add_test(NAME bindings.gnumeric_${name}
             COMMAND ${ELLIPSA_SYSTEM_PYTHON3} ${CMAKE_CURRENT_SOURCE_DIR}/test_gnumeric_${name}.py)
    set_tests_properties(bindings.gnumeric_${name} PROPERTIES
      ENVIRONMENT "ELLIPSA_GNUMERIC_PLUGIN_DIR=${ELLIPSA_GNUMERIC_PLUGIN_DIR};ELLIPSA_SOURCE_DIR=${CMAKE_SOURCE_DIR};ELLIPSA_LIBRARY=$<TARGET_FILE:ellipsa>;ELLIPSA_BIN=$<TARGET_FILE:ellipsa_cli>"
      SKIP_RETURN_CODE 77 LABELS bindings TIMEOUT 600)
  endforeach()
endif()

# Gnumeric plugin (bindings-c/gnumeric): the real host recalculates a workbook
# headless and every computed cell is compared with the C interface. Debian's
# /usr/bin/python3 (NumPy, for the Python binding's independent check).
find_program(ELLIPSA_SYSTEM_PYTHON3 NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)
if(ELLIPSA_SYSTEM_PYTHON3 AND TARGET gnumeric_plugin)
  add_test(NAME bindings.gnumeric_host
           COMMAND ${ELLIPSA_SYSTEM_PYTHON3} ${CMAKE_CURRENT_SOURCE_DIR}/test_gnumeric_host.py)
  set_tests_properties(bindings.gnumeric_host PROPERTIES
    ENVIRONMENT "ELLIPSA_GNUMERIC_PLUGIN_DIR=${ELLIPSA_GNUMERIC_PLUGIN_DIR};ELLIPSA_SOURCE_DIR=${CMAKE_SOURCE_DIR};ELLIPSA_LIBRARY=$<TARGET_FILE:ellipsa>"
    SKIP_RETURN_CODE 77 LABELS bindings TIMEOUT 600)
endif()

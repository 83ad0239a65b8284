# LibreOffice Calc add-in (bindings-c/calc): headless Calc computes every
# catalog function; values compared with the C interface; stored names and a
# workbook saved by an earlier build. Debian's /usr/bin/python3 (UNO bridge).
find_program(ELLIPSA_SYSTEM_PYTHON3 NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)
if(ELLIPSA_SYSTEM_PYTHON3 AND TARGET calc_addin)
  foreach(name host demo)
    add_test(NAME bindings.calc_${name}
             COMMAND ${ELLIPSA_SYSTEM_PYTHON3} ${CMAKE_CURRENT_SOURCE_DIR}/test_calc_${name}.py)
    set_tests_properties(bindings.calc_${name} PROPERTIES
      ENVIRONMENT "ELLIPSA_CALC_ADDIN=${ELLIPSA_CALC_ADDIN};ELLIPSA_SOURCE_DIR=${CMAKE_SOURCE_DIR};ELLIPSA_LIBRARY=$<TARGET_FILE:ellipsa>;ELLIPSA_BIN=$<TARGET_FILE:ellipsa_cli>"
      SKIP_RETURN_CODE 77 LABELS bindings TIMEOUT 600 RUN_SERIAL ON)
  endforeach()
endif()

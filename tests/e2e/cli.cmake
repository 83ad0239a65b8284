# The batch tool end to end: demo data, published data, exit codes, dialects,
# piping and atomic outputs. Python (stdlib only) drives the built binary.
find_program(ELLIPSA_E2E_PYTHON NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)
if(NOT ELLIPSA_E2E_PYTHON)
  find_program(ELLIPSA_E2E_PYTHON NAMES python3)
endif()
if(ELLIPSA_E2E_PYTHON)
  foreach(topic demo demo_script exit_codes io compare mixture faults threads hostile)
    add_test(NAME e2e.cli_${topic}
      COMMAND ${ELLIPSA_E2E_PYTHON} ${CMAKE_CURRENT_SOURCE_DIR}/test_cli_${topic}.py)
    set_tests_properties(e2e.cli_${topic} PROPERTIES LABELS e2e
      ENVIRONMENT "ELLIPSA_BIN=$<TARGET_FILE:ellipsa_cli>;ELLIPSA_SOURCE_DIR=${CMAKE_SOURCE_DIR};OPENBLAS_NUM_THREADS=1")
  endforeach()
else()
  message(STATUS "end-to-end CLI tests skipped: python3 not found")
endif()

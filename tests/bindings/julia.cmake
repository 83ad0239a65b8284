# Julia binding (bindings-c/julia/Ellipsa.jl): no Julia runtime is packaged for
# Debian 12, so the binding is checked without one. Every ccall's function
# name, argument count and argument types (struct layouts included) are checked
# against the header as the compiler parses it; a header change the Julia file
# does not follow fails here. The second test shows the check failing on
# deliberately broken copies of the binding and of the header.
find_program(ELLIPSA_JULIA_CHECK_PYTHON NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)
if(NOT ELLIPSA_JULIA_CHECK_PYTHON)
  find_program(ELLIPSA_JULIA_CHECK_PYTHON NAMES python3)
endif()
if(ELLIPSA_JULIA_CHECK_PYTHON)
  add_test(NAME bindings.julia_ccalls_match_header
    COMMAND ${ELLIPSA_JULIA_CHECK_PYTHON} ${CMAKE_CURRENT_SOURCE_DIR}/check_julia_ccalls.py)
  add_test(NAME bindings.julia_check_detects_drift
    COMMAND ${ELLIPSA_JULIA_CHECK_PYTHON} ${CMAKE_CURRENT_SOURCE_DIR}/test_julia_check_detects_drift.py)
  set_tests_properties(bindings.julia_ccalls_match_header bindings.julia_check_detects_drift PROPERTIES
    LABELS "bindings;julia" ENVIRONMENT "CC=${CMAKE_C_COMPILER}" TIMEOUT 120)
else()
  message(STATUS "ellipsa: Julia signature check skipped: python3 not found")
endif()

# Python binding (bindings-c/python, ctypes): smoke test with Debian's
# interpreter, which has NumPy; the test also runs its list path in a child
# interpreter where NumPy is blocked.
find_program(ELLIPSA_PYTHON3 NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)
if(ELLIPSA_PYTHON3)
  add_test(NAME bindings.python_smoke
           COMMAND ${ELLIPSA_PYTHON3} ${CMAKE_CURRENT_SOURCE_DIR}/test_python_smoke.py)
  set_tests_properties(bindings.python_smoke PROPERTIES
    ENVIRONMENT "ELLIPSA_LIBRARY=$<TARGET_FILE:ellipsa>;PYTHONPATH=${CMAKE_SOURCE_DIR}/bindings-c/python;ELLIPSA_CROSS_DIR=${CMAKE_BINARY_DIR}/cross-language"
    LABELS bindings)
else()
  message(STATUS "ellipsa: /usr/bin/python3 not found, Python binding smoke test skipped")
endif()

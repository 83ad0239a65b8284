# Fortran binding (bindings-c/fortran/ellipsa.f90, iso_c_binding): the module
# and tests/bindings/test_fortran_smoke.f90 are compiled as Fortran 2003 with
# warnings as errors (the test compares doubles exactly on purpose) against the libellipsa.so of this build, then run. The
# model written by the Python binding comes from write_fortran_fixture.py
# (Debian's /usr/bin/python3). Three tests joined by fixtures, so
# `ctest -R bindings.fortran` builds what it runs. Without gfortran
# (make deps installs it) the smoke test is reported as skipped, with the reason.
find_program(ELLIPSA_GFORTRAN gfortran)
find_program(ELLIPSA_PYTHON3 NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)  # as python.cmake (included after this file)
set(_f_dir ${CMAKE_CURRENT_BINARY_DIR}/fortran)
if(ELLIPSA_GFORTRAN)
  # sh -c 'mkdir -p "$0" && exec "$@"' DIR COMMAND...: the module directory is made by the test itself.
  set(_f_mkdir_then sh -c "mkdir -p \"$0\" && exec \"$@\"")
  add_test(NAME bindings.fortran_compile
    COMMAND ${_f_mkdir_then} ${_f_dir} ${ELLIPSA_GFORTRAN} -std=f2003 -Wall -Wextra -Wno-compare-reals -pedantic -Werror -fcheck=all
            -J ${_f_dir} -o ${_f_dir}/test_fortran_smoke
            ${PROJECT_SOURCE_DIR}/bindings-c/fortran/ellipsa_c.f90
            ${PROJECT_SOURCE_DIR}/bindings-c/fortran/ellipsa.f90
            ${CMAKE_CURRENT_SOURCE_DIR}/test_fortran_smoke.f90
            -L$<TARGET_FILE_DIR:ellipsa> -lellipsa -Wl,-rpath,$<TARGET_FILE_DIR:ellipsa>)
  set_tests_properties(bindings.fortran_compile PROPERTIES
    FIXTURES_SETUP ellipsa_fortran_exe LABELS "bindings;fortran")
  set(_f_args ${_f_dir})
  if(ELLIPSA_PYTHON3)
    add_test(NAME bindings.fortran_python_fixture
      COMMAND ${ELLIPSA_PYTHON3} ${CMAKE_CURRENT_SOURCE_DIR}/write_fortran_fixture.py ${_f_dir}/from-python)
    set_tests_properties(bindings.fortran_python_fixture PROPERTIES
      FIXTURES_SETUP ellipsa_fortran_python LABELS "bindings;fortran"
      ENVIRONMENT "ELLIPSA_LIBRARY=$<TARGET_FILE:ellipsa>;PYTHONPATH=${CMAKE_SOURCE_DIR}/bindings-c/python")
    list(APPEND _f_args ${_f_dir}/from-python)
  else()
    message(STATUS "ellipsa: /usr/bin/python3 not found: the Fortran test does not load a model written by Python")
  endif()
  add_test(NAME bindings.fortran_smoke COMMAND ${_f_dir}/test_fortran_smoke ${_f_args})
  # The example of bindings-c/fortran/README.md and docs, checked against the batch tool.
  add_test(NAME bindings.fortran_example_compile
    COMMAND ${_f_mkdir_then} ${_f_dir}/example-modules ${ELLIPSA_GFORTRAN} -std=f2003 -Wall -Wextra -pedantic -Werror
            -J ${_f_dir}/example-modules -o ${_f_dir}/screen_new_batch
            ${PROJECT_SOURCE_DIR}/bindings-c/fortran/ellipsa_c.f90
            ${PROJECT_SOURCE_DIR}/bindings-c/fortran/ellipsa.f90
            ${PROJECT_SOURCE_DIR}/examples/fortran/screen_new_batch.f90
            -L$<TARGET_FILE_DIR:ellipsa> -lellipsa -Wl,-rpath,$<TARGET_FILE_DIR:ellipsa>)
  set_tests_properties(bindings.fortran_example_compile PROPERTIES
    FIXTURES_SETUP ellipsa_fortran_example LABELS "bindings;fortran")
  if(ELLIPSA_PYTHON3)
    add_test(NAME bindings.fortran_example
      COMMAND ${ELLIPSA_PYTHON3} ${CMAKE_CURRENT_SOURCE_DIR}/check_fortran_example.py
              ${_f_dir}/screen_new_batch $<TARGET_FILE:ellipsa_cli> ${CMAKE_SOURCE_DIR} ${_f_dir}/example)
    set_tests_properties(bindings.fortran_example PROPERTIES
      FIXTURES_REQUIRED ellipsa_fortran_example LABELS "bindings;fortran" ENVIRONMENT "OPENBLAS_NUM_THREADS=1")
  endif()
  set_tests_properties(bindings.fortran_smoke PROPERTIES
    FIXTURES_REQUIRED "ellipsa_fortran_exe;ellipsa_fortran_python" LABELS "bindings;fortran")
else()
  message(STATUS "ellipsa: Fortran binding smoke test skipped: gfortran not found (make deps installs it)")
  add_test(NAME bindings.fortran_smoke
    COMMAND sh -c "echo 'skipped: gfortran not found (make deps installs it)'; exit 77")
  set_tests_properties(bindings.fortran_smoke PROPERTIES SKIP_RETURN_CODE 77 LABELS "bindings;fortran")
endif()

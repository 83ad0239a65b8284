# The scheduled-job kit (docs/examples/scheduled-job/, docs/scheduled-jobs.md):
# the job script run directly on the demo files (no systemd needed), and the
# unit files checked with systemd-analyze verify when it is installed (the
# test reports itself skipped otherwise), with the cron line's form.
find_program(ELLIPSA_JOB_PYTHON NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)
if(NOT ELLIPSA_JOB_PYTHON)
  find_program(ELLIPSA_JOB_PYTHON NAMES python3)
endif()
find_program(ELLIPSA_FLOCK flock)
if(ELLIPSA_JOB_PYTHON AND ELLIPSA_FLOCK)
  add_test(NAME e2e.nightly_job
    COMMAND ${ELLIPSA_JOB_PYTHON} ${CMAKE_CURRENT_SOURCE_DIR}/test_nightly_job.py job)
  add_test(NAME e2e.nightly_job_units
    COMMAND ${ELLIPSA_JOB_PYTHON} ${CMAKE_CURRENT_SOURCE_DIR}/test_nightly_job.py units)
  set_tests_properties(e2e.nightly_job e2e.nightly_job_units PROPERTIES LABELS "e2e;jobs"
    ENVIRONMENT "ELLIPSA_BIN=$<TARGET_FILE:ellipsa_cli>;ELLIPSA_SOURCE_DIR=${CMAKE_SOURCE_DIR};OPENBLAS_NUM_THREADS=1")
  set_tests_properties(e2e.nightly_job_units PROPERTIES SKIP_RETURN_CODE 77)
else()
  message(STATUS "ellipsa: scheduled-job test skipped: python3 or flock (util-linux) not found")
endif()

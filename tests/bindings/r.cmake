# R binding smoke test (bindings-c/r). The test compiles the .Call glue with
# `R CMD SHLIB` into a scratch folder of the build tree, loads it and checks the
# binding against base R. Skipped when Rscript is not installed.
find_program(RSCRIPT Rscript)
if(RSCRIPT)
  set(ELLIPSA_R_SCRATCH ${CMAKE_CURRENT_BINARY_DIR}/r-glue)
  add_test(NAME bindings.r_smoke
           COMMAND ${RSCRIPT} --vanilla ${CMAKE_CURRENT_SOURCE_DIR}/test_r_smoke.R)
  set_tests_properties(bindings.r_smoke PROPERTIES
    LABELS bindings
    TIMEOUT 300
    ENVIRONMENT "ELLIPSA_INCLUDE_DIR=${CMAKE_SOURCE_DIR}/capi/include;ELLIPSA_LIB_DIR=$<TARGET_FILE_DIR:ellipsa>;ELLIPSA_R_DIR=${CMAKE_SOURCE_DIR}/bindings-c/r;ELLIPSA_R_SCRATCH=${ELLIPSA_R_SCRATCH};OPENBLAS_NUM_THREADS=1;ELLIPSA_CROSS_DIR=${CMAKE_BINARY_DIR}/cross-language")
else()
  message(STATUS "R binding test skipped: Rscript not found")
endif()

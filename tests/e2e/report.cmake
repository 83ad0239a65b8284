# ellipsa report, end to end on the demo data (tests/e2e/test_report.sh):
#  e2e.report         the page: self-contained, well-formed, every figure drawn,
#                     the planted faults listed, text escaped, usage errors;
#  e2e.report_render  the page drawn by headless Chromium is not blank. Skipped
#                     (exit code 77) only when chromium is not installed.
foreach(mode page render)
  set(name e2e.report)
  if(mode STREQUAL "render")
    set(name e2e.report_render)
  endif()
  add_test(NAME ${name}
    COMMAND bash ${CMAKE_CURRENT_SOURCE_DIR}/test_report.sh $<TARGET_FILE:ellipsa_cli>
            ${PROJECT_SOURCE_DIR}/examples ${CMAKE_CURRENT_SOURCE_DIR} ${mode})
  set_tests_properties(${name} PROPERTIES LABELS e2e SKIP_RETURN_CODE 77 TIMEOUT 300
    ENVIRONMENT "OPENBLAS_NUM_THREADS=1")
endforeach()

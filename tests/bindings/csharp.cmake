# C# binding smoke test: compile tests/bindings/SmokeTest.cs together with
# bindings-c/csharp/Ellipsa.cs using Mono's mcs, then run it with mono against the
# libellipsa.so of this build (found through LD_LIBRARY_PATH by DllImport("ellipsa")).
# Two tests joined by a fixture, so compiling is part of `ctest -R bindings.csharp`.
find_program(ELLIPSA_MCS mcs)
find_program(ELLIPSA_MONO mono)
if(ELLIPSA_MCS AND ELLIPSA_MONO)
  set(_ellipsa_cs_exe ${CMAKE_CURRENT_BINARY_DIR}/ellipsa_csharp_smoke.exe)
  add_test(NAME bindings.csharp_compile
           COMMAND ${ELLIPSA_MCS} -unsafe -warnaserror -out:${_ellipsa_cs_exe}
                   ${CMAKE_CURRENT_SOURCE_DIR}/SmokeTest.cs
                   ${PROJECT_SOURCE_DIR}/bindings-c/csharp/Ellipsa.cs)
  set_tests_properties(bindings.csharp_compile PROPERTIES
                       FIXTURES_SETUP ellipsa_csharp_exe LABELS bindings)
  add_test(NAME bindings.csharp_smoke COMMAND ${ELLIPSA_MONO} --debug ${_ellipsa_cs_exe})
  set_tests_properties(bindings.csharp_smoke PROPERTIES
                       FIXTURES_REQUIRED ellipsa_csharp_exe
                       ENVIRONMENT "LD_LIBRARY_PATH=$<TARGET_FILE_DIR:ellipsa>;ELLIPSA_CROSS_DIR=${CMAKE_BINARY_DIR}/cross-language"
                       LABELS bindings)
else()
  message(STATUS "ellipsa: C# binding smoke test skipped: Mono not found (need mcs and mono)")
endif()

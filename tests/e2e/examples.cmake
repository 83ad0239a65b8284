# The C example shown in docs/getting-started.md is compiled as C99 against the
# public header only, and run: documentation that cannot rot.
add_executable(example_profile_and_score ${CMAKE_SOURCE_DIR}/examples/c/profile_and_score.c)
set_target_properties(example_profile_and_score PROPERTIES C_STANDARD 99 C_STANDARD_REQUIRED ON
  RUNTIME_OUTPUT_DIRECTORY ${CMAKE_BINARY_DIR}/tests)
target_compile_options(example_profile_and_score PRIVATE -Wall -Wextra -pedantic -Werror)
target_link_libraries(example_profile_and_score PRIVATE ellipsa)
add_test(NAME e2e.example_profile_and_score COMMAND example_profile_and_score)
set_tests_properties(e2e.example_profile_and_score PROPERTIES LABELS e2e)

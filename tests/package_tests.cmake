# Packaging and tree-hygiene checks (owned with the build packaging).

# find_package(pulsewise) against a `cmake --install` into a temporary prefix: the consumer in
# tests/consumer configures, builds and runs. Catches missing install rules, headers that include
# uninstalled headers, and dependencies the package config fails to find.
add_test(NAME PackageInstall.ConsumerBuildsAndRuns
         COMMAND ${CMAKE_COMMAND}
                 -DBUILD_DIR=${PROJECT_BINARY_DIR}
                 -DSOURCE_DIR=${CMAKE_CURRENT_SOURCE_DIR}/consumer
                 -DWORK_DIR=${CMAKE_CURRENT_BINARY_DIR}/consumer-work
                 -DCONFIG=$<CONFIG>
                 -P ${CMAKE_CURRENT_SOURCE_DIR}/consumer/run_consumer_test.cmake)
set_tests_properties(PackageInstall.ConsumerBuildsAndRuns PROPERTIES TIMEOUT 600 RUN_SERIAL TRUE)

# The tree is formatted with the repository's .clang-format (common practice, no source).
find_program(PULSEWISE_CLANG_FORMAT NAMES clang-format clang-format-14)
if(PULSEWISE_CLANG_FORMAT)
  add_test(NAME Format.SourcesMatchClangFormat
           COMMAND bash ${PROJECT_SOURCE_DIR}/scripts/check-format.sh)
  set_tests_properties(Format.SourcesMatchClangFormat PROPERTIES
                       ENVIRONMENT CLANG_FORMAT=${PULSEWISE_CLANG_FORMAT})
endif()

# The small library examples: built with the examples, each run as a ctest test (label: examples).
# Included from examples/CMakeLists.txt (include(programs.cmake)); sources are beside this file.
include_guard(DIRECTORY)

# Example programs. audit_polygon may already be defined by examples/CMakeLists.txt.
if(NOT TARGET audit_polygon)
  add_executable(audit_polygon ${CMAKE_CURRENT_LIST_DIR}/audit_polygon.cpp)
  target_link_libraries(audit_polygon PRIVATE gridtruth::gridtruth)
endif()
add_executable(worst_features ${CMAKE_CURRENT_LIST_DIR}/worst_features.cpp)
target_link_libraries(worst_features PRIVATE gridtruth::gridtruth)

if(GRIDTRUTH_BUILD_TESTS)
  # This directory may be processed before the top level enables testing: enable it here so the tests count.
  enable_testing()
  add_test(NAME example.audit_polygon COMMAND audit_polygon)
  set_tests_properties(example.audit_polygon PROPERTIES LABELS examples
                       PASS_REGULAR_EXPRESSION "true area [0-9.]+ m2, grid area [0-9.]+ m2: [-+][0-9.]+ ppm \\(pass\\)")
  # Built-in features: four polygons and two lines are ranked, the point is skipped; the five worst are listed.
  add_test(NAME example.worst_features COMMAND worst_features)
  set_tests_properties(example.worst_features PROPERTIES LABELS examples
                       PASS_REGULAR_EXPRESSION "7 features read, 6 measured, 0 not measured.*\n5\\. ")
  set(_example_demo ${CMAKE_CURRENT_LIST_DIR}/data/habitat_survey.geojson)
  if(EXISTS ${_example_demo})
    add_test(NAME example.worst_features_file COMMAND worst_features ${_example_demo} EPSG:32615)
    set_tests_properties(example.worst_features_file PROPERTIES LABELS examples
                         PASS_REGULAR_EXPRESSION "features read, [0-9]+ measured.*\n1\\. ")
  endif()
  add_test(NAME example.worst_features_missing_file COMMAND worst_features ${CMAKE_CURRENT_LIST_DIR}/no_such_file.geojson)
  set_tests_properties(example.worst_features_missing_file PROPERTIES LABELS examples
                       PASS_REGULAR_EXPRESSION "^worst_features: [^\n]*no_such_file")

  # The unit test of a projection choice, with gridtruth's GoogleTest matchers.
  find_package(GTest REQUIRED)
  include(GoogleTest)
  add_executable(projection_choice_test ${CMAKE_CURRENT_LIST_DIR}/projection_choice_test.cpp)
  target_link_libraries(projection_choice_test PRIVATE gridtruth::testing GTest::gtest_main)
  gtest_discover_tests(projection_choice_test TEST_PREFIX example. DISCOVERY_TIMEOUT 60 PROPERTIES LABELS examples)
endif()

# tumbletrace_add_library(<module> SOURCES ... DEPENDS ...)
# One static library per pipeline stage, exported as tumbletrace::<module>.
function(tumbletrace_add_library module)
  cmake_parse_arguments(ARG "" "" "SOURCES;DEPENDS" ${ARGN})
  set(target tumbletrace_${module})
  add_library(${target} STATIC ${ARG_SOURCES})
  add_library(tumbletrace::${module} ALIAS ${target})
  target_include_directories(${target} PUBLIC ${PROJECT_SOURCE_DIR}/include
                                       PRIVATE ${CMAKE_CURRENT_SOURCE_DIR})
  target_compile_features(${target} PUBLIC cxx_std_20)
  target_compile_options(${target} PRIVATE -Wall -Wextra -Wno-unused-parameter)
  target_link_libraries(${target} PUBLIC ${ARG_DEPENDS})
endfunction()

# tumbletrace_add_test(<name> SOURCES ... DEPENDS ... [LABELS ...])
# One GoogleTest executable per tested source file; cases are discovered into ctest.
function(tumbletrace_add_test name)
  cmake_parse_arguments(ARG "" "" "SOURCES;DEPENDS;LABELS" ${ARGN})
  add_executable(${name} ${ARG_SOURCES})
  target_compile_features(${name} PRIVATE cxx_std_20)
  target_link_libraries(${name} PRIVATE ${ARG_DEPENDS} GTest::gtest GTest::gtest_main)
  target_compile_definitions(${name} PRIVATE
    TUMBLETRACE_SOURCE_DIR="${PROJECT_SOURCE_DIR}")
  if(ARG_LABELS)
    gtest_discover_tests(${name} PROPERTIES LABELS "${ARG_LABELS}" DISCOVERY_TIMEOUT 60)
  else()
    gtest_discover_tests(${name} DISCOVERY_TIMEOUT 60)
  endif()
endfunction()

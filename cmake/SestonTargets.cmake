# Shared build settings and the two helpers every module uses.
#
#   seston_module(NAME DEPS ...)  - builds lib/NAME/*.cc into the static library seston_NAME
#   seston_tests(NAME DEPS ...)   - builds tests/NAME/*_test.cc into NAME_tests, registered with CTest

add_library(seston_build_flags INTERFACE)
target_compile_options(seston_build_flags INTERFACE -Wall -Wextra -Wpedantic)
if(SESTON_WERROR)
  target_compile_options(seston_build_flags INTERFACE -Werror)
endif()
if(SESTON_SANITIZE)
  target_compile_options(seston_build_flags INTERFACE -fsanitize=address,undefined
                         -fno-omit-frame-pointer -fno-sanitize-recover=undefined)
  target_link_options(seston_build_flags INTERFACE -fsanitize=address,undefined)
endif()

function(seston_module name)
  cmake_parse_arguments(M "" "" "DEPS" ${ARGN})
  file(GLOB sources CONFIGURE_DEPENDS ${CMAKE_CURRENT_SOURCE_DIR}/*.cc)
  add_library(seston_${name} STATIC ${sources})
  target_include_directories(seston_${name} PUBLIC ${PROJECT_SOURCE_DIR}/lib)
  target_link_libraries(seston_${name} PUBLIC seston_build_flags ${M_DEPS})
endfunction()

function(seston_tests name)
  cmake_parse_arguments(T "" "" "DEPS" ${ARGN})
  file(GLOB sources CONFIGURE_DEPENDS ${CMAKE_CURRENT_SOURCE_DIR}/*_test.cc)
  add_executable(${name}_tests ${sources})
  target_link_libraries(${name}_tests PRIVATE seston_test_support ${T_DEPS} GTest::gtest
                        GTest::gtest_main)
  target_compile_definitions(${name}_tests PRIVATE
                             SESTON_TEST_DATA_DIR="${PROJECT_SOURCE_DIR}/tests/data")
  if(SESTON_UNOPTIMISED_TESTS)
    target_compile_options(${name}_tests PRIVATE -O0)
  endif()
  gtest_discover_tests(${name}_tests DISCOVERY_TIMEOUT 60 PROPERTIES LABELS unit)
endfunction()

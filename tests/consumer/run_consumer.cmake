# Driver of the consumer-build tests (cmake -P). One step per call, chosen by STEP:
#   install           cmake --install BUILD_DIR into a fresh PREFIX and check what is there
#   find_package      configure, build and run tests/consumer/find_package against PREFIX (also the matchers'
#                     program, linked through gridtruth::testing)
#   add_subdirectory  configure, build and run tests/consumer/add_subdirectory with the source tree
#   pkg_config        compile consumer_main.cpp with `pkg-config --cflags --libs gridtruth` from PREFIX, run it
# Inputs: SOURCE_DIR, BUILD_DIR, PREFIX, WORK_DIR, LIBDIR, VERSION, CONFIG, CXX, CXX_FLAGS, LINKER_FLAGS,
# MAKE_PROGRAM, EXPECT_TOOL (ON when the gridtruth command is built). Builds use Ninja with -j2.
cmake_minimum_required(VERSION 3.21)

function(run)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT rc EQUAL 0)
    string(REPLACE ";" " " cmd "${ARGN}")
    message(FATAL_ERROR "failed (${rc}): ${cmd}\n${out}\n${err}")
  endif()
  message(STATUS "${out}")
  set(run_output "${out}" PARENT_SCOPE)
endfunction()

function(build_and_run project_dir binary_dir)
  set(configure ${CMAKE_COMMAND} -S ${project_dir} -B ${binary_dir} -G Ninja
      -DCMAKE_MAKE_PROGRAM=${MAKE_PROGRAM} -DCMAKE_CXX_COMPILER=${CXX} -DCMAKE_BUILD_TYPE=${CONFIG}
      "-DCMAKE_CXX_FLAGS=${CXX_FLAGS}" "-DCMAKE_EXE_LINKER_FLAGS=${LINKER_FLAGS}"
      -DGRIDTRUTH_EXPECTED_VERSION=${VERSION} ${ARGN})
  run(${configure})
  run(${CMAKE_COMMAND} --build ${binary_dir} -j2)
  run(${binary_dir}/consumer)
endfunction()

if(STEP STREQUAL "install")
  file(REMOVE_RECURSE ${PREFIX})
  set(config_args)
  if(CONFIG)
    set(config_args --config ${CONFIG})
  endif()
  run(${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${PREFIX} ${config_args})
  set(expected
      include/gridtruth/audit.hpp include/gridtruth/version.hpp include/gridtruth/testing.hpp
      ${LIBDIR}/cmake/gridtruth/gridtruthConfig.cmake ${LIBDIR}/cmake/gridtruth/gridtruthConfigVersion.cmake
      ${LIBDIR}/cmake/gridtruth/gridtruthTargets.cmake ${LIBDIR}/cmake/gridtruth/gridtruthTestingTargets.cmake
      ${LIBDIR}/pkgconfig/gridtruth.pc)
  if(EXPECT_TOOL)
    list(APPEND expected bin/gridtruth)
  endif()
  foreach(f ${expected})
    if(NOT EXISTS ${PREFIX}/${f})
      message(FATAL_ERROR "cmake --install did not install ${f} under ${PREFIX}")
    endif()
  endforeach()
  file(GLOB libraries ${PREFIX}/${LIBDIR}/libgridtruth.*)
  if(NOT libraries)
    message(FATAL_ERROR "cmake --install did not install libgridtruth under ${PREFIX}/${LIBDIR}")
  endif()
  file(STRINGS ${PREFIX}/include/gridtruth/version.hpp version_line REGEX "define GRIDTRUTH_VERSION_STRING")
  if(NOT version_line MATCHES "\"${VERSION}\"")
    message(FATAL_ERROR "installed version.hpp has '${version_line}', expected ${VERSION}")
  endif()
  if(EXPECT_TOOL)
    run(${PREFIX}/bin/gridtruth --version)
    if(NOT run_output MATCHES "${VERSION}")
      message(FATAL_ERROR "installed gridtruth --version printed '${run_output}', expected ${VERSION}")
    endif()
  endif()
elseif(STEP STREQUAL "find_package")
  # A fresh build each time: Ninja does not see a reinstalled library as changed, and a stale consumer built
  # against an older ABI would crash or pass for the wrong reason.
  file(REMOVE_RECURSE ${WORK_DIR}/find_package)
  build_and_run(${SOURCE_DIR}/tests/consumer/find_package ${WORK_DIR}/find_package
                -DCMAKE_PREFIX_PATH=${PREFIX} -DCMAKE_FIND_USE_PACKAGE_REGISTRY=OFF)
  # gridtruth::testing: the matchers' test program, linked through the installed target.
  run(${WORK_DIR}/find_package/consumer_testing)
  if(NOT run_output MATCHES "PASSED")
    message(FATAL_ERROR "consumer_testing did not pass:\n${run_output}")
  endif()
elseif(STEP STREQUAL "add_subdirectory")
  # Built without optimisation: this checks the wiring, and the library compiles twice as fast.
  set(CONFIG "")
  build_and_run(${SOURCE_DIR}/tests/consumer/add_subdirectory ${WORK_DIR}/add_subdirectory
                -DGRIDTRUTH_SOURCE_DIR=${SOURCE_DIR})
elseif(STEP STREQUAL "pkg_config")
  find_program(PKG_CONFIG_EXECUTABLE NAMES pkg-config pkgconf REQUIRED)
  set(ENV{PKG_CONFIG_PATH} "${PREFIX}/${LIBDIR}/pkgconfig")
  run(${PKG_CONFIG_EXECUTABLE} --modversion gridtruth)
  string(STRIP "${run_output}" modversion)
  if(NOT modversion STREQUAL VERSION)
    message(FATAL_ERROR "pkg-config --modversion gridtruth gave '${modversion}', expected ${VERSION}")
  endif()
  run(${PKG_CONFIG_EXECUTABLE} --cflags --libs gridtruth)
  string(STRIP "${run_output}" pc_flags)
  separate_arguments(pc_args UNIX_COMMAND "${pc_flags}")
  foreach(needed -lgridtruth -lproj -lGeographicLib)
    if(NOT needed IN_LIST pc_args)
      message(FATAL_ERROR "pkg-config --cflags --libs gridtruth lacks ${needed}: ${pc_flags}")
    endif()
  endforeach()
  # The -I and -L directories must be the prefix's (the .pc file may spell them through ${pcfiledir}/../..).
  file(REAL_PATH ${PREFIX}/include prefix_include)
  file(REAL_PATH ${PREFIX}/${LIBDIR} prefix_lib)
  set(found_include OFF)
  set(found_lib OFF)
  foreach(arg ${pc_args})
    if(arg MATCHES "^-([IL])(.+)$")
      file(REAL_PATH "${CMAKE_MATCH_2}" dir)
      if(CMAKE_MATCH_1 STREQUAL "I" AND dir STREQUAL prefix_include)
        set(found_include ON)
      elseif(CMAKE_MATCH_1 STREQUAL "L" AND dir STREQUAL prefix_lib)
        set(found_lib ON)
      endif()
    endif()
  endforeach()
  if(NOT found_include OR NOT found_lib)
    message(FATAL_ERROR "pkg-config gives no -I${prefix_include} or no -L${prefix_lib}: ${pc_flags}")
  endif()
  separate_arguments(extra_compile UNIX_COMMAND "${CXX_FLAGS}")
  separate_arguments(extra_link UNIX_COMMAND "${LINKER_FLAGS}")
  file(MAKE_DIRECTORY ${WORK_DIR}/pkg_config)
  # The usual order for a one-file program: sources before the libraries that resolve them.
  run(${CXX} -std=c++17 ${extra_compile} "-DEXPECTED_VERSION=\"${VERSION}\""
      ${SOURCE_DIR}/tests/consumer/consumer_main.cpp ${pc_args} ${extra_link} -o ${WORK_DIR}/pkg_config/consumer)
  run(${WORK_DIR}/pkg_config/consumer)
else()
  message(FATAL_ERROR "unknown STEP '${STEP}'")
endif()

# Version header, pkg-config file, API documentation and consumer-build tests (included from the top-level
# CMakeLists.txt after the library, examples and tests are defined).

# ---- gridtruth/version.hpp: generated into the build tree, installed beside the other headers -----------------
set(GRIDTRUTH_GENERATED_INCLUDE_DIR ${PROJECT_BINARY_DIR}/generated/include)
configure_file(${PROJECT_SOURCE_DIR}/cmake/version.hpp.in ${GRIDTRUTH_GENERATED_INCLUDE_DIR}/gridtruth/version.hpp
               @ONLY)
target_include_directories(gridtruth PUBLIC $<BUILD_INTERFACE:${GRIDTRUTH_GENERATED_INCLUDE_DIR}>)

# ---- gridtruth.pc for pkg-config users ----------------------------------------------------------------------
# A static libgridtruth needs its dependencies (PROJ, GeographicLib and, when linked, oneTBB) on the link line
# itself, so they are public requirements (Requires) then; a shared one links them itself (Requires.private).
# Header-only dependencies (nlohmann_json) are used privately and need nothing.
set(_gridtruth_pc_modules "proj >= 9" geographiclib simdjson)
get_target_property(_gridtruth_links gridtruth LINK_LIBRARIES)
if("TBB::tbb" IN_LIST _gridtruth_links)
  list(APPEND _gridtruth_pc_modules tbb)
endif()
list(JOIN _gridtruth_pc_modules ", " _gridtruth_pc_modules)
get_target_property(_gridtruth_type gridtruth TYPE)
if(_gridtruth_type STREQUAL "STATIC_LIBRARY")
  set(GRIDTRUTH_PC_REQUIRES "Requires: ${_gridtruth_pc_modules}")
else()
  set(GRIDTRUTH_PC_REQUIRES "Requires.private: ${_gridtruth_pc_modules}")
endif()
set(_gridtruth_pc_dir ${CMAKE_INSTALL_LIBDIR}/pkgconfig)
if(IS_ABSOLUTE "${CMAKE_INSTALL_LIBDIR}" OR IS_ABSOLUTE "${CMAKE_INSTALL_INCLUDEDIR}")
  set(GRIDTRUTH_PC_PREFIX "${CMAKE_INSTALL_PREFIX}")
  set(GRIDTRUTH_PC_LIBDIR "${CMAKE_INSTALL_FULL_LIBDIR}")
  set(GRIDTRUTH_PC_INCLUDEDIR "${CMAKE_INSTALL_FULL_INCLUDEDIR}")
else()
  # Relative to the .pc file, so that `cmake --install --prefix anywhere` gives a working file.
  file(RELATIVE_PATH _gridtruth_pc_up "/root/${_gridtruth_pc_dir}" "/root")
  string(REGEX REPLACE "/$" "" _gridtruth_pc_up "${_gridtruth_pc_up}")
  set(GRIDTRUTH_PC_PREFIX "\${pcfiledir}/${_gridtruth_pc_up}")
  set(GRIDTRUTH_PC_LIBDIR "\${prefix}/${CMAKE_INSTALL_LIBDIR}")
  set(GRIDTRUTH_PC_INCLUDEDIR "\${prefix}/${CMAKE_INSTALL_INCLUDEDIR}")
endif()
configure_file(${PROJECT_SOURCE_DIR}/cmake/gridtruth.pc.in ${PROJECT_BINARY_DIR}/gridtruth.pc @ONLY)

if(GRIDTRUTH_INSTALL)
  install(FILES ${GRIDTRUTH_GENERATED_INCLUDE_DIR}/gridtruth/version.hpp
          DESTINATION ${CMAKE_INSTALL_INCLUDEDIR}/gridtruth)
  install(FILES ${PROJECT_BINARY_DIR}/gridtruth.pc DESTINATION ${_gridtruth_pc_dir})
endif()

# ---- API documentation: `cmake --build <dir> --target docs` (Doxygen, warnings are errors) ---------------------
option(GRIDTRUTH_BUILD_DOCS "Add the docs target (needs Doxygen)" ${PROJECT_IS_TOP_LEVEL})
if(GRIDTRUTH_BUILD_DOCS)
  include(${PROJECT_SOURCE_DIR}/cmake/docs.cmake)
endif()

# ---- Consumer builds: find_package of the installed tree, add_subdirectory, pkg-config ------------------------
if(GRIDTRUTH_BUILD_TESTS AND GRIDTRUTH_INSTALL)
  add_subdirectory(${PROJECT_SOURCE_DIR}/tests/consumer ${PROJECT_BINARY_DIR}/tests/consumer)
endif()

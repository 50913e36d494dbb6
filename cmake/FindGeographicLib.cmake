# Finds GeographicLib (Debian: libgeographiclib-dev) and defines the imported target GeographicLib::GeographicLib.
find_path(GeographicLib_INCLUDE_DIR GeographicLib/Config.h)
find_library(GeographicLib_LIBRARY NAMES GeographicLib)
if(GeographicLib_INCLUDE_DIR AND EXISTS "${GeographicLib_INCLUDE_DIR}/GeographicLib/Config.h")
  file(STRINGS "${GeographicLib_INCLUDE_DIR}/GeographicLib/Config.h" _gl_version
       REGEX "^#define GEOGRAPHICLIB_VERSION_STRING")
  string(REGEX REPLACE ".*\"([^\"]+)\".*" "\\1" GeographicLib_VERSION "${_gl_version}")
endif()
include(FindPackageHandleStandardArgs)
find_package_handle_standard_args(GeographicLib
  REQUIRED_VARS GeographicLib_LIBRARY GeographicLib_INCLUDE_DIR
  VERSION_VAR GeographicLib_VERSION)
if(GeographicLib_FOUND AND NOT TARGET GeographicLib::GeographicLib)
  add_library(GeographicLib::GeographicLib UNKNOWN IMPORTED)
  set_target_properties(GeographicLib::GeographicLib PROPERTIES
    IMPORTED_LOCATION "${GeographicLib_LIBRARY}"
    INTERFACE_INCLUDE_DIRECTORIES "${GeographicLib_INCLUDE_DIR}")
endif()
mark_as_advanced(GeographicLib_INCLUDE_DIR GeographicLib_LIBRARY)

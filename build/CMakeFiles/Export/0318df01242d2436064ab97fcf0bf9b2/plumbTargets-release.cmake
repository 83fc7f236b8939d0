#----------------------------------------------------------------
# Generated CMake target import file for configuration "Release".
#----------------------------------------------------------------

# Commands may need to know the format version.
set(CMAKE_IMPORT_FILE_VERSION 1)

# Import target "plumb::core" for configuration "Release"
set_property(TARGET plumb::core APPEND PROPERTY IMPORTED_CONFIGURATIONS RELEASE)
set_target_properties(plumb::core PROPERTIES
  IMPORTED_LINK_INTERFACE_LANGUAGES_RELEASE "CXX"
  IMPORTED_LOCATION_RELEASE "${_IMPORT_PREFIX}/lib/libplumb.a"
  )

list(APPEND _cmake_import_check_targets plumb::core )
list(APPEND _cmake_import_check_files_for_plumb::core "${_IMPORT_PREFIX}/lib/libplumb.a" )

# Commands beyond this point should not need to know the version.
set(CMAKE_IMPORT_FILE_VERSION)

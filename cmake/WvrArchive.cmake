# The optional MeasurementSet component: wvr_archive (alias libwvr::archive) over casacore's
# tables and measures libraries. Sets WVR_HAVE_ARCHIVE for the tools, bindings and tests.
find_path(CASACORE_INCLUDE_DIR casacore/tables/Tables/Table.h)
find_library(CASACORE_CASA_LIBRARY casa_casa)
find_library(CASACORE_TABLES_LIBRARY casa_tables)
find_library(CASACORE_MEASURES_LIBRARY casa_measures)
if(CASACORE_INCLUDE_DIR AND CASACORE_CASA_LIBRARY AND CASACORE_TABLES_LIBRARY
   AND CASACORE_MEASURES_LIBRARY)
  set(WVR_HAVE_ARCHIVE ON CACHE INTERNAL "casacore found: the MeasurementSet component is built")
  message(STATUS "casacore found: building the MeasurementSet component (wvr_archive)")
  file(GLOB WVR_ARCHIVE_SOURCES CONFIGURE_DEPENDS ${PROJECT_SOURCE_DIR}/libwvr/src/archive/*.cpp)
  add_library(wvr_archive ${WVR_ARCHIVE_SOURCES})
  add_library(libwvr::archive ALIAS wvr_archive)
  set_target_properties(wvr_archive PROPERTIES
    POSITION_INDEPENDENT_CODE ON VERSION ${PROJECT_VERSION} SOVERSION ${PROJECT_VERSION_MAJOR})
  target_include_directories(wvr_archive PRIVATE ${PROJECT_SOURCE_DIR}/libwvr/src)
  # casacore headers are used only inside the component (the public header is plain C++).
  target_include_directories(wvr_archive SYSTEM PRIVATE ${CASACORE_INCLUDE_DIR})
  target_link_libraries(wvr_archive PUBLIC wvr PRIVATE Eigen3::Eigen
    ${CASACORE_MEASURES_LIBRARY} ${CASACORE_TABLES_LIBRARY} ${CASACORE_CASA_LIBRARY})
  wvr_apply_compiler_options(wvr_archive)
  # casacore 3.5's headers use std::allocator members removed in C++20: the files that include
  # them are compiled as C++17 (the later -std wins) and see no C++20 libwvr header.
  set(WVR_ARCHIVE_CASACORE_SOURCES ${WVR_ARCHIVE_SOURCES})
  list(FILTER WVR_ARCHIVE_CASACORE_SOURCES INCLUDE REGEX "/ms_[a-z_]*\\.cpp$")
  list(FILTER WVR_ARCHIVE_CASACORE_SOURCES EXCLUDE REGEX "/ms_(import|export)\\.cpp$")
  set_source_files_properties(${WVR_ARCHIVE_CASACORE_SOURCES} PROPERTIES COMPILE_OPTIONS -std=c++17)
  install(TARGETS wvr_archive LIBRARY DESTINATION ${CMAKE_INSTALL_LIBDIR}
    ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR})
  install(FILES ${PROJECT_SOURCE_DIR}/libwvr/include/wvr/measurement_set.hpp
    DESTINATION ${CMAKE_INSTALL_INCLUDEDIR}/wvr)
else()
  set(WVR_HAVE_ARCHIVE OFF CACHE INTERNAL "casacore found: the MeasurementSet component is built")
  message(STATUS "casacore not found: the MeasurementSet component is not built")
endif()

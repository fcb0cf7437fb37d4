# Installs the public plugin header and a CMake package so that out-of-tree plugins can use
# find_package(Tessera) and tessera_add_plugin().
include(CMakePackageConfigHelpers)
add_library(tessera_plugin_api INTERFACE)
target_include_directories(tessera_plugin_api INTERFACE
  $<BUILD_INTERFACE:${PROJECT_SOURCE_DIR}/include> $<INSTALL_INTERFACE:${CMAKE_INSTALL_INCLUDEDIR}>)
set_target_properties(tessera_plugin_api PROPERTIES EXPORT_NAME plugin_api)
install(TARGETS tessera_plugin_api EXPORT TesseraTargets)
install(FILES include/tessera/plugin.h DESTINATION ${CMAKE_INSTALL_INCLUDEDIR}/tessera)
install(EXPORT TesseraTargets NAMESPACE Tessera:: DESTINATION ${CMAKE_INSTALL_LIBDIR}/cmake/Tessera)
configure_package_config_file(cmake/TesseraConfig.cmake.in
  ${CMAKE_BINARY_DIR}/TesseraConfig.cmake INSTALL_DESTINATION ${CMAKE_INSTALL_LIBDIR}/cmake/Tessera
  PATH_VARS TESSERA_PLUGIN_INSTALL_DIR)
write_basic_package_version_file(${CMAKE_BINARY_DIR}/TesseraConfigVersion.cmake
  COMPATIBILITY SameMajorVersion)
install(FILES ${CMAKE_BINARY_DIR}/TesseraConfig.cmake ${CMAKE_BINARY_DIR}/TesseraConfigVersion.cmake
  cmake/TesseraPlugin.cmake DESTINATION ${CMAKE_INSTALL_LIBDIR}/cmake/Tessera)

# tessera_add_plugin(NAME SOURCES...)
# Builds a Tessera problem plugin: a shared library named tessera-plugin-NAME that sees only the
# public header <tessera/plugin.h>. Inside this tree it lands in <build>/plugins; the same
# function is shipped in the installed CMake package for out-of-tree plugins.
function(tessera_add_plugin name)
  set(target tessera-plugin-${name})
  add_library(${target} MODULE ${ARGN})
  set_target_properties(${target} PROPERTIES PREFIX "" CXX_VISIBILITY_PRESET hidden
                        C_VISIBILITY_PRESET hidden VISIBILITY_INLINES_HIDDEN ON)
  if(TARGET tessera_warnings AND DEFINED TESSERA_PLUGIN_BUILD_DIR)
    # In-tree build.
    target_include_directories(${target} PRIVATE ${PROJECT_SOURCE_DIR}/include)
    target_link_libraries(${target} PRIVATE tessera_warnings)
    set_target_properties(${target} PROPERTIES LIBRARY_OUTPUT_DIRECTORY ${TESSERA_PLUGIN_BUILD_DIR})
    install(TARGETS ${target} LIBRARY DESTINATION ${TESSERA_PLUGIN_INSTALL_DIR})
  else()
    # Out of tree (find_package(Tessera)): the file lands in the caller's build folder, to be
    # named in TESSERA_PLUGIN_PATH; `cmake --install` into tessera's own prefix puts it where
    # tessera looks by itself.
    target_link_libraries(${target} PRIVATE Tessera::plugin_api)
    install(TARGETS ${target} LIBRARY DESTINATION lib/tessera/plugins)
  endif()
endfunction()

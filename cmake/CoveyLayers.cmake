# covey's library layers: one static, position-independent target per layer (covey_<name>, alias
# covey::<name>), each linking only the layers below it, and covey::covey for all of them.
#
# covey_layer(NAME DIR folder [DEPS layer...] [PUBLIC_LIBS lib...] [PRIVATE_LIBS lib...])
#   sources: folder/*.cpp; public headers: include/covey/NAME/*.hpp; private headers stay beside
#   the sources. The layer graph is written to ${CMAKE_BINARY_DIR}/layers.txt, which
#   tests/check_layers.py reads to refuse an #include that points upward.

# Private to the build: the src/ root for the private headers shared between layers
# ("core/h5.hpp", "core/progress.hpp", "core/mpi_context.hpp") and HDF5's C++ headers they use.
add_library(covey_internal INTERFACE)
target_include_directories(covey_internal INTERFACE ${CMAKE_SOURCE_DIR}/src)
target_include_directories(covey_internal SYSTEM INTERFACE ${HDF5_INCLUDE_DIRS})
target_compile_definitions(covey_internal INTERFACE ${HDF5_DEFINITIONS})
if(MPI_C_FOUND)
  target_compile_definitions(covey_internal INTERFACE COVEY_WITH_MPI)
endif()

set(COVEY_LAYERS "" CACHE INTERNAL "")
file(WRITE ${CMAKE_BINARY_DIR}/layers.txt "# layer folder dependencies (written by cmake/CoveyLayers.cmake)\n")

function(covey_layer name)
  cmake_parse_arguments(L "" "DIR" "DEPS;PUBLIC_LIBS;PRIVATE_LIBS" ${ARGN})
  file(GLOB sources CONFIGURE_DEPENDS ${CMAKE_SOURCE_DIR}/${L_DIR}/*.cpp)
  add_library(covey_${name} STATIC ${sources})
  add_library(covey::${name} ALIAS covey_${name})
  set_target_properties(covey_${name} PROPERTIES POSITION_INDEPENDENT_CODE ON
                                                 EXPORT_NAME ${name})
  target_include_directories(covey_${name} PUBLIC
    $<BUILD_INTERFACE:${CMAKE_SOURCE_DIR}/include>
    $<BUILD_INTERFACE:${CMAKE_BINARY_DIR}/generated>
    $<INSTALL_INTERFACE:${CMAKE_INSTALL_INCLUDEDIR}>)
  foreach(dep IN LISTS L_DEPS)
    target_link_libraries(covey_${name} PUBLIC covey_${dep})
  endforeach()
  target_link_libraries(covey_${name} PUBLIC ${L_PUBLIC_LIBS})
  target_link_libraries(covey_${name} PRIVATE $<BUILD_INTERFACE:covey_internal> ${L_PRIVATE_LIBS})
  if(name STREQUAL "core")
    target_link_libraries(covey_${name} PRIVATE ${HDF5_CXX_LIBRARIES} ${HDF5_LIBRARIES})
  endif()
  set(COVEY_LAYERS ${COVEY_LAYERS} ${name} CACHE INTERNAL "")
  string(REPLACE ";" " " deps_text "${L_DEPS}")
  file(APPEND ${CMAKE_BINARY_DIR}/layers.txt "${name} ${L_DIR} ${deps_text}\n")
endfunction()

# covey::covey: every layer (the top one links the rest).
function(covey_umbrella)
  add_library(covey_covey INTERFACE)
  add_library(covey::covey ALIAS covey_covey)
  set_target_properties(covey_covey PROPERTIES EXPORT_NAME covey)
  foreach(layer IN LISTS COVEY_LAYERS)
    target_link_libraries(covey_covey INTERFACE covey_${layer})
  endforeach()
endfunction()

# Headers, libraries, the covey binary, a CMake package (find_package(covey) with covey::
# targets) and a pkg-config file, under CMAKE_INSTALL_PREFIX.
function(covey_install)
  include(CMakePackageConfigHelpers)
  set(targets covey_covey)
  foreach(layer IN LISTS COVEY_LAYERS)
    list(APPEND targets covey_${layer})
  endforeach()
  install(TARGETS ${targets} EXPORT coveyTargets
          ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR}
          INCLUDES DESTINATION ${CMAKE_INSTALL_INCLUDEDIR})
  install(TARGETS covey RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR})
  install(DIRECTORY ${CMAKE_SOURCE_DIR}/include/covey DESTINATION ${CMAKE_INSTALL_INCLUDEDIR}
          FILES_MATCHING PATTERN "*.hpp")
  install(FILES ${CMAKE_BINARY_DIR}/generated/covey/core/version.hpp
          DESTINATION ${CMAKE_INSTALL_INCLUDEDIR}/covey/core)
  set(cmake_dir ${CMAKE_INSTALL_LIBDIR}/cmake/covey)
  install(EXPORT coveyTargets NAMESPACE covey:: DESTINATION ${cmake_dir})
  configure_package_config_file(${CMAKE_SOURCE_DIR}/cmake/coveyConfig.cmake.in
    ${CMAKE_BINARY_DIR}/coveyConfig.cmake INSTALL_DESTINATION ${cmake_dir})
  write_basic_package_version_file(${CMAKE_BINARY_DIR}/coveyConfigVersion.cmake
    VERSION ${PROJECT_VERSION} COMPATIBILITY SameMinorVersion)
  install(FILES ${CMAKE_BINARY_DIR}/coveyConfig.cmake ${CMAKE_BINARY_DIR}/coveyConfigVersion.cmake
          DESTINATION ${cmake_dir})
  # pkg-config: the layers top first (static link order), then what they need.
  set(libs "")
  set(reversed ${COVEY_LAYERS})
  list(REVERSE reversed)
  foreach(layer IN LISTS reversed)
    string(APPEND libs " -lcovey_${layer}")
  endforeach()
  set(private_libs "")
  foreach(lib IN LISTS HDF5_CXX_LIBRARIES HDF5_LIBRARIES)
    string(APPEND private_libs " ${lib}")
  endforeach()
  if(MPI_C_FOUND)
    foreach(lib IN LISTS MPI_C_LIBRARIES)
      string(APPEND private_libs " ${lib}")
    endforeach()
  endif()
  set(COVEY_PC_LIBS "${libs}")
  set(COVEY_PC_PRIVATE_LIBS "${private_libs}")
  configure_file(${CMAKE_SOURCE_DIR}/cmake/covey.pc.in ${CMAKE_BINARY_DIR}/covey.pc @ONLY)
  install(FILES ${CMAKE_BINARY_DIR}/covey.pc DESTINATION ${CMAKE_INSTALL_LIBDIR}/pkgconfig)
endfunction()

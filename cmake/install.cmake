# Installing Lodestone like other HPC libraries: the `lodestone` binary, the
# library, the public headers, the Python helper (to-lodestone), a CMake package (find_package(Lodestone)) and a
# pkg-config file.
include(CMakePackageConfigHelpers)

install(TARGETS lodestone_lib EXPORT LodestoneTargets
  ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR}
  LIBRARY DESTINATION ${CMAKE_INSTALL_LIBDIR})
install(TARGETS lodestone lodestone_core RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR})
# The Python users' helper: the command in bin, its importable module under share.
install(PROGRAMS ${PROJECT_SOURCE_DIR}/scripts/to-lodestone DESTINATION ${CMAKE_INSTALL_BINDIR})
install(FILES ${PROJECT_SOURCE_DIR}/scripts/to_lodestone.py DESTINATION ${CMAKE_INSTALL_DATADIR}/lodestone/python)
install(DIRECTORY ${PROJECT_SOURCE_DIR}/include/lodestone DESTINATION ${CMAKE_INSTALL_INCLUDEDIR})

set(LODESTONE_CMAKE_DIR ${CMAKE_INSTALL_LIBDIR}/cmake/Lodestone)
install(EXPORT LodestoneTargets NAMESPACE Lodestone:: DESTINATION ${LODESTONE_CMAKE_DIR})
configure_package_config_file(${PROJECT_SOURCE_DIR}/cmake/LodestoneConfig.cmake.in
  ${PROJECT_BINARY_DIR}/LodestoneConfig.cmake INSTALL_DESTINATION ${LODESTONE_CMAKE_DIR})
write_basic_package_version_file(${PROJECT_BINARY_DIR}/LodestoneConfigVersion.cmake
  VERSION ${PROJECT_VERSION} COMPATIBILITY SameMinorVersion)
install(FILES ${PROJECT_BINARY_DIR}/LodestoneConfig.cmake ${PROJECT_BINARY_DIR}/LodestoneConfigVersion.cmake
  DESTINATION ${LODESTONE_CMAKE_DIR})

configure_file(${PROJECT_SOURCE_DIR}/cmake/lodestone.pc.in ${PROJECT_BINARY_DIR}/lodestone.pc @ONLY)
install(FILES ${PROJECT_BINARY_DIR}/lodestone.pc DESTINATION ${CMAKE_INSTALL_LIBDIR}/pkgconfig)

# Install rules: the shared library (soname libellipsa.so.<ABI major>, set in
# capi/CMakeLists.txt from the project version), the public header, the batch
# tool, a CMake package (find_package(ellipsa) -> ellipsa::ellipsa) and a
# pkg-config file. Included from the top-level CMakeLists.txt after the targets
# exist. Tested from an installed copy by tests/install/.
#
#   cmake --install build --prefix /opt/ellipsa      (or: make install PREFIX=...)
#
# The prefix may be chosen at install time (--prefix, DESTDIR): nothing below
# bakes in the configure-time CMAKE_INSTALL_PREFIX.
include(GNUInstallDirs)
include(CMakePackageConfigHelpers)

set(ELLIPSA_CMAKE_PACKAGE_DIR ${CMAKE_INSTALL_LIBDIR}/cmake/ellipsa)

# The batch tool finds the library relative to itself, so an installed copy
# runs from wherever the prefix ends up (no LD_LIBRARY_PATH, no system path).
if(IS_ABSOLUTE "${CMAKE_INSTALL_LIBDIR}")
  set(ELLIPSA_CLI_INSTALL_RPATH "${CMAKE_INSTALL_LIBDIR}")
else()
  file(RELATIVE_PATH ellipsa_bin_to_lib
    /prefix/${CMAKE_INSTALL_BINDIR} /prefix/${CMAKE_INSTALL_LIBDIR})
  set(ELLIPSA_CLI_INSTALL_RPATH "$ORIGIN/${ellipsa_bin_to_lib}")
endif()
set_target_properties(ellipsa_cli PROPERTIES INSTALL_RPATH "${ELLIPSA_CLI_INSTALL_RPATH}")

# Components: Runtime (the library's versioned file and soname link, the tool)
# and Development (the unversioned link, header, CMake package, pkg-config).
# A plain `cmake --install` installs both.
install(TARGETS ellipsa EXPORT ellipsaTargets
  LIBRARY DESTINATION ${CMAKE_INSTALL_LIBDIR}
    COMPONENT Runtime NAMELINK_COMPONENT Development
  INCLUDES DESTINATION ${CMAKE_INSTALL_INCLUDEDIR})
install(FILES ${CMAKE_SOURCE_DIR}/capi/include/ellipsa.h
  DESTINATION ${CMAKE_INSTALL_INCLUDEDIR} COMPONENT Development)
install(TARGETS ellipsa_cli RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR} COMPONENT Runtime)

# CMake package: ellipsaTargets.cmake (ellipsa::ellipsa, paths relative to the
# package folder), ellipsaConfig.cmake and the version file. The soname
# changes with the major version, so only the same major is compatible
# (docs/versioning.md treats 0.x like a stable major).
install(EXPORT ellipsaTargets NAMESPACE ellipsa::
  DESTINATION ${ELLIPSA_CMAKE_PACKAGE_DIR} COMPONENT Development)
configure_package_config_file(${CMAKE_SOURCE_DIR}/cmake/ellipsaConfig.cmake.in
  ${CMAKE_BINARY_DIR}/cmake/ellipsaConfig.cmake
  INSTALL_DESTINATION ${ELLIPSA_CMAKE_PACKAGE_DIR})
write_basic_package_version_file(${CMAKE_BINARY_DIR}/cmake/ellipsaConfigVersion.cmake
  VERSION ${PROJECT_VERSION} COMPATIBILITY SameMajorVersion)
install(FILES ${CMAKE_BINARY_DIR}/cmake/ellipsaConfig.cmake
  ${CMAKE_BINARY_DIR}/cmake/ellipsaConfigVersion.cmake
  DESTINATION ${ELLIPSA_CMAKE_PACKAGE_DIR} COMPONENT Development)

# pkg-config: written at install time, when the prefix is known for certain
# (cmake --install --prefix overrides the configure-time one), by
# cmake/install_pkgconfig.cmake. DESTDIR is applied by file(INSTALL) there and
# stays out of the file's contents.
install(CODE "
  set(ELLIPSA_PC_TEMPLATE \"${CMAKE_SOURCE_DIR}/cmake/ellipsa.pc.in\")
  set(ELLIPSA_PC_WORK_DIR \"${CMAKE_BINARY_DIR}/cmake/install\")
  set(ELLIPSA_PC_LIBDIR \"${CMAKE_INSTALL_LIBDIR}\")
  set(ELLIPSA_PC_INCLUDEDIR \"${CMAKE_INSTALL_INCLUDEDIR}\")
  set(ELLIPSA_PC_VERSION \"${PROJECT_VERSION}\")
  include(\"${CMAKE_SOURCE_DIR}/cmake/install_pkgconfig.cmake\")
" COMPONENT Development)

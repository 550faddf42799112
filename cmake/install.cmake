# cmake --install: the knee command, the public headers, the static libraries and a
# package config, so that another CMake project finds them with find_package(knee) and
# links knee::engine and knee::parser (knee::fit, the parts-from-data fit, comes along) (docs/library.md).
include(GNUInstallDirs)
include(CMakePackageConfigHelpers)

install(TARGETS knee RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR})
install(TARGETS knee_engine knee_fit knee_parser EXPORT kneeTargets
        ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR}
        LIBRARY DESTINATION ${CMAKE_INSTALL_LIBDIR})
install(DIRECTORY ${PROJECT_SOURCE_DIR}/engine/include/knee ${PROJECT_SOURCE_DIR}/fit/include/knee
                  ${PROJECT_SOURCE_DIR}/parser/include/knee
        DESTINATION ${CMAKE_INSTALL_INCLUDEDIR} FILES_MATCHING PATTERN "*.h")

set(KNEE_CMAKE_DIR ${CMAKE_INSTALL_LIBDIR}/cmake/knee)
install(EXPORT kneeTargets NAMESPACE knee:: DESTINATION ${KNEE_CMAKE_DIR})
configure_package_config_file(${PROJECT_SOURCE_DIR}/cmake/kneeConfig.cmake.in
                              ${PROJECT_BINARY_DIR}/kneeConfig.cmake
                              INSTALL_DESTINATION ${KNEE_CMAKE_DIR})
write_basic_package_version_file(${PROJECT_BINARY_DIR}/kneeConfigVersion.cmake
                                 COMPATIBILITY SameMinorVersion)
install(FILES ${PROJECT_BINARY_DIR}/kneeConfig.cmake ${PROJECT_BINARY_DIR}/kneeConfigVersion.cmake
        DESTINATION ${KNEE_CMAKE_DIR})

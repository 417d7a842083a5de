# Installs the CMake package so that other projects can `find_package(pulsewise)`.
# Included at the end of the top-level CMakeLists.txt, after every library target exists.
# Components: core (always), circuit_file (toml++) and hdf5 (HDF5 C++ API) when they were built.
include(GNUInstallDirs)
include(CMakePackageConfigHelpers)

set(PULSEWISE_INSTALL_CMAKEDIR "${CMAKE_INSTALL_LIBDIR}/cmake/pulsewise"
    CACHE STRING "Where the CMake package files are installed, relative to the prefix")

# Recorded in the package config so that it looks only for what the installed targets need.
set(PULSEWISE_PACKAGE_COMPONENTS core)
set(PULSEWISE_PACKAGE_NEEDS_TOMLPP OFF)
set(PULSEWISE_PACKAGE_HAS_HDF5 OFF)
if(TARGET pulsewise::circuit_file)
  list(APPEND PULSEWISE_PACKAGE_COMPONENTS circuit_file)
  # The loader may use toml++ header-only and privately; only a link to the toml++ target makes
  # consumers need the toml++ package.
  get_target_property(_pulsewise_cf pulsewise::circuit_file ALIASED_TARGET)
  if(NOT _pulsewise_cf)
    set(_pulsewise_cf pulsewise::circuit_file)
  endif()
  get_target_property(_pulsewise_cf_links ${_pulsewise_cf} LINK_LIBRARIES)
  if(_pulsewise_cf_links MATCHES "tomlplusplus::")
    set(PULSEWISE_PACKAGE_NEEDS_TOMLPP ON)
  endif()
  unset(_pulsewise_cf_links)
  unset(_pulsewise_cf)
endif()
if(TARGET pulsewise::hdf5)
  list(APPEND PULSEWISE_PACKAGE_COMPONENTS hdf5)
  set(PULSEWISE_PACKAGE_HAS_HDF5 ON)
endif()

install(EXPORT pulsewiseTargets
        NAMESPACE pulsewise::
        FILE pulsewiseTargets.cmake
        DESTINATION ${PULSEWISE_INSTALL_CMAKEDIR})

configure_package_config_file(
  ${PROJECT_SOURCE_DIR}/cmake/pulsewiseConfig.cmake.in
  ${PROJECT_BINARY_DIR}/pulsewiseConfig.cmake
  INSTALL_DESTINATION ${PULSEWISE_INSTALL_CMAKEDIR})
# 0.x releases: only the same minor version is promised to be compatible.
write_basic_package_version_file(
  ${PROJECT_BINARY_DIR}/pulsewiseConfigVersion.cmake
  VERSION ${PROJECT_VERSION}
  COMPATIBILITY SameMinorVersion)

install(FILES ${PROJECT_BINARY_DIR}/pulsewiseConfig.cmake
              ${PROJECT_BINARY_DIR}/pulsewiseConfigVersion.cmake
        DESTINATION ${PULSEWISE_INSTALL_CMAKEDIR})

# Install rules, the CMake package (find_package(loopaudit CONFIG) giving
# loopaudit::loopaudit) and the Debian package (cpack -G DEB).
#
# The library stays static. Its consumers are test-stand tools and scripts
# that want one self-contained executable, and a static archive needs no
# run-time search path and no soname policy. The price is that the archive's
# private dependencies (FFTW, libsndfile, HDF5, nlohmann_json, toml++) are
# still needed when a consumer links, so the exported target names them as
# link-only and loopauditConfig.cmake finds them again: the CMake packages
# with find_dependency, the pkg-config ones by re-creating the same
# PkgConfig:: imported targets. Whoever adds a private dependency to the
# library adds it to loopauditConfig.cmake.in as well; the install.consumer
# test fails until they do.
#
# The archive is compiled as the executables around it are (position
# independent for executables, Debian's default). A consumer that links it
# into a shared object configures with -DCMAKE_POSITION_INDEPENDENT_CODE=ON.

include(GNUInstallDirs)
include(CMakePackageConfigHelpers)

set(LOOPAUDIT_INSTALL_CMAKEDIR "${CMAKE_INSTALL_LIBDIR}/cmake/loopaudit"
    CACHE STRING "Where the CMake package files go, relative to the prefix")

install(TARGETS loopaudit
  EXPORT loopauditTargets
  ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR}
  LIBRARY DESTINATION ${CMAKE_INSTALL_LIBDIR}
  RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR}
  INCLUDES DESTINATION ${CMAKE_INSTALL_INCLUDEDIR})
install(TARGETS loopaudit_cli RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR})
install(DIRECTORY ${PROJECT_SOURCE_DIR}/include/loopaudit
  DESTINATION ${CMAKE_INSTALL_INCLUDEDIR}
  FILES_MATCHING PATTERN "*.hpp")

# A sanitizer build's archive calls into the sanitizer run-times, so whatever
# links the installed archive must link them too. The build tree already
# links them everywhere (add_link_options), hence install interface only.
if(LOOPAUDIT_SANITIZE)
  target_link_options(loopaudit INTERFACE $<INSTALL_INTERFACE:-fsanitize=address,undefined>)
endif()

install(EXPORT loopauditTargets
  NAMESPACE loopaudit::
  FILE loopauditTargets.cmake
  DESTINATION ${LOOPAUDIT_INSTALL_CMAKEDIR})
configure_package_config_file(
  ${CMAKE_CURRENT_LIST_DIR}/loopauditConfig.cmake.in
  ${PROJECT_BINARY_DIR}/loopauditConfig.cmake
  INSTALL_DESTINATION ${LOOPAUDIT_INSTALL_CMAKEDIR})
# Before 1.0 a minor release may change the interface, so only the same
# major.minor with an equal or later patch level satisfies a request.
write_basic_package_version_file(
  ${PROJECT_BINARY_DIR}/loopauditConfigVersion.cmake
  VERSION ${PROJECT_VERSION}
  COMPATIBILITY SameMinorVersion)
install(FILES
  ${PROJECT_BINARY_DIR}/loopauditConfig.cmake
  ${PROJECT_BINARY_DIR}/loopauditConfigVersion.cmake
  DESTINATION ${LOOPAUDIT_INSTALL_CMAKEDIR})

# Debian package for test-stand PCs: cpack --config BUILD/CPackConfig.cmake -G DEB
# (scripts/package). The run-time dependencies of the executable come from
# dpkg-shlibdeps (dpkg-dev); what linking the library also needs is suggested.
if(PROJECT_IS_TOP_LEVEL)
  set(LOOPAUDIT_PACKAGE_MAINTAINER "loopaudit maintainers <maintainers@loopaudit.invalid>"
      CACHE STRING "Maintainer line of the Debian package")
  set(CPACK_GENERATOR DEB)
  set(CPACK_PACKAGE_NAME loopaudit)
  set(CPACK_PACKAGE_VERSION ${PROJECT_VERSION})
  set(CPACK_PACKAGE_CONTACT "${LOOPAUDIT_PACKAGE_MAINTAINER}")
  set(CPACK_DEBIAN_PACKAGE_MAINTAINER "${LOOPAUDIT_PACKAGE_MAINTAINER}")
  set(CPACK_PACKAGE_DESCRIPTION_SUMMARY "loop-injection recordings to frequency responses and stability margins")
  set(CPACK_PACKAGE_DESCRIPTION
      "loopaudit turns a bench injection recording of a feedback loop into the\n"
      "loop's frequency response, its gain, phase, delay, modulus and disk\n"
      "margins with intervals, and a Nyquist stability verdict, written as a\n"
      "table, JSON, CSV, SVG plots and an HTML report. The package also holds\n"
      "the static library, its headers and its CMake package.")
  string(REPLACE ";" "" CPACK_PACKAGE_DESCRIPTION "${CPACK_PACKAGE_DESCRIPTION}")
  set(CPACK_DEBIAN_PACKAGE_SECTION electronics)
  set(CPACK_DEBIAN_FILE_NAME DEB-DEFAULT)
  set(CPACK_DEBIAN_PACKAGE_SHLIBDEPS ON)
  set(CPACK_DEBIAN_PACKAGE_SUGGESTS
      "cmake, pkg-config, libeigen3-dev, libfftw3-dev, libsndfile1-dev, libhdf5-dev, nlohmann-json3-dev, libtomlplusplus-dev")
  set(CPACK_STRIP_FILES ON)
  include(CPack)
endif()

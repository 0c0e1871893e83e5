# Install rules and the Debian package: the program, a man page per command
# (help2man, from the program's own --help, at build time), bash completion
# and the documentation. `cmake --install build --prefix DIR`; `cpack -G DEB`
# in the build folder gives a .deb.
include(GNUInstallDirs)

install(TARGETS levelhead RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR})
install(FILES README.md DEVELOPERS.md DESTINATION ${CMAKE_INSTALL_DOCDIR})
install(DIRECTORY docs/ DESTINATION ${CMAKE_INSTALL_DOCDIR} FILES_MATCHING PATTERN "*.md")

set(LEVELHEAD_COMMANDS reduce loops adjust epochs convert tie gnss-check transducer heads flow run
                       diff demo)
find_program(HELP2MAN help2man)
set(generated_docs ${CMAKE_CURRENT_BINARY_DIR}/share/bash-completion/completions/levelhead)
add_custom_command(
  OUTPUT ${CMAKE_CURRENT_BINARY_DIR}/share/bash-completion/completions/levelhead
  COMMAND ${CMAKE_COMMAND} -DLEVELHEAD=$<TARGET_FILE:levelhead>
          -DOUTPUT=${CMAKE_CURRENT_BINARY_DIR}/share/bash-completion/completions/levelhead
          -P ${CMAKE_CURRENT_SOURCE_DIR}/cmake/BashCompletion.cmake
  DEPENDS levelhead ${CMAKE_CURRENT_SOURCE_DIR}/cmake/BashCompletion.cmake
  COMMENT "Generating the bash completion of levelhead")
if(HELP2MAN)
  set(man ${CMAKE_CURRENT_BINARY_DIR}/share/man/man1)
  file(MAKE_DIRECTORY ${man})
  add_custom_command(
    OUTPUT ${man}/levelhead.1
    COMMAND ${HELP2MAN} --no-info --no-discard-stderr
            --name "levelling adjustment and vertical datum reconciliation"
            --output ${man}/levelhead.1 $<TARGET_FILE:levelhead>
    DEPENDS levelhead
    COMMENT "Generating the man page levelhead(1)")
  list(APPEND generated_docs ${man}/levelhead.1)
  foreach(command IN LISTS LEVELHEAD_COMMANDS)
    # help2man runs "PROGRAM --help" and "PROGRAM --version" through the
    # shell, so the command can follow the program.
    add_custom_command(
      OUTPUT ${man}/levelhead-${command}.1
      COMMAND ${HELP2MAN} --no-info --no-discard-stderr --name "levelhead ${command}"
              --version-string ${PROJECT_VERSION}
              --output ${man}/levelhead-${command}.1 "$<TARGET_FILE:levelhead> ${command}"
      DEPENDS levelhead
      COMMENT "Generating the man page levelhead-${command}(1)")
    list(APPEND generated_docs ${man}/levelhead-${command}.1)
  endforeach()
  install(DIRECTORY ${man}/ DESTINATION ${CMAKE_INSTALL_MANDIR}/man1)
else()
  message(STATUS "help2man not found: no man pages (scripts/install-deps.sh installs it)")
endif()
add_custom_target(levelhead_docs ALL DEPENDS ${generated_docs})
install(FILES ${CMAKE_CURRENT_BINARY_DIR}/share/bash-completion/completions/levelhead
        DESTINATION ${CMAKE_INSTALL_DATADIR}/bash-completion/completions)

# The library for other programs: headers, the static library and a CMake
# package (find_package(levelhead) -> levelhead::levelhead).
include(CMakePackageConfigHelpers)
set_target_properties(levelhead_lib PROPERTIES EXPORT_NAME levelhead)
target_include_directories(levelhead_lib PUBLIC $<INSTALL_INTERFACE:${CMAKE_INSTALL_INCLUDEDIR}>)
install(TARGETS levelhead_lib EXPORT levelheadTargets
        ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR})
install(DIRECTORY include/levelhead DESTINATION ${CMAKE_INSTALL_INCLUDEDIR})
install(FILES ${CMAKE_CURRENT_BINARY_DIR}/generated/levelhead/version.hpp
        DESTINATION ${CMAKE_INSTALL_INCLUDEDIR}/levelhead)
set(package_dir ${CMAKE_INSTALL_LIBDIR}/cmake/levelhead)
install(EXPORT levelheadTargets NAMESPACE levelhead:: DESTINATION ${package_dir})
configure_package_config_file(cmake/levelheadConfig.cmake.in
                              ${CMAKE_CURRENT_BINARY_DIR}/levelheadConfig.cmake
                              INSTALL_DESTINATION ${package_dir})
write_basic_package_version_file(${CMAKE_CURRENT_BINARY_DIR}/levelheadConfigVersion.cmake
                                 COMPATIBILITY SameMinorVersion)
install(FILES ${CMAKE_CURRENT_BINARY_DIR}/levelheadConfig.cmake
              ${CMAKE_CURRENT_BINARY_DIR}/levelheadConfigVersion.cmake
              cmake/FindCholmod.cmake
        DESTINATION ${package_dir})

# Packaging installs what is built and builds nothing: cpack (run by the
# install test) would otherwise rebuild every target, relinking the test
# program under the tests that are running when the build was stale.
set(CMAKE_SKIP_INSTALL_ALL_DEPENDENCY ON)
set(CPACK_GENERATOR DEB)
set(CPACK_PACKAGE_NAME levelhead)
set(CPACK_PACKAGE_CONTACT "levelhead maintainers <levelhead@invalid>")
set(CPACK_PACKAGE_DESCRIPTION_SUMMARY
    "Levelling adjustment and vertical datum reconciliation for well measuring points")
set(CPACK_DEBIAN_PACKAGE_SECTION science)
set(CPACK_DEBIAN_PACKAGE_SHLIBDEPS ON)
set(CPACK_DEBIAN_PACKAGE_DEPENDS "proj-data, tzdata")
set(CPACK_DEBIAN_FILE_NAME DEB-DEFAULT)
include(CPack)

# The Debian package: `cpack -G DEB` (or `cmake --build build --target
# package`) in the build tree makes plumbline_<version>_amd64.deb, installed
# under /usr as Debian's policy wants:
#   /usr/bin/plumbd, /usr/bin/plumbctl
#   /lib/systemd/system/plumbd.service    ops/systemd/plumbd.service with
#                                         ExecStart=/usr/bin/plumbd
#   /etc/plumbline/plumbd.json            the sample config (a conffile)
#   /usr/share/plumbline/                 the sample config and its README
#   /usr/share/man/man8/plumbd.8.gz       help2man, from the built program's
#   /usr/share/man/man1/plumbctl.1.gz     --help and --version
#   /usr/share/bash-completion/completions/plumbctl
#                                         `plumbctl completion bash`
#   /usr/share/doc/plumbline/copyright
# with the maintainer scripts of this folder (postinst makes the user
# `plumbline` and /etc/plumbline/sets, and starts nothing) and Depends
# computed by dpkg-shlibdeps from the programs' shared libraries.
# ctest ops.deb_install builds it and installs it into a scratch root.
#
# The man pages and the completion are part of `all` and of a plain
# `cmake --install` too (share/man, share/bash-completion).

set(PLUMBLINE_DEBIAN_DIR ${CMAKE_CURRENT_LIST_DIR})
set(PLUMBLINE_GEN_DIR ${PROJECT_BINARY_DIR}/ops)

# ---- Man pages: help2man runs the programs just built. gzip -n keeps the
# files identical from build to build (no name or time in the header).
find_program(PLUMBLINE_HELP2MAN help2man)
find_program(PLUMBLINE_GZIP gzip REQUIRED)
if(PLUMBLINE_HELP2MAN)
  add_custom_command(
    OUTPUT ${PLUMBLINE_GEN_DIR}/plumbd.8.gz
    COMMAND ${CMAKE_COMMAND} -E make_directory ${PLUMBLINE_GEN_DIR}
    COMMAND ${PLUMBLINE_HELP2MAN} --no-info --section=8
            --include=${PLUMBLINE_DEBIAN_DIR}/plumbd.h2m
            --output=${PLUMBLINE_GEN_DIR}/plumbd.8 $<TARGET_FILE:plumbd>
    COMMAND ${PLUMBLINE_GZIP} -9nf ${PLUMBLINE_GEN_DIR}/plumbd.8
    DEPENDS plumbd ${PLUMBLINE_DEBIAN_DIR}/plumbd.h2m
    COMMENT "Writing plumbd(8) with help2man")
  # plumbctl's manual is `plumbctl help --all`: every command's help.
  add_custom_command(
    OUTPUT ${PLUMBLINE_GEN_DIR}/plumbctl.1.gz
    COMMAND ${CMAKE_COMMAND} -E make_directory ${PLUMBLINE_GEN_DIR}
    COMMAND ${PLUMBLINE_HELP2MAN} --no-info --section=1
            "--help-option=help --all"
            --include=${PLUMBLINE_DEBIAN_DIR}/plumbctl.h2m
            --output=${PLUMBLINE_GEN_DIR}/plumbctl.1 $<TARGET_FILE:plumbctl>
    COMMAND ${PLUMBLINE_GZIP} -9nf ${PLUMBLINE_GEN_DIR}/plumbctl.1
    DEPENDS plumbctl ${PLUMBLINE_DEBIAN_DIR}/plumbctl.h2m
    COMMENT "Writing plumbctl(1) with help2man")
  set(PLUMBLINE_MAN_PAGES ${PLUMBLINE_GEN_DIR}/plumbd.8.gz
                          ${PLUMBLINE_GEN_DIR}/plumbctl.1.gz)
  install(FILES ${PLUMBLINE_GEN_DIR}/plumbd.8.gz
          DESTINATION ${CMAKE_INSTALL_MANDIR}/man8)
  install(FILES ${PLUMBLINE_GEN_DIR}/plumbctl.1.gz
          DESTINATION ${CMAKE_INSTALL_MANDIR}/man1)
else()
  message(WARNING "help2man not found: no man pages, and ops.deb_install "
                  "will fail; run ops/setup (Debian package help2man)")
endif()

# ---- Bash completion, from the command table plumbctl parses with.
add_custom_command(
  OUTPUT ${PLUMBLINE_GEN_DIR}/plumbctl.bash
  COMMAND ${CMAKE_COMMAND} -E make_directory ${PLUMBLINE_GEN_DIR}
  COMMAND $<TARGET_FILE:plumbctl> completion bash
          > ${PLUMBLINE_GEN_DIR}/plumbctl.bash
  DEPENDS plumbctl
  COMMENT "Writing plumbctl's bash completion")
add_custom_target(plumbline_docs ALL
  DEPENDS ${PLUMBLINE_MAN_PAGES} ${PLUMBLINE_GEN_DIR}/plumbctl.bash)
install(FILES ${PLUMBLINE_GEN_DIR}/plumbctl.bash
        DESTINATION ${CMAKE_INSTALL_DATADIR}/bash-completion/completions
        RENAME plumbctl)

# ---- Files only the package installs (component deb, not part of a plain
# `cmake --install`): the unit at Debian's place with the package's
# ExecStart, the config as a conffile, the copyright file.
file(READ ${PROJECT_SOURCE_DIR}/ops/systemd/plumbd.service PLUMBLINE_UNIT)
string(REPLACE "ExecStart=/usr/local/bin/plumbd " "ExecStart=/usr/bin/plumbd "
       PLUMBLINE_DEB_UNIT "${PLUMBLINE_UNIT}")
if(PLUMBLINE_DEB_UNIT STREQUAL PLUMBLINE_UNIT)
  message(FATAL_ERROR "ops/systemd/plumbd.service has no "
                      "'ExecStart=/usr/local/bin/plumbd ' line to rewrite "
                      "for the package")
endif()
file(WRITE ${PLUMBLINE_GEN_DIR}/deb/plumbd.service "${PLUMBLINE_DEB_UNIT}")
set_property(DIRECTORY APPEND PROPERTY CMAKE_CONFIGURE_DEPENDS
             ${PROJECT_SOURCE_DIR}/ops/systemd/plumbd.service)
install(FILES ${PLUMBLINE_GEN_DIR}/deb/plumbd.service
        DESTINATION /lib/systemd/system COMPONENT deb EXCLUDE_FROM_ALL)
install(FILES ${PROJECT_SOURCE_DIR}/ops/config/plumbd.production.json
        DESTINATION /etc/plumbline RENAME plumbd.json
        COMPONENT deb EXCLUDE_FROM_ALL)
install(FILES ${PLUMBLINE_DEBIAN_DIR}/copyright
        DESTINATION ${CMAKE_INSTALL_DOCDIR} COMPONENT deb EXCLUDE_FROM_ALL)

# ---- CPack: one .deb of the default component plus `deb` (the plain
# install's unit, component unit_local, stays out).
set(CPACK_GENERATOR DEB)
set(CPACK_PACKAGE_NAME plumbline)
set(CPACK_PACKAGE_VERSION ${PROJECT_VERSION})
set(CPACK_PACKAGE_CONTACT "Plumbline maintainers <plumbline@localhost>"
    CACHE STRING "Maintainer field of the Debian package")
set(CPACK_PACKAGE_DESCRIPTION_SUMMARY
    "logistic-regression scoring daemon with ledger, model health and refits")
set(CPACK_PACKAGE_DESCRIPTION
    "plumbd serves fitted logistic-regression coefficient sets over gRPC, \
keeps an SQLite ledger of every score and outcome, watches each set's \
health (log-loss, calibration, population stability) as Prometheus \
metrics and refits by maximum likelihood under an operator's policy. \
plumbctl is its command line.")
set(CPACK_DEBIAN_FILE_NAME DEB-DEFAULT)
set(CPACK_DEBIAN_PACKAGE_SECTION net)
set(CPACK_DEBIAN_PACKAGE_PRIORITY optional)
set(CPACK_DEBIAN_PACKAGE_SHLIBDEPS ON)
# Besides the libraries: useradd (postinst) is in passwd.
set(CPACK_DEBIAN_PACKAGE_DEPENDS "passwd")
set(CPACK_DEBIAN_PACKAGE_RECOMMENDS "bash-completion")
set(CPACK_DEBIAN_PACKAGE_CONTROL_EXTRA
    ${PLUMBLINE_DEBIAN_DIR}/postinst ${PLUMBLINE_DEBIAN_DIR}/prerm
    ${PLUMBLINE_DEBIAN_DIR}/postrm ${PLUMBLINE_DEBIAN_DIR}/conffiles)
set(CPACK_DEBIAN_PACKAGE_CONTROL_STRICT_PERMISSION ON)
set(CPACK_STRIP_FILES ON)
# Absolute destinations (/etc, /lib) need DESTDIR staging; the prefix of
# everything else is /usr.
set(CPACK_SET_DESTDIR ON)
set(CPACK_INSTALL_PREFIX /usr)
set(CPACK_INSTALL_CMAKE_PROJECTS
    "${PROJECT_BINARY_DIR};${PROJECT_NAME};Unspecified;/"
    "${PROJECT_BINARY_DIR};${PROJECT_NAME};deb;/")
include(CPack)

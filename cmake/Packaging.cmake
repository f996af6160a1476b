# Packaging: the files `cmake --install` puts beside the binary and the
# config, and the Debian package CPack makes from them.
#
# Installed here, each only when its source exists, so man pages, units and
# documents can arrive in any order without editing this file:
#   doc/*.[1-8]          gzip -9n'd into share/man/manN (Debian policy, "Manual pages")
#   systemd/*.service    (and .socket/.timer/.path; NAME.in files are filled
#                        in with @VAR@ first, e.g. @CMAKE_INSTALL_FULL_BINDIR@)
#                        into LATTICED_SYSTEMD_UNITDIR
#   README.md            share/doc/latticed/
#   config/examples/*    share/doc/latticed/examples/
#   LICENSE              as share/doc/latticed/copyright (Debian's format)
#
# The package (`cpack -G DEB` in a build tree configured with
# -DCMAKE_INSTALL_PREFIX=/usr) is latticed_VERSION_ARCH.deb: ARCH is the
# target's Debian architecture, so a build with cmake/aarch64-linux-gnu.cmake
# gives an arm64 package.  Every file under /etc is a conffile.  Its
# dependencies come from dpkg-shlibdeps on the binary, which also works for
# cross builds as long as the :arm64/:armhf library packages are installed
# (dpkg-shlibdeps matches each library's ELF machine to the binary's).
# The maintainer scripts in packaging/deb/ run the service as the system
# user `latticed` (group audio), never as root.

# Debian 12's own units live in /lib/systemd/system; a build for another
# prefix (e.g. /usr/local) keeps its units under that prefix, where systemd
# also looks (/usr/local/lib/systemd/system).
if(CMAKE_INSTALL_PREFIX STREQUAL "/usr")
  set(_unitdir "/lib/systemd/system")
else()
  set(_unitdir "${CMAKE_INSTALL_PREFIX}/lib/systemd/system")
endif()
set(LATTICED_SYSTEMD_UNITDIR "${_unitdir}" CACHE PATH "Where systemd units are installed")
set(LATTICED_PACKAGE_MAINTAINER "latticed developers <latticed@example.org>" CACHE STRING
    "Maintainer field of the Debian package")

set(_pkg_out "${PROJECT_BINARY_DIR}/packaging")
set(_docdir "${CMAKE_INSTALL_DATAROOTDIR}/doc/${PROJECT_NAME}")

# --- man pages, compressed at build time ---------------------------------
file(GLOB _man_pages CONFIGURE_DEPENDS "${PROJECT_SOURCE_DIR}/doc/*.[1-8]")
set(_man_gz "")
foreach(page IN LISTS _man_pages)
  get_filename_component(name "${page}" NAME)
  string(REGEX MATCH "[1-8]$" section "${name}")
  set(gz "${_pkg_out}/man/${name}.gz")
  add_custom_command(OUTPUT "${gz}"
    COMMAND ${CMAKE_COMMAND} -E make_directory "${_pkg_out}/man"
    COMMAND sh -c "gzip -9nc \"$0\" > \"$1\"" "${page}" "${gz}"
    DEPENDS "${page}" VERBATIM)
  list(APPEND _man_gz "${gz}")
  install(FILES "${gz}" DESTINATION "${CMAKE_INSTALL_MANDIR}/man${section}")
endforeach()

# --- systemd units ---------------------------------------------------------
file(GLOB _unit_sources CONFIGURE_DEPENDS
  "${PROJECT_SOURCE_DIR}/systemd/*.service" "${PROJECT_SOURCE_DIR}/systemd/*.service.in"
  "${PROJECT_SOURCE_DIR}/systemd/*.socket" "${PROJECT_SOURCE_DIR}/systemd/*.socket.in"
  "${PROJECT_SOURCE_DIR}/systemd/*.timer" "${PROJECT_SOURCE_DIR}/systemd/*.timer.in"
  "${PROJECT_SOURCE_DIR}/systemd/*.path" "${PROJECT_SOURCE_DIR}/systemd/*.path.in")
# latticed view's unit only with the command (-DLATTICED_VIEW=OFF leaves both out)
if(NOT LATTICED_VIEW)
  list(FILTER _unit_sources EXCLUDE REGEX "/latticed-view\\.service")
endif()
set(LATTICED_UNITS "")
foreach(src IN LISTS _unit_sources)
  get_filename_component(name "${src}" NAME)
  if(name MATCHES "\\.in$")
    string(REGEX REPLACE "\\.in$" "" name "${name}")
    configure_file("${src}" "${_pkg_out}/systemd/${name}" @ONLY)
    set(src "${_pkg_out}/systemd/${name}")
  endif()
  install(FILES "${src}" DESTINATION "${LATTICED_SYSTEMD_UNITDIR}")
  list(APPEND LATTICED_UNITS "${name}")
endforeach()

# --- documents -------------------------------------------------------------
if(EXISTS "${PROJECT_SOURCE_DIR}/README.md")
  install(FILES "${PROJECT_SOURCE_DIR}/README.md" DESTINATION "${_docdir}")
endif()
file(GLOB _examples CONFIGURE_DEPENDS "${PROJECT_SOURCE_DIR}/config/examples/*.conf")
if(_examples)
  install(FILES ${_examples} DESTINATION "${_docdir}/examples")
endif()

# Debian's machine-readable copyright file, made from LICENSE: the
# "Copyright" line becomes the Copyright field, the rest the licence text.
file(STRINGS "${PROJECT_SOURCE_DIR}/LICENSE" _license_lines)
set(_holder "")
set(_text "")
set(_license_name "")
foreach(line IN LISTS _license_lines)
  if(NOT _license_name)
    string(REGEX REPLACE " License$" "" _license_name "${line}")
  elseif(NOT _holder AND line MATCHES "^Copyright (\\(c\\) )?(.*)$")
    set(_holder "${CMAKE_MATCH_2}")
  elseif(_holder)
    if(line STREQUAL "")
      string(APPEND _text " .\n")
    else()
      string(APPEND _text " ${line}\n")
    endif()
  endif()
endforeach()
string(REGEX REPLACE "^ \\.\n" "" _text "${_text}")
file(WRITE "${_pkg_out}/copyright"
  "Format: https://www.debian.org/doc/packaging-manuals/copyright-format/1.0/\n"
  "Upstream-Name: ${PROJECT_NAME}\n"
  "\n"
  "Files: *\n"
  "Copyright: ${_holder}\n"
  "License: ${_license_name}\n"
  "${_text}")
install(FILES "${_pkg_out}/copyright" DESTINATION "${_docdir}")

# Lintian overrides, each with its reason in the file.
install(FILES "${PROJECT_SOURCE_DIR}/packaging/deb/lintian-overrides"
        DESTINATION "${CMAKE_INSTALL_DATAROOTDIR}/lintian/overrides" RENAME ${PROJECT_NAME})

# A package built from this tree is a native Debian package, so its
# changelog is changelog.gz (Debian policy, "Changelog files").  Its date honours
# SOURCE_DATE_EPOCH, so a package can be rebuilt byte for byte.
string(TIMESTAMP _changelog_date "%a, %d %b %Y %H:%M:%S +0000" UTC)
file(WRITE "${_pkg_out}/changelog"
  "${PROJECT_NAME} (${PROJECT_VERSION}) unstable; urgency=medium\n"
  "\n"
  "  * Built from the ${PROJECT_NAME} ${PROJECT_VERSION} source tree.\n"
  "\n"
  " -- ${LATTICED_PACKAGE_MAINTAINER}  ${_changelog_date}\n")
add_custom_command(OUTPUT "${_pkg_out}/changelog.gz"
  COMMAND sh -c "gzip -9nc \"$0\" > \"$1\"" "${_pkg_out}/changelog" "${_pkg_out}/changelog.gz"
  DEPENDS "${_pkg_out}/changelog" VERBATIM)
install(FILES "${_pkg_out}/changelog.gz" DESTINATION "${_docdir}")
add_custom_target(latticed_package_files ALL DEPENDS ${_man_gz} "${_pkg_out}/changelog.gz")

# --- the Debian package ----------------------------------------------------
if(NOT CPACK_DEBIAN_PACKAGE_ARCHITECTURE)
  # Debian's name for the target: dpkg-architecture knows every GNU
  # triplet; a native build without it asks dpkg.
  if(CMAKE_LIBRARY_ARCHITECTURE)
    execute_process(COMMAND dpkg-architecture -qDEB_HOST_ARCH -t "${CMAKE_LIBRARY_ARCHITECTURE}"
      OUTPUT_VARIABLE CPACK_DEBIAN_PACKAGE_ARCHITECTURE
      OUTPUT_STRIP_TRAILING_WHITESPACE ERROR_QUIET)
  endif()
  if(NOT CPACK_DEBIAN_PACKAGE_ARCHITECTURE AND NOT CMAKE_CROSSCOMPILING)
    execute_process(COMMAND dpkg --print-architecture
      OUTPUT_VARIABLE CPACK_DEBIAN_PACKAGE_ARCHITECTURE
      OUTPUT_STRIP_TRAILING_WHITESPACE ERROR_QUIET)
  endif()
endif()

# Maintainer scripts: the unit names go in at configure time.  Template
# units (NAME@.service) have no single instance to stop or record, so they
# only get the daemon-reload.
set(LATTICED_SERVICE_UNITS "")
foreach(unit IN LISTS LATTICED_UNITS)
  if(NOT unit MATCHES "@\\.")
    string(APPEND LATTICED_SERVICE_UNITS " ${unit}")
  endif()
endforeach()
string(STRIP "${LATTICED_SERVICE_UNITS}" LATTICED_SERVICE_UNITS)
set(LATTICED_HAS_UNITS 0)
if(LATTICED_UNITS)
  set(LATTICED_HAS_UNITS 1)
endif()
set(_control_extra "")
foreach(script postinst prerm postrm)
  configure_file("${PROJECT_SOURCE_DIR}/packaging/deb/${script}.in"
                 "${_pkg_out}/deb/${script}" @ONLY)
  list(APPEND _control_extra "${_pkg_out}/deb/${script}")
endforeach()
# conffiles is written at package time from what is really under /etc.
list(APPEND _control_extra "${_pkg_out}/deb/conffiles")

set(CPACK_GENERATOR DEB)
set(CPACK_PACKAGE_NAME ${PROJECT_NAME})
set(CPACK_PACKAGE_VERSION ${PROJECT_VERSION})
set(CPACK_PACKAGE_CONTACT "${LATTICED_PACKAGE_MAINTAINER}")
set(CPACK_PACKAGING_INSTALL_PREFIX /usr)
set(CPACK_STRIP_FILES ON)
set(CPACK_INSTALL_DEFAULT_DIRECTORY_PERMISSIONS
  OWNER_READ OWNER_WRITE OWNER_EXECUTE GROUP_READ GROUP_EXECUTE WORLD_READ WORLD_EXECUTE)
set(CPACK_DEBIAN_FILE_NAME
  "${PROJECT_NAME}_${PROJECT_VERSION}_${CPACK_DEBIAN_PACKAGE_ARCHITECTURE}.deb")
set(CPACK_DEBIAN_PACKAGE_SECTION sound)
set(CPACK_DEBIAN_PACKAGE_PRIORITY optional)
set(CPACK_PACKAGE_DESCRIPTION_SUMMARY "real-time just-intonation MIDI retuning daemon")
set(CPACK_DEBIAN_PACKAGE_DESCRIPTION "\
latticed maps every key of an ordinary MIDI keyboard to a tone of a
just-intonation lattice, a combination product set such as the hexany or
the eikosany, and sends each note out at its exact pitch: a channel per
note with pitch bend, MIDI Tuning Standard messages, or MPE.
.
It runs as a service on a headless machine such as a Raspberry Pi, between
a DAW and a synth in the studio, or offline on MIDI files.  `latticed table`
shows the lattice, its chords and what every key plays.")
set(CPACK_DEBIAN_PACKAGE_SHLIBDEPS ON)
# adduser for the service account in postinst; the libraries come from
# dpkg-shlibdeps and are appended to this list.
set(CPACK_DEBIAN_PACKAGE_DEPENDS "adduser")
set(CPACK_DEBIAN_PACKAGE_SUGGESTS "fluidsynth")
set(CPACK_DEBIAN_PACKAGE_CONTROL_EXTRA "${_control_extra}")
set(CPACK_DEBIAN_PACKAGE_CONTROL_STRICT_PERMISSION ON)
set(CPACK_PRE_BUILD_SCRIPTS "${PROJECT_SOURCE_DIR}/cmake/PackagingConffiles.cmake")
set(CPACK_LATTICED_CONFFILES "${_pkg_out}/deb/conffiles")
set(CPACK_LATTICED_INSTALL_PREFIX "${CMAKE_INSTALL_PREFIX}")
set(CPACK_LATTICED_STRIP "${CMAKE_STRIP}")
include(CPack)

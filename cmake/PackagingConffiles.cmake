# Run by cpack after it has installed into its staging tree and before it
# builds the package (CPACK_PRE_BUILD_SCRIPTS).
#
# Strips the binaries the way debhelper's dh_strip does (cpack's own strip
# leaves the compiler's .comment and .note sections).
#
# Writes the Debian conffiles list: every file the package ships under
# /etc, so dpkg keeps a changed config on upgrade and removal (Debian
# policy on configuration files, which debhelper's dh_installdeb applies the same way).
# Refuses a tree configured for another prefix: the binary looks for its
# config at the compiled-in path, which must be the /etc in the package.
if(NOT CPACK_LATTICED_INSTALL_PREFIX STREQUAL "/usr")
  message(FATAL_ERROR "the Debian package needs a build tree configured with "
    "-DCMAKE_INSTALL_PREFIX=/usr (this one has ${CPACK_LATTICED_INSTALL_PREFIX}, "
    "so latticed would look for ${CPACK_LATTICED_INSTALL_PREFIX}/etc/latticed/latticed.conf)")
endif()
file(GLOB_RECURSE _etc_files LIST_DIRECTORIES false RELATIVE "${CPACK_TEMPORARY_DIRECTORY}"
  "${CPACK_TEMPORARY_DIRECTORY}/etc/*")
list(SORT _etc_files)
set(_list "")
foreach(f IN LISTS _etc_files)
  string(APPEND _list "/${f}\n")
endforeach()
file(WRITE "${CPACK_LATTICED_CONFFILES}" "${_list}")

if(CPACK_LATTICED_STRIP)
  file(GLOB _binaries "${CPACK_TEMPORARY_DIRECTORY}/usr/bin/*")
  foreach(b IN LISTS _binaries)
    execute_process(COMMAND "${CPACK_LATTICED_STRIP}" --remove-section=.comment
                            --remove-section=.note --strip-unneeded "${b}"
                    RESULT_VARIABLE rc)
    if(NOT rc EQUAL 0)
      message(FATAL_ERROR "${CPACK_LATTICED_STRIP} failed on ${b}")
    endif()
  endforeach()
endif()

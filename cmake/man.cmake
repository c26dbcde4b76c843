# Man pages generated from `--help` with help2man (Debian help2man), at build time:
# lodestone(1) and lodestone-NAME(1) for every subcommand src/cli/cmd_NAME.cpp,
# written to BUILD/man/man1 and installed under share/man/man1 (install component
# "man"). Skipped, with a note, when help2man is not installed; scripts/install-deps
# installs it, and tests/cli/man_pages.sh requires it.
find_program(LODESTONE_HELP2MAN help2man)
if(NOT LODESTONE_HELP2MAN)
  message(STATUS "help2man not found: no man pages (scripts/install-deps installs it)")
  return()
endif()

set(LODESTONE_MAN_DIR ${PROJECT_BINARY_DIR}/man/man1)
file(MAKE_DIRECTORY ${LODESTONE_MAN_DIR})

# The subcommands and their one-line summaries, from the sources.
file(GLOB LODESTONE_CMD_SOURCES CONFIGURE_DEPENDS ${PROJECT_SOURCE_DIR}/src/cli/cmd_*.cpp)
set(LODESTONE_SUBCOMMANDS "")
foreach(src ${LODESTONE_CMD_SOURCES})
  get_filename_component(stem ${src} NAME_WE)
  string(REGEX REPLACE "^cmd_" "" name ${stem})
  file(READ ${src} text)
  string(REGEX MATCH "add_subcommand\\([ \t\r\n]*\"${name}\",[ \t\r\n]*\"([^\"]*)\"" found "${text}")
  if(NOT found)
    message(WARNING "${src}: no add_subcommand(\"${name}\", \"summary\") found; no man page for it")
    continue()
  endif()
  list(APPEND LODESTONE_SUBCOMMANDS ${name})
  set(LODESTONE_SUMMARY_${name} "${CMAKE_MATCH_1}")
endforeach()

# One "SEE ALSO" section shared by every page.
set(see_also "[SEE ALSO]\n.BR lodestone (1)")
foreach(name ${LODESTONE_SUBCOMMANDS})
  string(APPEND see_also ",\n.BR lodestone-${name} (1)")
endforeach()
string(APPEND see_also "\n.PP\nREADME.md and docs/ in the Lodestone sources.\n")
file(CONFIGURE OUTPUT ${PROJECT_BINARY_DIR}/man/see-also.h2m CONTENT "${see_also}" @ONLY)  # rewritten only when changed

set(page_script ${PROJECT_SOURCE_DIR}/cmake/man-page.cmake)
set(see_also_file ${PROJECT_BINARY_DIR}/man/see-also.h2m)
set(LODESTONE_MAN_PAGES "")
# lodestone_man_page(PAGE PROGRAM NAME SUMMARY): PROGRAM is run as "PROGRAM --help";
# help2man runs it through the shell, so "lodestone NAME" is one program.
function(lodestone_man_page page program name summary)
  add_custom_command(OUTPUT ${page}
    COMMAND ${CMAKE_COMMAND} -DHELP2MAN=${LODESTONE_HELP2MAN} "-DPROGRAM=${program}"
            "-DVERSION_STRING=${name} ${PROJECT_VERSION}" "-DSUMMARY=${summary}"
            -DINCLUDE=${see_also_file} -DOUTPUT=${page} -P ${page_script}
    # The launcher runs lodestone-core, whose help text the page holds: both.
    DEPENDS lodestone lodestone_core ${see_also_file} ${page_script}
    COMMENT "Man page ${name}.1 (help2man)" VERBATIM)
endfunction()
lodestone_man_page(${LODESTONE_MAN_DIR}/lodestone.1 $<TARGET_FILE:lodestone> lodestone
                   "a few dominant eigenpairs of very large matrices, on MPI")
list(APPEND LODESTONE_MAN_PAGES ${LODESTONE_MAN_DIR}/lodestone.1)
foreach(name ${LODESTONE_SUBCOMMANDS})
  lodestone_man_page(${LODESTONE_MAN_DIR}/lodestone-${name}.1 "$<TARGET_FILE:lodestone> ${name}" lodestone-${name}
                     "${LODESTONE_SUMMARY_${name}}")
  list(APPEND LODESTONE_MAN_PAGES ${LODESTONE_MAN_DIR}/lodestone-${name}.1)
endforeach()
add_custom_target(lodestone_man ALL DEPENDS ${LODESTONE_MAN_PAGES})
install(FILES ${LODESTONE_MAN_PAGES} DESTINATION ${CMAKE_INSTALL_MANDIR}/man1 COMPONENT man)

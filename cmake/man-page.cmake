# Writes one man page from a program's --help with help2man (run by cmake/man.cmake
# at build time as `cmake -P`), then keeps the EXAMPLES section one command a line
# (help2man would fill the example lines into one paragraph). Written under a
# temporary name and renamed, so a failed run leaves no half page behind.
#   -DHELP2MAN=path -DPROGRAM="path/lodestone [subcommand]" -DVERSION_STRING="name version"
#   -DSUMMARY="one line" -DINCLUDE=see-also.h2m -DOUTPUT=page.1
foreach(v HELP2MAN PROGRAM VERSION_STRING SUMMARY INCLUDE OUTPUT)
  if(NOT DEFINED ${v})
    message(FATAL_ERROR "man-page.cmake: ${v} not set")
  endif()
endforeach()
set(temp "${OUTPUT}.tmp")
execute_process(
  COMMAND ${CMAKE_COMMAND} -E env SOURCE_DATE_EPOCH=1767225600  # dated by the release, not the build
          ${HELP2MAN} --no-info "--version-string=${VERSION_STRING}" "--name=${SUMMARY}"
          "--include=${INCLUDE}" "--output=${temp}" "${PROGRAM}"
  RESULT_VARIABLE rc ERROR_VARIABLE err)
if(NOT rc EQUAL 0)
  file(REMOVE "${temp}")
  message(FATAL_ERROR "help2man failed for '${PROGRAM}': ${err}")
endif()
file(READ "${temp}" page)
string(FIND "${page}" "\n.SH EXAMPLES\n" at)
if(at GREATER_EQUAL 0)
  string(LENGTH "\n.SH EXAMPLES\n" head)
  math(EXPR body "${at} + ${head}")
  string(SUBSTRING "${page}" 0 ${body} before)
  string(SUBSTRING "${page}" ${body} -1 rest)
  string(FIND "${rest}" "\n.SH " next)
  if(next GREATER_EQUAL 0)
    math(EXPR next "${next} + 1")
    string(SUBSTRING "${rest}" 0 ${next} examples)
    string(SUBSTRING "${rest}" ${next} -1 after)
  else()
    set(examples "${rest}")
    set(after "")
  endif()
  # No filling, one indent for the whole section; a continuation line (help2man's
  # .HP) keeps a deeper indent.
  string(REPLACE ".HP\n" "    " examples "${examples}")
  string(REPLACE ".IP\n" "" examples "${examples}")
  set(page "${before}.RS\n.nf\n${examples}.fi\n.RE\n${after}")
endif()
file(WRITE "${temp}" "${page}")
file(RENAME "${temp}" "${OUTPUT}")

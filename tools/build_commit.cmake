# Writes OUT (a header defining FIRMCALL_COMMIT) from `git describe` of SOURCE_DIR, at every
# build; the file is rewritten only when the text changes, so an unchanged commit rebuilds nothing.
# A tree without git (a source archive) gets "unknown".
execute_process(COMMAND git -C "${SOURCE_DIR}" describe --always --dirty --abbrev=12
                OUTPUT_VARIABLE commit OUTPUT_STRIP_TRAILING_WHITESPACE ERROR_QUIET RESULT_VARIABLE rc)
if(NOT rc EQUAL 0 OR commit STREQUAL "")
  set(commit "unknown")
endif()
set(text "// Generated at build time (tools/build_commit.cmake).\n#define FIRMCALL_COMMIT \"${commit}\"\n")
if(EXISTS "${OUT}")
  file(READ "${OUT}" old)
endif()
if(NOT old STREQUAL text)
  file(WRITE "${OUT}" "${text}")
endif()

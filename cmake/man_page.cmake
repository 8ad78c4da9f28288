# Writes the man page firmcall.1 with help2man: the main --help and --version, and a COMMANDS
# section holding every command's own --help (the command list is read from the main --help, so
# a new command appears without editing this file).
#   cmake -DFIRMCALL=path/to/firmcall -DHELP2MAN=path/to/help2man -DOUT=firmcall.1 -DWORK=dir -P man_page.cmake
get_filename_component(bin_dir ${FIRMCALL} DIRECTORY)
# Run as plain `firmcall` from PATH, so that the page's usage lines name the command, not a path.
set(ENV{PATH} "${bin_dir}:$ENV{PATH}")
execute_process(COMMAND firmcall --help OUTPUT_VARIABLE main_help RESULT_VARIABLE rc)
if(NOT rc EQUAL 0)
  message(FATAL_ERROR "firmcall --help failed (${rc})")
endif()
string(REGEX REPLACE ".*\nSubcommands:\n" "" commands_text "${main_help}")
string(REGEX REPLACE "\n\n.*" "" commands_text "${commands_text}")
string(REGEX MATCHALL "(^|\n)  [a-z][a-z-]*" commands "${commands_text}")
set(section "[COMMANDS]\nEach command's options, as `firmcall COMMAND --help` prints them.\n")
foreach(entry IN LISTS commands)
  string(STRIP "${entry}" command)
  execute_process(COMMAND firmcall ${command} --help OUTPUT_VARIABLE help RESULT_VARIABLE rc)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "firmcall ${command} --help failed (${rc})")
  endif()
  # roff: backslashes doubled, a leading dot or quote kept as text.
  string(REPLACE "\\" "\\\\" help "${help}")
  string(REGEX REPLACE "(^|\n)([.'])" "\\1\\\\&\\2" help "${help}")
  string(APPEND section ".SS ${command}\n.nf\n${help}.fi\n")
endforeach()
string(APPEND section "[SEE ALSO]\nThe user pages in the documentation directory (docs/), and README.md.\n")
file(MAKE_DIRECTORY ${WORK})
file(WRITE ${WORK}/commands.h2m "${section}")
execute_process(COMMAND ${HELP2MAN} --no-info --section=1
    "--name=structural credit risk from equity markets (Merton model)" --include=${WORK}/commands.h2m
    --output=${OUT} firmcall
  RESULT_VARIABLE rc)
if(NOT rc EQUAL 0)
  message(FATAL_ERROR "help2man failed (${rc})")
endif()

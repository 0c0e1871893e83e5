# Writes the bash completion of levelhead from the program's own help: the
# commands listed under "Subcommands:" of `levelhead --help`, and for each
# command the long options of `levelhead COMMAND --help`. Run at build time
# (cmake -DLEVELHEAD=<binary> -DOUTPUT=<file> -P BashCompletion.cmake), so
# the completion never lags behind the options.
execute_process(COMMAND ${LEVELHEAD} --help OUTPUT_VARIABLE help RESULT_VARIABLE failed)
if(failed)
  message(FATAL_ERROR "levelhead --help failed: ${failed}")
endif()
string(REGEX REPLACE ".*Subcommands:\n" "" commands_text "${help}")
string(REGEX MATCHALL "\n  [a-z][a-z-]*" command_lines "\n${commands_text}")
set(commands "")
set(cases "")
foreach(line IN LISTS command_lines)
  string(STRIP "${line}" command)
  list(APPEND commands ${command})
  execute_process(COMMAND ${LEVELHEAD} ${command} --help OUTPUT_VARIABLE command_help)
  # Options are the lines "  --name ..." or "  -h,--name ..."; a --name in a
  # description is not one.
  string(REGEX MATCHALL "\n  (-[a-zA-Z],)?--[a-z0-9][a-z0-9-]*" option_lines "\n${command_help}")
  set(options "")
  foreach(option_line IN LISTS option_lines)
    string(REGEX REPLACE ".*(--[a-z0-9][a-z0-9-]*)$" "\\1" option "${option_line}")
    list(APPEND options ${option})
  endforeach()
  list(REMOVE_DUPLICATES options)
  list(JOIN options " " options_text)
  string(APPEND cases "    ${command}) options=\"${options_text}\" ;;\n")
endforeach()
list(JOIN commands " " commands_text)
file(WRITE ${OUTPUT} "# bash completion for levelhead (generated from its --help)
_levelhead() {
  local current=\${COMP_WORDS[COMP_CWORD]}
  if [ \"\$COMP_CWORD\" -eq 1 ]; then
    COMPREPLY=( \$(compgen -W \"${commands_text} --help --version\" -- \"\$current\") )
    return
  fi
  local options=\"\"
  case \"\${COMP_WORDS[1]}\" in
${cases}  esac
  if [[ \"\$current\" == -* ]]; then
    COMPREPLY=( \$(compgen -W \"\$options\" -- \"\$current\") )
  else
    COMPREPLY=( \$(compgen -f -- \"\$current\") )
  fi
}
complete -o filenames -F _levelhead levelhead
")

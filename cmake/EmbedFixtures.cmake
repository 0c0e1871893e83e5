# levelhead_embed_fixtures(OUTPUT file.cpp FILES a.csv b.csv)
# Writes a C++ source that defines levelhead::demo::embedded_files(), a list of
# {file name, content} pairs, regenerated whenever a fixture changes.
function(levelhead_embed_fixtures)
  cmake_parse_arguments(ARG "" "OUTPUT" "FILES" ${ARGN})
  # A list cannot pass through a command line intact: join it with '|'.
  string(REPLACE ";" "|" joined "${ARG_FILES}")
  add_custom_command(
    OUTPUT ${ARG_OUTPUT}
    COMMAND ${CMAKE_COMMAND} -DOUTPUT=${ARG_OUTPUT} -DFILES=${joined}
            -P ${CMAKE_CURRENT_FUNCTION_LIST_DIR}/embed_fixtures_script.cmake
    DEPENDS ${ARG_FILES} ${CMAKE_CURRENT_FUNCTION_LIST_DIR}/embed_fixtures_script.cmake
    COMMENT "Embedding demo fixtures"
    VERBATIM)
endfunction()

# Folders under src/ are layers that only look down. Run as a script
# (cmake -DSRC=... -DSTAMP=... -P check_layers.cmake) by the build before
# anything is compiled: an #include of a higher folder stops the build with
# the file, the line and the two folders.
#
# Order, lowest first. A folder may include itself and any folder before it.
set(layers core config io run subword shards stages pipeline report cli python)

# Includes that point up, each one named; the list may only shrink (it is
# empty: issue 14 removed the last ones). An entry is "FILE:FOLDER" (FILE
# relative to src/).
set(known_debt)

get_filename_component(SRC "${SRC}" ABSOLUTE)
file(GLOB_RECURSE sources RELATIVE "${SRC}" "${SRC}/*.h" "${SRC}/*.cc")
set(problems "")
foreach(f IN LISTS sources)
  string(REGEX MATCH "^[^/]+" from "${f}")
  list(FIND layers "${from}" from_rank)
  if(from_rank LESS 0)
    string(APPEND problems "src/${f}: folder '${from}' is not in the layer list of cmake/check_layers.cmake\n")
    continue()
  endif()
  file(STRINGS "${SRC}/${f}" lines REGEX "^#include \"[a-z_]+/")
  foreach(line IN LISTS lines)
    string(REGEX REPLACE "^#include \"([a-z_]+)/.*" "\\1" to "${line}")
    list(FIND layers "${to}" to_rank)
    if(to_rank GREATER from_rank)
      list(FIND known_debt "${f}:${to}" debt)
      if(debt LESS 0)
        string(APPEND problems "src/${f}: ${line}: '${from}' may not include '${to}' (a higher layer); move the shared type down or the caller up\n")
      endif()
    endif()
  endforeach()
endforeach()
if(problems)
  message(FATAL_ERROR "layer check failed:\n${problems}")
endif()
file(WRITE "${STAMP}" "ok\n")

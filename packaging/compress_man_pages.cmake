# cmake -DDIR=<man1 folder> -P compress_man_pages.cmake: gzip -9n every page, as Debian policy
# asks (-n: no name or time stamp in the header, so the same page gives the same bytes).
file(GLOB pages ${DIR}/*.1)
foreach(page IN LISTS pages)
  execute_process(COMMAND gzip -9nf ${page} RESULT_VARIABLE rc)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "gzip failed on ${page}")
  endif()
endforeach()

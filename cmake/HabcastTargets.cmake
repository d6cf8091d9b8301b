# One place that decides warnings and numeric flags for every target.
function(habcast_set_warnings target)
  target_compile_options(${target} PRIVATE
    -Wall -Wextra -Wpedantic -Wshadow -Wconversion -Wsign-conversion -Wnon-virtual-dtor
    -Wold-style-cast -Woverloaded-virtual
    # Contracting a*b+c into an FMA would make a pixel's value depend on whether the compiler
    # vectorised the loop that produced it; outputs must be bit-identical for any block size.
    -ffp-contract=off
    # GCC 12 at -O3 reports -Wrestrict on ordinary `"literal" + std::string` inside libstdc++
    # (a known false positive of that release); it would make Release builds fail under -Werror.
    $<$<CXX_COMPILER_ID:GNU>:-Wno-restrict>)
  if(HABCAST_WERROR)
    target_compile_options(${target} PRIVATE -Werror)
  endif()
endfunction()

if(HABCAST_SANITIZE)
  add_compile_options(-fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=undefined)
  add_link_options(-fsanitize=address,undefined)
endif()

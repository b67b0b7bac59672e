# Link-time optimisation of lotwise's own programs (GCC, release builds; LOTWISE_LTO).
#
# One build's path runs through the sampler, the variation model, the evaluator and the
# lane solver, each its own translation unit; optimised together at the link, the
# reference study ran 5-7 % faster (docs/performance.md).
#
# The library's objects carry GCC's intermediate code beside ordinary machine code
# (-ffat-lto-objects): a program that links liblotwise without LTO, or with another
# compiler, links the machine code as before. The command line, the Python module and
# the benchmarks link with -flto; the tests link the machine code, and the 45-report
# comparison in DEVELOPERS.md checks that both give the same bits.
option(LOTWISE_LTO "Optimise lotwise's programs across translation units at link time (GCC)" ON)

set(LOTWISE_LTO_ACTIVE OFF)
if(LOTWISE_LTO AND CMAKE_CXX_COMPILER_ID STREQUAL "GNU" AND NOT LOTWISE_SANITIZERS AND
   CMAKE_BUILD_TYPE MATCHES "^(Release|RelWithDebInfo)$")
  set(LOTWISE_LTO_ACTIVE ON)
endif()

# The library: intermediate code beside the machine code.
function(lotwise_lto_objects target)
  if(LOTWISE_LTO_ACTIVE)
    target_compile_options(${target} PRIVATE -flto=auto -ffat-lto-objects)
  endif()
endfunction()

# A program of lotwise's own: linked with -flto. (A function compiled once per processor,
# cpu_dispatch.hpp, is called only from its own file: GCC's link-time check of the
# one-definition rule reports such a function called from another file.)
function(lotwise_lto_link target)
  if(LOTWISE_LTO_ACTIVE)
    target_link_options(${target} PRIVATE -flto=auto)
  endif()
endfunction()

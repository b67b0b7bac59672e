# lotwise_set_warnings(target): strict warnings on our own code; errors when LOTWISE_WERROR.
function(lotwise_set_warnings target)
  if(MSVC)
    target_compile_options(${target} PRIVATE /W4 $<$<BOOL:${LOTWISE_WERROR}>:/WX>)
  else()
    target_compile_options(${target} PRIVATE
      -Wall -Wextra -Wpedantic -Wshadow -Wnon-virtual-dtor -Wcast-align -Woverloaded-virtual
      $<$<BOOL:${LOTWISE_WERROR}>:-Werror>)
  endif()
endfunction()

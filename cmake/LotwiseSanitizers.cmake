# With LOTWISE_SANITIZERS=ON every target is built with ASan and UBSan; the two are
# compatible with each other (not with TSan), so they go together.
if(LOTWISE_SANITIZERS)
  if(MSVC)
    message(FATAL_ERROR "LOTWISE_SANITIZERS needs GCC or Clang")
  endif()
  add_compile_options(-fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=all)
  add_link_options(-fsanitize=address,undefined)
endif()

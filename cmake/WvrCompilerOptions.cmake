# Warning and sanitizer flags shared by every target of the project, applied per target so
# that nothing leaks into the exported package.
function(wvr_apply_compiler_options target)
  target_compile_options(${target} PRIVATE
    -Wall -Wextra -Wpedantic -Wshadow -Wconversion -Wno-sign-conversion
    $<$<BOOL:${WVR_WERROR}>:-Werror>
    # GCC 12's -Wrestrict fires falsely inside libstdc++ string code (GCC bug 105329).
    $<$<AND:$<CXX_COMPILER_ID:GNU>,$<VERSION_LESS:$<CXX_COMPILER_VERSION>,13>>:-Wno-restrict>)
  if(WVR_SANITIZE)
    target_compile_options(${target} PRIVATE -fsanitize=${WVR_SANITIZE} -fno-omit-frame-pointer)
    target_link_options(${target} PRIVATE -fsanitize=${WVR_SANITIZE})
  endif()
endfunction()

# Fails when any C++ file of the project differs from clang-format's output.
file(GLOB_RECURSE files
  ${ROOT}/libwvr/*.hpp ${ROOT}/libwvr/*.cpp ${ROOT}/tools/*.cpp ${ROOT}/tools/*.hpp
  ${ROOT}/bindings/*.cpp ${ROOT}/tests/*.cpp ${ROOT}/tests/*.hpp)
execute_process(COMMAND ${CLANG_FORMAT} --dry-run --Werror ${files}
  RESULT_VARIABLE result ERROR_VARIABLE errors)
if(NOT result EQUAL 0)
  message(FATAL_ERROR "clang-format differences (run clang-format -i on these files):\n${errors}")
endif()

# Warning and sanitizer flags shared by every target of the project.
add_library(pulsewise_warnings INTERFACE)
target_compile_options(pulsewise_warnings INTERFACE -Wall -Wextra -Wpedantic)
if(PULSEWISE_SANITIZE)
  target_compile_options(pulsewise_warnings INTERFACE
    -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=undefined)
  target_link_options(pulsewise_warnings INTERFACE -fsanitize=address,undefined)
endif()

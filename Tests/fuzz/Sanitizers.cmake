# Flags of the fuzz build (KERF_BUILD_FUZZERS, configured by scripts/fuzz into build/fuzz).
# Every object, JUCE's modules and the DSP core included, gets libFuzzer's coverage hooks
# (-fsanitize=fuzzer-no-link) and AddressSanitizer + UndefinedBehaviorSanitizer; only the
# fuzz executables link libFuzzer's main (-fsanitize=fuzzer, Tests/fuzz/CMakeLists.txt).
# Debian's system libraries (libFLAC, libvorbis, libc) are not instrumented.
if(NOT CMAKE_CXX_COMPILER_ID STREQUAL "Clang")
  message(FATAL_ERROR "KERF_BUILD_FUZZERS needs clang: configure with CC=clang CXX=clang++")
endif()
# UBSan reports are recoverable at compile time so that UBSAN_OPTIONS can suppress known
# JUCE reports (Tests/fuzz/ubsan.supp); scripts/fuzz runs with halt_on_error=1, so every
# other report stops the run like a crash.
add_compile_options(-fsanitize=fuzzer-no-link,address,undefined -fno-omit-frame-pointer)
add_link_options(-fsanitize=address,undefined)
# -O1 with line tables: symbolised stacks, a cold build of a few minutes on 2 cores.
set(CMAKE_C_FLAGS_RELWITHDEBINFO "-O1 -gline-tables-only -DNDEBUG")
set(CMAKE_CXX_FLAGS_RELWITHDEBINFO "-O1 -gline-tables-only -DNDEBUG")

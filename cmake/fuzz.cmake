# Fuzzing build (option LODESTONE_FUZZ): the library and the libFuzzer targets in
# fuzz/, compiled by clang (CC=clang-14 CXX=clang++-14) with coverage for libFuzzer
# plus AddressSanitizer and UndefinedBehaviorSanitizer. Use a build folder of its
# own (scripts/test uses build-fuzz); its CTest runs every target briefly from the
# committed seed corpus and replays the committed regression inputs.
if(NOT LODESTONE_FUZZ)
  return()
endif()
if(NOT CMAKE_CXX_COMPILER_ID STREQUAL "Clang")
  message(FATAL_ERROR "LODESTONE_FUZZ needs clang: configure with CC=clang-14 CXX=clang++-14")
endif()
add_compile_options(-fsanitize=fuzzer-no-link,address,undefined -fno-sanitize-recover=undefined
                    -fno-omit-frame-pointer -O1 -g)
add_link_options(-fsanitize=address,undefined)

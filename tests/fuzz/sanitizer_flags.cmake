# Included by the top CMakeLists.txt before any target: with BAYLINE_FUZZ=ON (clang only) every
# library is compiled for libFuzzer coverage with AddressSanitizer and UndefinedBehaviorSanitizer
# (any report aborts), so the fuzz targets in tests/fuzz find faults in the code they link.
option(BAYLINE_FUZZ "Build the libFuzzer targets of tests/fuzz with ASan and UBSan (clang only)" OFF)
if(BAYLINE_FUZZ)
  if(NOT CMAKE_CXX_COMPILER_ID MATCHES "Clang")
    message(FATAL_ERROR "BAYLINE_FUZZ needs clang (-DCMAKE_CXX_COMPILER=clang++), not "
                        "${CMAKE_CXX_COMPILER_ID}")
  endif()
  add_compile_options(-fsanitize=fuzzer-no-link,address,undefined -fno-sanitize-recover=all
                      -fno-omit-frame-pointer -gline-tables-only)
  add_link_options(-fsanitize=address,undefined)
endif()

# fuzz.cmake — libFuzzer targets (included by CMakeLists.txt when RP_FUZZ is ON).
# Needs clang (-DCMAKE_C_COMPILER=clang; Debian: clang, libclang-rt-14-dev, libomp-dev).
# The core library is instrumented for coverage (fuzzer-no-link) and built with
# AddressSanitizer and UndefinedBehaviorSanitizer; each target links libFuzzer.
# Run them with scripts/fuzz.sh [SECONDS].
if(NOT CMAKE_C_COMPILER_ID MATCHES "Clang")
  message(FATAL_ERROR "RP_FUZZ needs clang: configure with -DCMAKE_C_COMPILER=clang")
endif()
set(RP_FUZZ_FLAGS -fsanitize=fuzzer-no-link,address,undefined -fno-omit-frame-pointer
                  -fno-sanitize-recover=undefined -g -O1)
target_compile_options(rainprint_objects PRIVATE ${RP_FUZZ_FLAGS} -Wno-double-promotion)
# CMPLX for clang (see clang_compat.h)
target_compile_options(rainprint_objects PRIVATE -include
                       ${CMAKE_SOURCE_DIR}/tests/fuzz/clang_compat.h)
file(GLOB RP_FUZZ_SOURCES CONFIGURE_DEPENDS ${CMAKE_SOURCE_DIR}/tests/fuzz/fuzz_*.c)
set(RP_FUZZ_TARGETS "")
foreach(src ${RP_FUZZ_SOURCES})
  get_filename_component(name ${src} NAME_WE)
  add_executable(${name} ${src})
  target_include_directories(${name} PRIVATE ${CMAKE_SOURCE_DIR}/src ${CMAKE_SOURCE_DIR}/tests/fuzz)
  target_compile_options(${name} PRIVATE -fsanitize=fuzzer,address,undefined
                         -fno-omit-frame-pointer -fno-sanitize-recover=undefined -g -O1)
  target_link_options(${name} PRIVATE -fsanitize=fuzzer,address,undefined)
  target_link_libraries(${name} PRIVATE rainprint_static)
  list(APPEND RP_FUZZ_TARGETS ${name})
endforeach()
add_custom_target(fuzz_all DEPENDS ${RP_FUZZ_TARGETS})

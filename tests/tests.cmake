# One cmocka executable per tests/test_<module>.c, registered with ctest.
set(RP_TEST_ENV
    "LSAN_OPTIONS=suppressions=${CMAKE_SOURCE_DIR}/tests/lsan.supp"
    "RP_SOURCE_DIR=${CMAKE_SOURCE_DIR}"
    "RP_BINARY_DIR=${CMAKE_BINARY_DIR}"
    "OMP_NUM_THREADS=2"
    "RAINPRINT_CACHE=${CMAKE_BINARY_DIR}/table-cache")
file(GLOB RP_TEST_SOURCES CONFIGURE_DEPENDS ${CMAKE_SOURCE_DIR}/tests/test_*.c)
foreach(src ${RP_TEST_SOURCES})
  get_filename_component(name ${src} NAME_WE)
  add_executable(${name} ${src})
  target_include_directories(${name} PRIVATE ${CMAKE_SOURCE_DIR}/src ${CMAKE_SOURCE_DIR}/tests)
  target_compile_options(${name} PRIVATE ${RP_WARNINGS} -Wno-conversion)
  target_compile_definitions(${name} PRIVATE RP_SOURCE_DIR="${CMAKE_SOURCE_DIR}")
  target_link_libraries(${name} PRIVATE rainprint_plot_static rainprint_static PkgConfig::CMOCKA)
  add_test(NAME ${name} COMMAND ${name})
  set_tests_properties(${name} PROPERTIES ENVIRONMENT "${RP_TEST_ENV}")
endforeach()

# Checks against a general-purpose reference library (SciPy, Debian's python3-scipy).
# Each tests/ref_*.py receives the path of the tool and the build folder, where it finds
# the helper it drives (a test binary, e.g. test_dsd).
find_program(RP_SYSTEM_PYTHON NAMES python3 PATHS /usr/bin NO_DEFAULT_PATH)
file(GLOB RP_REF_SCRIPTS CONFIGURE_DEPENDS ${CMAKE_SOURCE_DIR}/tests/ref_*.py)
foreach(script ${RP_REF_SCRIPTS})
  get_filename_component(name ${script} NAME_WE)
  add_test(NAME ${name}
           COMMAND ${RP_SYSTEM_PYTHON} ${script} $<TARGET_FILE:rainprint-cli>
                   ${CMAKE_BINARY_DIR})
  set_tests_properties(${name} PROPERTIES ENVIRONMENT "${RP_TEST_ENV}")
endforeach()

# End-to-end runs of the tool (tests/cli/*.sh), bad input included.
file(GLOB RP_CLI_SCRIPTS CONFIGURE_DEPENDS ${CMAKE_SOURCE_DIR}/tests/cli/*.sh)
foreach(script ${RP_CLI_SCRIPTS})
  get_filename_component(name ${script} NAME_WE)
  add_test(NAME cli_${name}
           COMMAND bash ${script} $<TARGET_FILE:rainprint-cli> ${CMAKE_BINARY_DIR})
  set_tests_properties(cli_${name} PROPERTIES ENVIRONMENT "${RP_TEST_ENV}")
endforeach()

# The tool under valgrind (not in the sanitizer build: the two do not mix).
find_program(RP_VALGRIND valgrind)
if(RP_VALGRIND AND NOT RP_SANITIZE)
  add_test(NAME valgrind_tool
           COMMAND bash ${CMAKE_SOURCE_DIR}/tests/valgrind/tool.sh $<TARGET_FILE:rainprint-cli>
                   ${CMAKE_BINARY_DIR})
  set_tests_properties(valgrind_tool PROPERTIES ENVIRONMENT "${RP_TEST_ENV}")
endif()

# Installed like a package (tests/install/install.sh): a copy of the tree built without
# tests, installed into a temporary prefix and used from outside (normal build only: the
# installed tool is not a sanitizer build).
if(NOT RP_SANITIZE)
  add_test(NAME install COMMAND bash ${CMAKE_SOURCE_DIR}/tests/install/install.sh
                                ${CMAKE_SOURCE_DIR})
  set_tests_properties(install PROPERTIES TIMEOUT 600)
endif()

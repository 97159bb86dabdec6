# One-line helpers so that every library, test and benchmark is declared the same way.

# Warnings, and the sanitizers under FRUGAL_SANITIZE or FRUGAL_FUZZ: every frugal target calls this.
function(frugal_set_warnings target)
  target_compile_options(${target} PRIVATE -Wall -Wextra -Wpedantic -Wshadow)
  if(FRUGAL_WARNINGS_AS_ERRORS)
    target_compile_options(${target} PRIVATE -Werror)
  endif()
  if(FRUGAL_SANITIZE OR FRUGAL_FUZZ)
    # Undefined behaviour aborts instead of printing and going on, so it counts as a failure.
    set(sanitizers -fsanitize=address,undefined -fno-sanitize-recover=undefined)
    target_compile_options(${target} PRIVATE ${sanitizers} -fno-omit-frame-pointer)
    target_link_options(${target} PRIVATE ${sanitizers})
  endif()
  if(FRUGAL_FUZZ)
    target_compile_options(${target} PRIVATE -fsanitize=fuzzer-no-link)  # libFuzzer's coverage
  endif()
endfunction()

# frugal_add_library(<part> SOURCES ... DEPENDS ...): library frugal_<part>, alias frugal::<part>.
function(frugal_add_library part)
  cmake_parse_arguments(ARG "" "" "SOURCES;DEPENDS;PRIVATE_DEPENDS" ${ARGN})
  add_library(frugal_${part} ${ARG_SOURCES})
  add_library(frugal::${part} ALIAS frugal_${part})
  target_compile_features(frugal_${part} PUBLIC cxx_std_17)
  target_include_directories(frugal_${part} PUBLIC "${PROJECT_SOURCE_DIR}" "${PROJECT_BINARY_DIR}/generated")
  target_link_libraries(frugal_${part} PUBLIC ${ARG_DEPENDS} PRIVATE ${ARG_PRIVATE_DEPENDS})
  frugal_set_warnings(frugal_${part})
endfunction()

# frugal_add_test(<name> <source> [PROCESSORS n] DEPENDS ...): a GoogleTest executable registered
# with CTest. Tests that train with torch's two threads declare PROCESSORS 2, so that
# `ctest --parallel 2` runs them alone: oversubscribed OpenMP threads spin and slow training
# several-fold.
function(frugal_add_test name source)
  cmake_parse_arguments(ARG "" "PROCESSORS" "DEPENDS" ${ARGN})
  if(NOT ARG_PROCESSORS)
    set(ARG_PROCESSORS 1)
  endif()
  add_executable(${name} ${source})
  target_link_libraries(${name} PRIVATE ${ARG_DEPENDS} GTest::gtest GTest::gtest_main)
  target_compile_definitions(${name} PRIVATE
    FRUGAL_SOURCE_DIR="${PROJECT_SOURCE_DIR}" FRUGAL_PYTHON="${Python3_EXECUTABLE}"
    FRUGAL_EXECUTABLE="$<TARGET_FILE:frugal>")
  frugal_set_warnings(${name})
  # Each test program gets its own scratch folder inside the build tree, so parallel runs and
  # other build trees never share temporary file names.
  set(scratch "${CMAKE_BINARY_DIR}/test-scratch/${name}")
  file(MAKE_DIRECTORY "${scratch}")
  # Each test carries its part's folder name (phantoms, measure, ...) as a label, so that
  # scripts/sanitize.sh can run the torch-free parts alone.
  get_filename_component(part "${CMAKE_CURRENT_SOURCE_DIR}" NAME)
  gtest_discover_tests(${name} DISCOVERY_TIMEOUT 60
                       PROPERTIES TIMEOUT 600 PROCESSORS ${ARG_PROCESSORS} LABELS ${part}
                                  ENVIRONMENT "TEST_TMPDIR=${scratch}")
endfunction()

# frugal_add_python_test(<name> <script> [args...]): a reference check written against the
# Debian Python packages (numpy, scipy, scikit-image, nibabel).
function(frugal_add_python_test name script)
  add_test(NAME ${name} COMMAND "${Python3_EXECUTABLE}" "${PROJECT_SOURCE_DIR}/${script}"
           --frugal "$<TARGET_FILE:frugal>" --source "${PROJECT_SOURCE_DIR}" ${ARGN})
  set_tests_properties(${name} PROPERTIES TIMEOUT 600)
endfunction()

# frugal_add_benchmark(<name> <source> DEPENDS ...): a Google Benchmark executable.
function(frugal_add_benchmark name source)
  cmake_parse_arguments(ARG "" "" "DEPENDS" ${ARGN})
  add_executable(${name} ${source})
  target_link_libraries(${name} PRIVATE ${ARG_DEPENDS} benchmark::benchmark benchmark::benchmark_main)
  frugal_set_warnings(${name})
endfunction()

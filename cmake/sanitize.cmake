# Sanitizer build (option LODESTONE_SANITIZE): AddressSanitizer + UndefinedBehaviorSanitizer
# for every target, and the run-time options every test of this build gets from CTest.
#
# Use a build folder of its own (scripts/test uses build-asan). The run-time options:
#  - leaks are reported at exit; leaks inside OpenMPI, HDF5 and PETSc are suppressed by
#    tests/sanitizer/lsan.supp (each entry explained there), none in Lodestone's code;
#  - any undefined behaviour stops the program (-fno-sanitize-recover) with a stack trace.
if(NOT LODESTONE_SANITIZE)
  return()
endif()

add_compile_options(-fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=undefined -O1)
add_link_options(-fsanitize=address,undefined)

set(LODESTONE_SANITIZER_ENV
  "ASAN_OPTIONS=detect_leaks=1:fast_unwind_on_malloc=0:malloc_context_size=40:strict_string_checks=1:detect_stack_use_after_return=1:check_initialization_order=1"
  "LSAN_OPTIONS=suppressions=${PROJECT_SOURCE_DIR}/tests/sanitizer/lsan.supp:print_suppressions=0"
  "UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1")

// Library start-up and shut-down (include/lodestone/runtime.hpp).
#include "lodestone/runtime.hpp"

#include <petscsys.h>

#include <csignal>

#include "io/h5.hpp"

namespace lodestone {

Runtime::Runtime(int* argc, char*** argv) {
  // PETSc reads its own options (e.g. -log_view) from the command line.
  ok_ = PetscInitialize(argc, argv, nullptr, nullptr) == 0;
  if (ok_) PetscPushErrorHandler(PetscReturnErrorHandler, nullptr);
  h5::silence_errors();
  // A file-size limit (ulimit -f) must surface as a failed write we can report,
  // not as a signal that kills one rank while the others wait.
  std::signal(SIGXFSZ, SIG_IGN);
}

Runtime::~Runtime() {
  if (ok_) PetscFinalize();
}

}  // namespace lodestone

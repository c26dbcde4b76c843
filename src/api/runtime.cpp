// Library start-up and shut-down (include/lodestone/runtime.hpp).
#include "lodestone/runtime.hpp"

#include <petscsys.h>

#include <csignal>

#include "io/h5.hpp"
#include "state/stop_signals.hpp"

namespace lodestone {

Runtime::Runtime(int* argc, char*** argv) {
  // PETSc reads its own options (e.g. -log_view) from the command line. Its signal
  // handler stays out: stop signals are Lodestone's (state/stop_signals.hpp), and
  // PETSc's shutdown would set SIGTERM back to its default under them.
  PetscOptionsSetValue(nullptr, "-no_signal_handler", nullptr);
  ok_ = PetscInitialize(argc, argv, nullptr, nullptr) == 0;
  if (ok_) PetscPushErrorHandler(PetscReturnErrorHandler, nullptr);
  h5::silence_errors();
  // A file-size limit (ulimit -f) must surface as a failed write we can report,
  // not as a signal that kills one rank while the others wait.
  std::signal(SIGXFSZ, SIG_IGN);
}

Runtime::~Runtime() {
  // After a failed file close (disk full, ulimit -f), HDF5's own shutdown inside
  // MPI_Finalize would crash on the file it half-freed (io/h5.hpp).
  if (h5::a_close_failed()) h5::skip_library_shutdown();
  if (ok_) PetscFinalize();
  // Whatever the shutdown of the libraries did to the signals: a stop signal
  // arriving now, after the results were written, must not kill a finished run
  // (it did, with exit 143, when PETSc's shutdown reset SIGTERM).
  state::reinstate_stop_handlers();
}

}  // namespace lodestone

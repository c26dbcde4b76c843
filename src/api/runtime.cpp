// Library start-up and shut-down (include/lodestone/runtime.hpp).
#include "lodestone/runtime.hpp"

#include <petscsys.h>

#include <csignal>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "api/mpi_transport.hpp"
#include "io/h5.hpp"
#include "state/stop_signals.hpp"

namespace lodestone {

namespace {

// Open MPI has two MPI-IO implementations and picks its own (OMPIO) by default. Its
// ROMIO component writes Lodestone's checkpoints and results about twice as fast on a
// local file system (a 208 MB checkpoint from 2 ranks: 0.27 s against 0.53 s, dd with
// fsync 0.13-0.17 s; docs/benchmarks.md). Raising ROMIO's priority above OMPIO's (30)
// makes Open MPI prefer it where it was built, and changes nothing where it was not
// (the names of Open MPI 4 and 5). A user's own choice, in the environment, stands.
void prefer_romio() {
#if defined(OPEN_MPI) && OPEN_MPI
  if (std::getenv("OMPI_MCA_io") != nullptr) return;
  setenv("OMPI_MCA_io_romio321_priority", "40", 0);
  setenv("OMPI_MCA_io_romio341_priority", "40", 0);
#endif
}

// What choose_messaging_layer decided, for --version (mpi_transport_choice).
std::string messaging_choice = "messaging layer as the MPI library chooses: MPI was started by the program";

// On one machine, outside a batch job, with no choice of the user's: Open MPI's ob1
// layer by name, without the search for network hardware (api/mpi_transport.hpp).
void choose_messaging_layer() {
#if defined(OPEN_MPI) && OPEN_MPI
  const mpi_transport::Environment env = [](const std::string& name) -> std::optional<std::string> {
    const char* value = std::getenv(name.c_str());
    if (value == nullptr) return std::nullopt;
    return std::string(value);
  };
  std::vector<std::pair<std::string, std::string>> files;
  for (const auto& path : mpi_transport::parameter_files(env, LODESTONE_OMPI_SYSCONFDIR)) {
    std::ifstream in(path);
    if (!in) continue;
    std::stringstream text;
    text << in.rdbuf();
    files.emplace_back(path, text.str());
  }
  const std::string reason = mpi_transport::reason_to_leave_alone(env, files);
  if (!reason.empty()) {
    messaging_choice = "messaging layer as Open MPI chooses: " + reason;
    return;
  }
  setenv(mpi_transport::kVariable, mpi_transport::kValue, 0);
  messaging_choice = std::string("Open MPI's ob1 messaging layer, named by Lodestone for a run on one machine (") +
                     mpi_transport::kVariable + "=" + mpi_transport::kValue + "; set " +
                     mpi_transport::kVariable + " yourself to choose)";
#else
  messaging_choice = "messaging layer as the MPI library chooses";
#endif
}

}  // namespace

std::string mpi_transport_choice() { return messaging_choice; }

Runtime::Runtime(int* argc, char*** argv) {
  // Settings MPI reads when it starts: too late if the program started it already.
  int started = 0;
  MPI_Initialized(&started);
  if (!started) {
    prefer_romio();
    choose_messaging_layer();
  }
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

// Checkpoint files (include/lodestone/checkpoint.hpp); the work is in src/state.
#include "lodestone/checkpoint.hpp"

#include <hdf5.h>

#include <filesystem>

#include "io/h5.hpp"
#include "state/checkpoint_file.hpp"
#include "state/checkpoint_layout.hpp"
#include "state/stop_signals.hpp"
#include "support/collective.hpp"

namespace lodestone {

std::string previous_checkpoint_path(const std::string& path) { return path + ".previous"; }

void catch_stop_signals() { state::install_stop_handlers(); }

Status check_checkpoint_plan(const CheckpointPlan& plan) {
  if (plan.path.empty() && (plan.resume || plan.time_budget_seconds > 0 || plan.every_seconds > 0))
    return Status::usage("--resume, --time-budget and --checkpoint-every need --checkpoint FILE");
  return Status::ok();
}

bool checkpoint_exists(MPI_Comm comm, const std::string& path) {
  int found = 0;
  if (comm_rank(comm) == 0) {
    std::error_code ec;
    found = std::filesystem::exists(path, ec) || std::filesystem::exists(previous_checkpoint_path(path), ec);
  }
  MPI_Bcast(&found, 1, MPI_INT, 0, comm);
  return found != 0;
}

bool is_checkpoint_file(MPI_Comm comm, const std::string& path) {
  int yes = 0;
  if (comm_rank(comm) == 0) {
    std::error_code ec;
    if (std::filesystem::is_regular_file(path, ec) && H5Fis_hdf5(path.c_str()) > 0) {
      h5::Handle f(H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT));
      if (f.valid()) {
        h5::Handle root(H5Gopen2(f.get(), "/", H5P_DEFAULT));
        if (root.valid() && h5::has_attribute(root.get(), ckpt::kFileKind)) {
          auto kind = h5::read_string_attribute(root.get(), ckpt::kFileKind);
          yes = kind && *kind == ckpt::kKindValue;
        }
        root.close();
        f.close_file();
      }
    }
  }
  MPI_Bcast(&yes, 1, MPI_INT, 0, comm);
  return yes != 0;
}

Status write_checkpoint(MPI_Comm comm, const std::string& path, const Checkpoint& ckpt,
                        const std::vector<std::string>& inputs) {
  return ckpt::write(comm, path, ckpt, inputs);
}

Result<Checkpoint> read_checkpoint(MPI_Comm comm, const std::string& path, std::int64_t row_begin,
                                   std::int64_t row_end, const CheckpointReadOptions& options) {
  return ckpt::read(comm, path, row_begin, row_end, options);
}

Status check_resumable(const Checkpoint& ckpt, const RunIdentity& expected, const std::string& path) {
  return ckpt::check_identity(ckpt, expected, path);
}

}  // namespace lodestone

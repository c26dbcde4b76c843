// Two-generation atomic output for checkpoints.
//
// Like io::AtomicOutput, the new file is written under a temporary name in the
// same directory and renamed into place only after every rank has finished and
// rank 0 has fsynced it. In addition, the checkpoint being replaced is kept as
// FILE.previous: rank 0 hard-links FILE to a temporary name, renames that link
// over FILE.previous, renames the new file over FILE and fsyncs the directory.
// Every rename is atomic, so at every instant FILE names a complete checkpoint
// (the old one or the new one). Where hard links are not supported it falls
// back to renaming FILE to FILE.previous first, which leaves a short window in
// which only FILE.previous exists; readers fall back to it. Temporary files
// left by killed writers are removed when the next write of the same FILE begins.
#pragma once

#include <mpi.h>

#include <string>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone::ckpt {

// Collective. Refuses, before any work, a checkpoint path whose checkpoints
// would overwrite one of `inputs` (as FILE or as FILE.previous) or cannot be
// written, and removes temporary files that killed writers of it left behind.
Status check_checkpoint_path(MPI_Comm comm, const std::string& final_path, const std::vector<std::string>& inputs);

class GenerationalOutput {
 public:
  // Collective. `inputs` are paths the checkpoint must not overwrite.
  static Result<GenerationalOutput> begin(MPI_Comm comm, const std::string& final_path,
                                          const std::vector<std::string>& inputs);
  GenerationalOutput(GenerationalOutput&& o) noexcept;
  GenerationalOutput& operator=(GenerationalOutput&&) = delete;
  GenerationalOutput(const GenerationalOutput&) = delete;
  ~GenerationalOutput();

  const std::string& temp_path() const { return temp_; }
  // Collective; call after every rank has flushed and closed the temporary file.
  Status commit();

 private:
  GenerationalOutput(MPI_Comm comm, std::string final_path, std::string temp)
      : comm_(comm), final_(std::move(final_path)), temp_(std::move(temp)) {}
  MPI_Comm comm_ = MPI_COMM_NULL;
  std::string final_;
  std::string temp_;
  bool done_ = false;
};

}  // namespace lodestone::ckpt

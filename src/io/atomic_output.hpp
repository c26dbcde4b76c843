// Writing a file so that it is never half-written under its final name.
//
// begin() picks a temporary name in the same directory as the final path (so
// the rename stays on one file system) and refuses an output that is one of the
// inputs. The caller writes the temporary file collectively, syncs it on every
// rank and closes it (h5::Handle::sync_and_close_file for HDF5 files); commit()
// then has rank 0 fsync it, rename it over the final name and fsync the
// directory. If commit() is never reached, the temporary file is removed.
#pragma once

#include <mpi.h>

#include <functional>
#include <string>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone::io {

class AtomicOutput {
 public:
  // Collective. `inputs` are paths the output must not overwrite.
  static Result<AtomicOutput> begin(MPI_Comm comm, const std::string& final_path,
                                    const std::vector<std::string>& inputs = {});
  AtomicOutput(AtomicOutput&& o) noexcept;
  AtomicOutput& operator=(AtomicOutput&&) = delete;
  AtomicOutput(const AtomicOutput&) = delete;
  ~AtomicOutput();

  const std::string& temp_path() const { return temp_; }
  const std::string& final_path() const { return final_; }
  // Collective; call after every rank has closed the temporary file.
  Status commit();

 private:
  AtomicOutput(MPI_Comm comm, std::string final_path, std::string temp)
      : comm_(comm), final_(std::move(final_path)), temp_(std::move(temp)) {}
  MPI_Comm comm_ = MPI_COMM_NULL;
  std::string final_;
  std::string temp_;
  bool done_ = false;
};

// True if a and b name the same existing file, or the same path.
bool same_file(const std::string& a, const std::string& b);

// Collective. On rank 0: checks that `final_path` may be written — it is none of
// `inputs`, not a directory, and its directory exists and is writable — then runs
// `prepare` (if given); all ranks agree on the outcome and on a fresh temporary
// name beside the final one. `what` names the file in messages ("output", ...).
Result<std::string> reserve_temporary(MPI_Comm comm, const std::string& final_path,
                                      const std::vector<std::string>& inputs, const char* what,
                                      const std::function<Status()>& prepare = {});

// Collective. Refuses, before anything is written, a file of about `bytes`
// (a lower bound: its datasets) that the file-size limit of some rank (ulimit -f,
// RLIMIT_FSIZE) would stop part-way; `what` names the file in the message.
Status check_size_limit(MPI_Comm comm, const std::string& path, double bytes, const char* what);

// The directory a path lives in ("." for a bare name).
std::string directory_of(const std::string& path);
// fsync. With drop_cached, the file's pages (clean after the sync) then leave the
// page cache: a checkpoint is read again only on a resume, and new writes reuse the
// memory instead of claiming more (on this project's virtual machines a second
// 288 MB file written while the first was still cached took 1.2 s against 0.2 s).
Status fsync_file(const std::string& path, bool drop_cached = false);
// Best effort: some file systems refuse to sync a directory.
void fsync_directory(const std::string& dir);
// Rank 0 removes `path` (for abandoned temporaries; safe after MPI_Finalize).
void remove_on_rank0(MPI_Comm comm, const std::string& path);

}  // namespace lodestone::io

// Temporary name, fsync, keep the previous generation, rename (state/checkpoint_output.hpp).
#include "state/checkpoint_output.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>

#include "io/atomic_output.hpp"
#include "lodestone/checkpoint.hpp"
#include "support/collective.hpp"

namespace fs = std::filesystem;

namespace lodestone::ckpt {

using io::directory_of;
using io::fsync_directory;
using io::fsync_file;

namespace {

// Removes temporaries that writers of `final_path` killed mid-write left behind.
void remove_stale_temporaries(const std::string& final_path) {
  const fs::path dir = directory_of(final_path);
  const std::string name = fs::path(final_path).filename().string();
  const std::string partial = "." + name + ".partial-", link = "." + name + ".previous-link-";
  std::error_code ec;
  for (auto it = fs::directory_iterator(dir, ec); !ec && it != fs::directory_iterator(); it.increment(ec)) {
    const std::string f = it->path().filename().string();
    if (f.rfind(partial, 0) == 0 || f.rfind(link, 0) == 0) {
      std::error_code rm;
      fs::remove(it->path(), rm);
    }
  }
}

// A fresh temporary name for the next checkpoint at `final_path`, after the checks
// of check_checkpoint_path (nothing is created).
Result<std::string> reserve(MPI_Comm comm, const std::string& final_path, const std::vector<std::string>& inputs) {
  return io::reserve_temporary(comm, final_path, inputs, "checkpoint", [&]() -> Status {
    const std::string previous = previous_checkpoint_path(final_path);
    for (const auto& in : inputs)
      if (io::same_file(in, previous))
        return Status::input(fmt::format("{}: the checkpoint would overwrite an input as {}; choose another name",
                                         final_path, previous));
    remove_stale_temporaries(final_path);
    return Status::ok();
  });
}

}  // namespace

Status check_checkpoint_path(MPI_Comm comm, const std::string& final_path, const std::vector<std::string>& inputs) {
  return reserve(comm, final_path, inputs).status();
}

Result<GenerationalOutput> GenerationalOutput::begin(MPI_Comm comm, const std::string& final_path,
                                                     const std::vector<std::string>& inputs) {
  auto temp = reserve(comm, final_path, inputs);
  if (!temp) return temp.status();
  return GenerationalOutput(comm, final_path, *temp);
}

GenerationalOutput::GenerationalOutput(GenerationalOutput&& o) noexcept
    : comm_(o.comm_), final_(std::move(o.final_)), temp_(std::move(o.temp_)), done_(o.done_) {
  o.done_ = true;
}

GenerationalOutput::~GenerationalOutput() {
  if (!done_ && comm_ != MPI_COMM_NULL) io::remove_on_rank0(comm_, temp_);
}

Status GenerationalOutput::commit() {
  MPI_Barrier(comm_);  // every rank has closed the temporary file
  Status s;
  if (comm_rank(comm_) == 0) {
    s = fsync_file(temp_, /*drop_cached=*/true);
    const std::string previous = previous_checkpoint_path(final_);
    std::error_code ec;
    if (s && fs::exists(final_, ec)) {
      const fs::path dir(directory_of(final_));
      const std::string link = (dir / fmt::format(".{}.previous-link-{}", fs::path(final_).filename().string(),
                                                  ::getpid()))
                                   .string();
      ::unlink(link.c_str());
      if (::link(final_.c_str(), link.c_str()) == 0) {
        // FILE stays in place throughout; FILE.previous switches atomically.
        if (std::rename(link.c_str(), previous.c_str()) != 0)
          s = Status::input(fmt::format("{}: cannot keep the previous checkpoint: {}", previous, std::strerror(errno)));
        ::unlink(link.c_str());  // still there only if FILE.previous already was FILE
      } else if (std::rename(final_.c_str(), previous.c_str()) != 0) {
        s = Status::input(fmt::format("{}: cannot keep the previous checkpoint: {}", previous, std::strerror(errno)));
      }
    }
    if (s && std::rename(temp_.c_str(), final_.c_str()) != 0)
      s = Status::input(fmt::format("{}: cannot rename the finished checkpoint into place: {}", final_,
                                    std::strerror(errno)));
    if (s) fsync_directory(directory_of(final_));
  }
  s = agree(comm_, s);
  done_ = s.is_ok();
  return s;
}

}  // namespace lodestone::ckpt

// Temporary name, fsync, keep the previous generation, rename (state/checkpoint_output.hpp).
#include "state/checkpoint_output.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <random>

#include "io/atomic_output.hpp"
#include "lodestone/checkpoint.hpp"
#include "support/collective.hpp"

namespace fs = std::filesystem;

namespace lodestone::ckpt {

namespace {

fs::path directory_of(const std::string& path) {
  fs::path p(path);
  return p.has_parent_path() ? p.parent_path() : fs::path(".");
}

Status fsync_file(const std::string& path) {
  int fd = ::open(path.c_str(), O_RDONLY);
  if (fd < 0) return Status::input(fmt::format("{}: cannot open for sync: {}", path, std::strerror(errno)));
  int rc = ::fsync(fd);
  int err = errno;
  ::close(fd);
  if (rc != 0) return Status::input(fmt::format("{}: fsync failed: {}", path, std::strerror(err)));
  return Status::ok();
}

void fsync_directory(const fs::path& dir) {
  int fd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY);
  if (fd < 0) return;
  ::fsync(fd);  // some file systems refuse to sync a directory; the renames still happened
  ::close(fd);
}

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

}  // namespace

Result<GenerationalOutput> GenerationalOutput::begin(MPI_Comm comm, const std::string& final_path,
                                                     const std::vector<std::string>& inputs) {
  Status s;
  std::string temp;
  if (comm_rank(comm) == 0) {
    const fs::path p(final_path), dir = directory_of(final_path);
    std::error_code ec;
    for (const auto& in : inputs)
      if (io::same_file(in, final_path) || io::same_file(in, previous_checkpoint_path(final_path)))
        s = Status::input(fmt::format("{}: the checkpoint would overwrite an input; choose another name", final_path));
    if (s && (p.filename().empty() || fs::is_directory(p, ec)))
      s = Status::input(fmt::format("{}: checkpoint path is a directory", final_path));
    if (s && !fs::is_directory(dir, ec))
      s = Status::input(fmt::format("{}: directory '{}' does not exist", final_path, dir.string()));
    if (s && ::access(dir.c_str(), W_OK) != 0)
      s = Status::input(fmt::format("{}: directory '{}' is not writable", final_path, dir.string()));
    if (s) {
      remove_stale_temporaries(final_path);
      std::random_device rd;
      temp = (dir / fmt::format(".{}.partial-{}-{:08x}", p.filename().string(), ::getpid(), rd())).string();
    }
  }
  LODESTONE_TRY(agree(comm, s));
  int len = static_cast<int>(temp.size());
  MPI_Bcast(&len, 1, MPI_INT, 0, comm);
  temp.resize(static_cast<std::size_t>(len));
  MPI_Bcast(temp.data(), len, MPI_CHAR, 0, comm);
  return GenerationalOutput(comm, final_path, temp);
}

GenerationalOutput::GenerationalOutput(GenerationalOutput&& o) noexcept
    : comm_(o.comm_), final_(std::move(o.final_)), temp_(std::move(o.temp_)), done_(o.done_) {
  o.done_ = true;
}

GenerationalOutput::~GenerationalOutput() {
  if (done_ || comm_ == MPI_COMM_NULL) return;
  int finalized = 0, rank = 0;
  MPI_Finalized(&finalized);
  if (!finalized) MPI_Comm_rank(comm_, &rank);
  if (rank == 0) {
    std::error_code ec;
    fs::remove(temp_, ec);
  }
}

Status GenerationalOutput::commit() {
  MPI_Barrier(comm_);  // every rank has closed the temporary file
  Status s;
  if (comm_rank(comm_) == 0) {
    s = fsync_file(temp_);
    const std::string previous = previous_checkpoint_path(final_);
    std::error_code ec;
    if (s && fs::exists(final_, ec)) {
      const fs::path dir = directory_of(final_);
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

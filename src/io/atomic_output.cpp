// Temporary-name-then-rename output files (io/atomic_output.hpp).
#include "io/atomic_output.hpp"

#include <fcntl.h>
#include <sys/resource.h>
#include <fmt/format.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <filesystem>
#include <random>

#include "support/collective.hpp"
#include "support/format.hpp"

namespace fs = std::filesystem;

namespace lodestone::io {

bool same_file(const std::string& a, const std::string& b) {
  std::error_code ec;
  if (fs::exists(a, ec) && fs::exists(b, ec)) return fs::equivalent(a, b, ec);
  return fs::weakly_canonical(a, ec) == fs::weakly_canonical(b, ec);
}

std::string directory_of(const std::string& path) {
  fs::path p(path);
  return p.has_parent_path() ? p.parent_path().string() : std::string(".");
}

Status fsync_file(const std::string& path, bool drop_cached) {
  int fd = ::open(path.c_str(), O_RDONLY);
  if (fd < 0) return Status::input(fmt::format("{}: cannot open for sync: {}", path, std::strerror(errno)));
  int rc = ::fsync(fd);
  int err = errno;
  if (rc == 0 && drop_cached) ::posix_fadvise(fd, 0, 0, POSIX_FADV_DONTNEED);  // a hint: its failure changes nothing
  ::close(fd);
  if (rc != 0) return Status::input(fmt::format("{}: fsync failed: {}", path, std::strerror(err)));
  return Status::ok();
}

void fsync_directory(const std::string& dir) {
  int fd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY);
  if (fd < 0) return;
  ::fsync(fd);
  ::close(fd);
}

void remove_on_rank0(MPI_Comm comm, const std::string& path) {
  int finalized = 0, rank = 0;
  MPI_Finalized(&finalized);
  if (!finalized) MPI_Comm_rank(comm, &rank);
  if (rank == 0) {
    std::error_code ec;
    fs::remove(path, ec);
  }
}

Status check_size_limit(MPI_Comm comm, const std::string& path, double bytes, const char* what) {
  Status s;
  rlimit rl{};
  // HDF5 adds its own metadata; 64 KiB is generous for the few objects we write.
  const double needed = bytes + 65536.0;
  if (::getrlimit(RLIMIT_FSIZE, &rl) == 0 && rl.rlim_cur != RLIM_INFINITY && needed > static_cast<double>(rl.rlim_cur))
    s = Status::input(fmt::format("{}: the {} needs about {}, more than the file-size limit of {} (ulimit -f) on rank {}; "
                                  "raise the limit or reduce the output",
                                  path, what, human_bytes(needed), human_bytes(static_cast<double>(rl.rlim_cur)),
                                  comm_rank(comm)));
  return agree(comm, s);
}

Result<std::string> reserve_temporary(MPI_Comm comm, const std::string& final_path,
                                      const std::vector<std::string>& inputs, const char* what,
                                      const std::function<Status()>& prepare) {
  Status s;
  std::string temp;
  if (comm_rank(comm) == 0) {
    const fs::path p(final_path), dir(directory_of(final_path));
    std::error_code ec;
    for (const auto& in : inputs)
      if (s && same_file(in, final_path))
        s = Status::input(fmt::format("{}: the {} would overwrite an input; choose another name", final_path, what));
    if (s && (p.filename().empty() || fs::is_directory(p, ec)))
      s = Status::input(fmt::format("{}: {} path is a directory", final_path, what));
    if (s && !fs::is_directory(dir, ec))
      s = Status::input(fmt::format("{}: directory '{}' does not exist", final_path, dir.string()));
    if (s && ::access(dir.c_str(), W_OK) != 0)
      s = Status::input(fmt::format("{}: directory '{}' is not writable", final_path, dir.string()));
    if (s && prepare) s = prepare();
    if (s) {
      std::random_device rd;
      temp = (dir / fmt::format(".{}.partial-{}-{:08x}", p.filename().string(), ::getpid(), rd())).string();
    }
  }
  LODESTONE_TRY(agree(comm, s));
  int len = static_cast<int>(temp.size());
  MPI_Bcast(&len, 1, MPI_INT, 0, comm);
  temp.resize(static_cast<std::size_t>(len));
  MPI_Bcast(temp.data(), len, MPI_CHAR, 0, comm);
  return temp;
}

Result<AtomicOutput> AtomicOutput::begin(MPI_Comm comm, const std::string& final_path,
                                         const std::vector<std::string>& inputs) {
  auto temp = reserve_temporary(comm, final_path, inputs, "output");
  if (!temp) return temp.status();
  return AtomicOutput(comm, final_path, *temp);
}

AtomicOutput::AtomicOutput(AtomicOutput&& o) noexcept
    : comm_(o.comm_), final_(std::move(o.final_)), temp_(std::move(o.temp_)), done_(o.done_) {
  o.done_ = true;
}

AtomicOutput::~AtomicOutput() {
  if (!done_ && comm_ != MPI_COMM_NULL) remove_on_rank0(comm_, temp_);
}

Status AtomicOutput::commit() {
  MPI_Barrier(comm_);
  Status s;
  if (comm_rank(comm_) == 0) {
    s = fsync_file(temp_);
    if (s && std::rename(temp_.c_str(), final_.c_str()) != 0)
      s = Status::input(fmt::format("{}: cannot rename the finished file into place: {}", final_, std::strerror(errno)));
    if (s) fsync_directory(directory_of(final_));
  }
  s = agree(comm_, s);
  done_ = s.is_ok();
  return s;
}

}  // namespace lodestone::io

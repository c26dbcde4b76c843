// job_paths: refuses a job whose files would overwrite each other: the matrix, the
// results, the checkpoint and its FILE.previous, and the script must be five files.
#include <fmt/format.h>

#include <filesystem>
#include <utility>
#include <vector>

#include "io/atomic_output.hpp"
#include "lodestone/plan.hpp"

namespace lodestone {

Status check_job_paths(const std::string& matrix, const JobOptions& o) {
  namespace fs = std::filesystem;
  // Named as the user knows them; the same file however written (./a.h5, a link).
  std::vector<std::pair<std::string, std::string>> files = {
      {"the matrix", matrix},
      {"the results file (--result)", o.result_path},
      {"the checkpoint (--checkpoint)", o.checkpoint_path},
      {"the checkpoint's previous copy", o.checkpoint_path + ".previous"},
  };
  if (!o.script_path.empty()) files.push_back({"the script (--out)", o.script_path});
  auto absolute = [](const std::string& p) {
    std::error_code ec;
    const fs::path a = fs::absolute(p, ec);
    return ec ? p : a.string();
  };
  for (std::size_t i = 0; i < files.size(); ++i)
    for (std::size_t j = i + 1; j < files.size(); ++j)
      if (io::same_file(absolute(files[i].second), absolute(files[j].second)))
        return Status::usage(fmt::format(
            "{} '{}' is the same file as {} '{}'; the job would overwrite one with the other: give each its own name",
            files[j].first, files[j].second, files[i].first, files[i].second));
  return Status::ok();
}

}  // namespace lodestone

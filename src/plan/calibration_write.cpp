// write_calibration: the calibration file, written atomically by rank 0 (lodestone/calibration.hpp).
#include <fmt/format.h>

#include <cstdio>

#include "io/atomic_output.hpp"
#include "lodestone/calibration.hpp"
#include "support/collective.hpp"

namespace lodestone {

Status write_calibration(MPI_Comm comm, const std::string& path, const Calibration& calibration,
                         const std::vector<std::string>& inputs) {
  const std::string text = calibration_json(calibration);
  auto out = io::AtomicOutput::begin(comm, path, inputs);
  if (!out) return out.status();
  Status s;
  if (comm_rank(comm) == 0) {
    std::FILE* f = std::fopen(out->temp_path().c_str(), "wb");
    if (!f) {
      s = Status::input(fmt::format("{}: cannot write", path));
    } else {
      const bool wrote = std::fwrite(text.data(), 1, text.size(), f) == text.size();
      const bool closed = std::fclose(f) == 0;
      if (!wrote || !closed) s = Status::input(fmt::format("{}: could not finish writing (disk full?)", path));
    }
  }
  LODESTONE_TRY(agree(comm, s));
  return out->commit();
}

}  // namespace lodestone

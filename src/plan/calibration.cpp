// Calibration file parsing (plan/calibration.hpp).
#include "plan/calibration.hpp"

#include <fmt/format.h>

#include <cmath>
#include <nlohmann/json.hpp>

namespace lodestone::plan {

Status apply_calibration(const std::string& path, const std::string& text, MachineModel& model) {
  nlohmann::json j = nlohmann::json::parse(text, nullptr, false);
  if (j.is_discarded() || !j.is_object()) return Status::input(fmt::format("{}: not a JSON object", path));
  if (!j.contains("format") || !j["format"].is_string() || j["format"].get<std::string>() != "lodestone-calibration")
    return Status::input(fmt::format("{}: not a calibration file (\"format\" must be \"lodestone-calibration\")", path));
  if (!j.contains("version") || !j["version"].is_number_integer() || j["version"].get<long>() != 1)
    return Status::input(fmt::format("{}: unsupported calibration version (this lodestone reads version 1)", path));
  Status s;
  auto number = [&](const char* key, double* out) {
    if (!s || !j.contains(key)) return;
    const auto& v = j[key];
    if (!v.is_number() || !std::isfinite(v.get<double>()) || v.get<double>() <= 0)
      s = Status::input(fmt::format("{}: \"{}\" must be a positive number", path, key));
    else *out = v.get<double>();
  };
  MachineModel m = model;
  number("seconds_per_nonzero", &m.seconds_per_nonzero);
  number("reduction_latency_seconds", &m.reduction_latency);
  number("checkpoint_bytes_per_second", &m.checkpoint_bandwidth);
  number("read_bytes_per_second", &m.read_bandwidth);
  number("dense_flops_per_second", &m.flop_rate);
  if (s && j.contains("method")) {
    if (!j["method"].is_string()) s = Status::input(fmt::format("{}: \"method\" must be a string", path));
    else m.calibrated_method = j["method"].get<std::string>();
  }
  if (s && j.contains("matvecs_per_pair")) {
    const auto& r = j["matvecs_per_pair"];
    if (!r.is_array() || r.size() != 2 || !r[0].is_number() || !r[1].is_number() || r[0].get<double>() <= 0 ||
        r[1].get<double>() < r[0].get<double>())
      s = Status::input(fmt::format("{}: \"matvecs_per_pair\" must be [low, high] with 0 < low <= high", path));
    else {
      m.matvecs_per_pair_low = r[0].get<double>();
      m.matvecs_per_pair_high = r[1].get<double>();
      m.convergence_source = fmt::format("calibration {}", path);
    }
  }
  if (!s) return s;
  if (j.contains("seconds_per_nonzero") || j.contains("reduction_latency_seconds") ||
      j.contains("checkpoint_bytes_per_second") || j.contains("read_bytes_per_second") ||
      j.contains("dense_flops_per_second"))
    m.speed_source = fmt::format("calibration {} (other figures: defaults)", path);
  model = m;
  return Status::ok();
}

}  // namespace lodestone::plan

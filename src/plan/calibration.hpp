// Reading a calibration file (JSON) into the planner's machine model.
//
// `lodestone calibrate` measures these on the target machine (plan/calibrate.cpp);
// a user may also write one by hand. Format, all speeds per rank unless said:
//   { "format": "lodestone-calibration", "version": 1,
//     "seconds_per_nonzero": 1.1e-9,          // one single-vector product, per stored nonzero
//     "reduction_latency_seconds": 8e-6,      // per log2(p) stage of a global sum
//     "checkpoint_bytes_per_second": 4e8,     // whole job, writing a checkpoint
//     "read_bytes_per_second": 8e8,           // whole job, loading the matrix
//     "dense_flops_per_second": 2e9,          // dense work (orthonormalization, small problems)
//     "matvecs_per_pair": [80, 240],          // observed convergence, low and high
//     "method": "block" }                     // the method the convergence was observed with
// Other keys (e.g. "measured", what calibrate ran) are ignored.
// Every key but format and version is optional; present keys must be positive numbers.
#pragma once

#include <string>

#include "lodestone/status.hpp"
#include "plan/model.hpp"

namespace lodestone::plan {

// Applies the file at `path` to `model` (its text is given, already read).
Status apply_calibration(const std::string& path, const std::string& text, MachineModel& model);

}  // namespace lodestone::plan

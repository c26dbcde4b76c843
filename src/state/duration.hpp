// Durations on the command line: "90s", "10m", "1h30m", "2d", "1.5h",
// "HH:MM:SS" and "D-HH:MM:SS" (the batch systems' walltime form).
#pragma once

#include <string>

#include "lodestone/status.hpp"

namespace lodestone::state {

// Seconds, > 0. A usage error names the text and the accepted forms.
Result<double> parse_duration(const std::string& text, const std::string& option = "duration");

}  // namespace lodestone::state

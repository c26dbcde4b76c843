// Reading and writing the quantities a person types for a job: sizes such as
// `64G` or `512M` and durations such as `HH:MM:SS`, `90s` or `10m`.
//
// Parsers return a usage Status naming the option and the accepted forms, so
// a typo ends as one clear message and exit status 2, never a guess.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

#include "lodestone/status.hpp"

namespace lodestone::plan {

// Bytes from "123", "512K", "512M", "64G", "2T" (binary units, 1K = 1024;
// an optional trailing "B" or "iB" is accepted: "64GB", "64GiB").
// Fractions are allowed with a unit ("1.5G"). `option` names the option in messages.
Result<std::int64_t> parse_size(std::string_view text, std::string_view option);

// Seconds from "HH:MM:SS", "MM:SS", "D-HH:MM:SS", or a number with a unit:
// "90s", "10m", "2h", "1d" (a bare number is refused: the unit must be said).
Result<std::int64_t> parse_duration(std::string_view text, std::string_view option);

// "HH:MM:SS" (hours may exceed 24), for PBS walltime and for people.
std::string format_hms(std::int64_t seconds);
// Slurm's time format: "HH:MM:SS" below a day, "D-HH:MM:SS" from a day on.
std::string format_slurm_time(std::int64_t seconds);

}  // namespace lodestone::plan

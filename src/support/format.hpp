// Formatting helpers for people: byte counts, durations and timestamps.
#pragma once

#include <string>

namespace lodestone {

std::string human_bytes(double bytes);
std::string human_seconds(double seconds);
// The current time in UTC as ISO 8601, e.g. 2026-12-02T06:41:09Z.
std::string utc_now();

}  // namespace lodestone

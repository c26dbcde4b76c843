// Formatting helpers for people: byte counts and durations.
#pragma once

#include <string>

namespace lodestone {

std::string human_bytes(double bytes);
std::string human_seconds(double seconds);

}  // namespace lodestone

// Size and duration parsing and formatting for the planner (plan/units.hpp).
#include "plan/units.hpp"

#include <fmt/format.h>

#include <cctype>
#include <cmath>
#include <limits>

namespace lodestone::plan {
namespace {

Status bad(std::string_view option, std::string_view text, std::string_view forms) {
  return Status::usage(fmt::format("{} '{}': {}", option, text, forms));
}

// A non-negative decimal number at the start of `s`; returns characters used (0 if none).
std::size_t leading_number(std::string_view s, double* value, bool* fraction) {
  std::size_t i = 0;
  double v = 0;
  bool digits = false;
  while (i < s.size() && std::isdigit(static_cast<unsigned char>(s[i]))) {
    v = v * 10 + (s[i] - '0');
    digits = true;
    ++i;
  }
  *fraction = false;
  if (i < s.size() && s[i] == '.') {
    double scale = 0.1;
    std::size_t j = i + 1;
    bool frac_digits = false;
    while (j < s.size() && std::isdigit(static_cast<unsigned char>(s[j]))) {
      v += (s[j] - '0') * scale;
      scale /= 10;
      frac_digits = true;
      ++j;
    }
    if (!frac_digits) return digits ? i : 0;
    *fraction = true;
    i = j;
    digits = true;
  }
  *value = v;
  return digits ? i : 0;
}

// Non-negative integer made only of digits, or -1.
std::int64_t all_digits(std::string_view s) {
  if (s.empty() || s.size() > 12) return -1;
  std::int64_t v = 0;
  for (char c : s) {
    if (!std::isdigit(static_cast<unsigned char>(c))) return -1;
    v = v * 10 + (c - '0');
  }
  return v;
}

}  // namespace

Result<std::int64_t> parse_size(std::string_view text, std::string_view option) {
  constexpr std::string_view forms = "expected a size such as 512M, 64G or 1.5T (K, M, G, T are powers of 1024)";
  double v = 0;
  bool fraction = false;
  const std::size_t used = leading_number(text, &v, &fraction);
  if (used == 0) return bad(option, text, forms);
  std::string unit(text.substr(used));
  for (auto& c : unit) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  if (unit.size() == 3 && unit.substr(1) == "IB") unit = unit.substr(0, 1);
  else if (unit.size() == 2 && unit[1] == 'B') unit = unit.substr(0, 1);
  double scale = 0;
  if (unit.empty() || unit == "B") scale = 1;
  else if (unit == "K") scale = 1024.0;
  else if (unit == "M") scale = 1024.0 * 1024;
  else if (unit == "G") scale = 1024.0 * 1024 * 1024;
  else if (unit == "T") scale = 1024.0 * 1024 * 1024 * 1024;
  else return bad(option, text, forms);
  if (fraction && scale == 1) return bad(option, text, "a number of bytes must be whole");
  const double bytes = std::round(v * scale);
  if (bytes <= 0) return bad(option, text, "must be more than zero");
  if (bytes > 0x1.0p62) return bad(option, text, "is too large");
  return static_cast<std::int64_t>(bytes);
}

Result<std::int64_t> parse_duration(std::string_view text, std::string_view option) {
  constexpr std::string_view forms =
      "expected a duration such as 02:30:00 (HH:MM:SS), 45:00 (MM:SS), 1-12:00:00 (D-HH:MM:SS), 90s, 10m, 2h or 1d";
  if (text.empty()) return bad(option, text, forms);
  std::int64_t total = 0;
  if (text.find(':') != std::string_view::npos) {
    std::int64_t days = 0;
    std::string_view rest = text;
    if (auto dash = text.find('-'); dash != std::string_view::npos) {
      days = all_digits(text.substr(0, dash));
      if (days < 0) return bad(option, text, forms);
      rest = text.substr(dash + 1);
    }
    std::int64_t parts[3] = {0, 0, 0};
    int count = 0;
    while (true) {
      auto colon = rest.find(':');
      std::string_view field = rest.substr(0, colon);
      if (count == 3) return bad(option, text, forms);
      parts[count] = all_digits(field);
      if (parts[count] < 0 || field.size() > 9) return bad(option, text, forms);
      ++count;
      if (colon == std::string_view::npos) break;
      rest = rest.substr(colon + 1);
    }
    std::int64_t h = 0, m = 0, s = 0;
    if (count == 3) h = parts[0], m = parts[1], s = parts[2];
    else if (count == 2 && days == 0) m = parts[0], s = parts[1];
    else return bad(option, text, forms);
    if (m > 59 || s > 59 || (count == 2 && m > 59))
      return bad(option, text, "minutes and seconds must be below 60");
    if (count == 3 && days > 0 && h > 23) return bad(option, text, "hours must be below 24 after a day count");
    total = ((days * 24 + h) * 60 + m) * 60 + s;
  } else {
    double v = 0;
    bool fraction = false;
    const std::size_t used = leading_number(text, &v, &fraction);
    if (used == 0) return bad(option, text, forms);
    std::string_view unit = text.substr(used);
    double scale = 0;
    if (unit == "s") scale = 1;
    else if (unit == "m" || unit == "min") scale = 60;
    else if (unit == "h") scale = 3600;
    else if (unit == "d") scale = 86400;
    else if (unit.empty()) return bad(option, text, "say the unit: 90s, 10m, 2h, 1d, or write HH:MM:SS");
    else return bad(option, text, forms);
    if (v * scale > 1e9) return bad(option, text, "is too long");
    total = static_cast<std::int64_t>(std::llround(v * scale));
  }
  if (total <= 0) return bad(option, text, "must be longer than zero");
  if (total > 1'000'000'000) return bad(option, text, "is too long");
  return total;
}

std::string format_hms(std::int64_t seconds) {
  if (seconds < 0) seconds = 0;
  return fmt::format("{:02d}:{:02d}:{:02d}", seconds / 3600, (seconds / 60) % 60, seconds % 60);
}

std::string format_slurm_time(std::int64_t seconds) {
  if (seconds < 0) seconds = 0;
  if (seconds < 86400) return format_hms(seconds);
  return fmt::format("{}-{:02d}:{:02d}:{:02d}", seconds / 86400, (seconds / 3600) % 24, (seconds / 60) % 60,
                     seconds % 60);
}

}  // namespace lodestone::plan

// Parsing durations given on the command line (state/duration.hpp).
#include "state/duration.hpp"

#include <fmt/format.h>

#include <cctype>
#include <cmath>
#include <cstdlib>
#include <string_view>

namespace lodestone::state {

namespace {

Status bad(const std::string& option, const std::string& text, const std::string& why) {
  return Status::usage(fmt::format("{} '{}': {}; write it like 90s, 10m, 1h30m, 2d or HH:MM:SS", option, text, why));
}

// The digits (and at most one point) already checked; never throws: a number too
// large for a double reads as infinity, one too small as zero (parse_duration refuses both).
double to_number(const std::string& digits) { return std::strtod(digits.c_str(), nullptr); }

// "1h30m", "90s", "1.5h": numbers each followed by a unit, units in order d h m s.
Result<double> parse_units(const std::string& text, const std::string& option) {
  const std::string_view units = "dhms";
  const double scale[] = {86400, 3600, 60, 1};
  double total = 0;
  std::size_t i = 0, last_unit = std::string_view::npos;
  while (i < text.size()) {
    std::size_t start = i;
    bool dot = false;
    while (i < text.size() && (std::isdigit(static_cast<unsigned char>(text[i])) || (text[i] == '.' && !dot))) {
      dot = dot || text[i] == '.';
      ++i;
    }
    if (i == start || (i - start == 1 && dot)) return bad(option, text, "expected a number");
    const double value = to_number(text.substr(start, i - start));
    if (i == text.size()) return bad(option, text, "a number needs a unit (d, h, m or s)");
    const std::size_t u = units.find(static_cast<char>(std::tolower(static_cast<unsigned char>(text[i]))));
    if (u == std::string_view::npos) return bad(option, text, fmt::format("unknown unit '{}'", text[i]));
    if (last_unit != std::string_view::npos && u <= last_unit)
      return bad(option, text, "units must come once each, largest first");
    last_unit = u;
    total += value * scale[u];
    ++i;
  }
  return total;
}

// "HH:MM:SS" or "D-HH:MM:SS".
Result<double> parse_clock(const std::string& text, const std::string& option) {
  std::string rest = text;
  double days = 0;
  if (auto dash = rest.find('-'); dash != std::string::npos) {
    const std::string d = rest.substr(0, dash);
    if (d.empty() || d.find_first_not_of("0123456789") != std::string::npos) return bad(option, text, "bad day count");
    days = to_number(d);
    rest = rest.substr(dash + 1);
  }
  double parts[3];
  std::size_t pos = 0;
  for (int k = 0; k < 3; ++k) {
    std::size_t end = rest.find(':', pos);
    if ((k < 2) != (end != std::string::npos)) return bad(option, text, "expected HH:MM:SS");
    const std::string field = rest.substr(pos, end == std::string::npos ? std::string::npos : end - pos);
    if (field.empty() || field.size() > 2 + (k == 0 ? 8 : 0) || field.find_first_not_of("0123456789") != std::string::npos)
      return bad(option, text, "expected HH:MM:SS");
    parts[k] = to_number(field);
    pos = end + 1;
  }
  if (parts[1] >= 60 || parts[2] >= 60) return bad(option, text, "minutes and seconds must be below 60");
  return days * 86400 + parts[0] * 3600 + parts[1] * 60 + parts[2];
}

}  // namespace

Result<double> parse_duration(const std::string& text, const std::string& option) {
  if (text.empty()) return bad(option, text, "empty");
  Result<double> r = text.find(':') != std::string::npos ? parse_clock(text, option) : parse_units(text, option);
  if (!r) return r;
  if (!std::isfinite(*r)) return bad(option, text, "too long");
  if (!(*r > 0)) return bad(option, text, "must be longer than zero");
  return r;
}

}  // namespace lodestone::state

// Byte counts, durations and timestamps in forms a person reads at a glance.
#include "support/format.hpp"

#include <fmt/format.h>

#include <ctime>

namespace lodestone {

std::string human_bytes(double bytes) {
  const char* units[] = {"B", "KiB", "MiB", "GiB", "TiB", "PiB"};
  int u = 0;
  while (bytes >= 1024.0 && u < 5) {
    bytes /= 1024.0;
    ++u;
  }
  return u == 0 ? fmt::format("{:.0f} {}", bytes, units[u]) : fmt::format("{:.1f} {}", bytes, units[u]);
}

std::string human_seconds(double s) {
  if (s < 60) return fmt::format("{:.1f} s", s);
  if (s < 3600) {
    const int m = static_cast<int>(s / 60);
    return fmt::format("{} min {:02d} s", m, static_cast<int>(s - 60 * m));
  }
  const int h = static_cast<int>(s / 3600);
  const int m = static_cast<int>((s - 3600 * h) / 60);
  return fmt::format("{} h {:02d} min", h, m);
}

std::string utc_now() {
  std::time_t t = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf;
}

}  // namespace lodestone

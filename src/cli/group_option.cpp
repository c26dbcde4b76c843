// The check on --group, shared by every command that names an HDF5 group: an
// absolute path of plain names, so a group one command writes is one the others read.
#include <fmt/format.h>

#include <string>

#include "cli/command.hpp"

namespace lodestone::cli {

CLI::Validator group_path() {
  return CLI::Validator(
      [](std::string& g) -> std::string {
        if (g == "/") return {};
        if (g.empty() || g[0] != '/') return fmt::format("'{}': a group path starts with '/', e.g. /matrix", g);
        for (std::size_t pos = 1;;) {
          const std::size_t next = g.find('/', pos);
          const std::string part = g.substr(pos, next == std::string::npos ? std::string::npos : next - pos);
          if (part.empty() || part == "." || part == "..")
            return fmt::format("'{}': each part between slashes must be a name (not empty, '.' or '..')", g);
          if (next == std::string::npos) return {};
          pos = next + 1;
        }
      },
      "");
}

}  // namespace lodestone::cli

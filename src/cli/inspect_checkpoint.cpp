// Summary of a checkpoint for `lodestone inspect` (cli/inspect_checkpoint.hpp).
#include "cli/inspect_checkpoint.hpp"

#include <fmt/format.h>

#include <cmath>
#include <filesystem>

#include "cli/command.hpp"
#include "lodestone/checkpoint.hpp"
#include "support/format.hpp"

namespace lodestone::cli {

Status inspect_checkpoint(MPI_Comm comm, const std::string& path) {
  CheckpointReadOptions o;
  o.read_blocks = false;
  o.allow_previous = false;
  auto c = read_checkpoint(comm, path, 0, 0, o);
  if (!c) return c.status();
  std::string out = fmt::format("checkpoint  {} (format version {})\n", path, c->format_version);
  out += fmt::format("written     {} by {} rank(s)\n", c->written_at, c->written_by_ranks);
  out += fmt::format("matrix      fingerprint {:016x}, {} x {}\n", c->identity.matrix_fingerprint, c->identity.rows,
                     c->identity.rows);
  std::string opts;
  for (const auto& [k, v] : c->identity.options) opts += fmt::format("{}{}={}", opts.empty() ? "" : "  ", k, v);
  out += fmt::format("options     {}\n", opts.empty() ? "(none)" : opts);
  out += fmt::format("method      {}\n", c->state.method);
  const std::string wanted = c->identity.options.count("pairs") ? c->identity.options.at("pairs") : "?";
  out += fmt::format("converged   {} of {} pairs\n", c->converged, wanted);
  out += fmt::format("done        {} iterations, {} matvecs, {} of solving\n", c->iterations, c->matvecs,
                     human_seconds(c->elapsed_seconds));
  if (!c->history.empty()) {
    const HistoryRecord& h = c->history.back();
    std::string res;
    for (std::size_t j = 0; j < h.residuals.size(); ++j)
      res += std::isnan(h.residuals[j]) ? fmt::format("{}{}", res.empty() ? "" : "  ", "-")
                                        : fmt::format("{}{:.2e}", res.empty() ? "" : "  ", h.residuals[j]);
    out += fmt::format("residuals   {} (iteration {}; '-' locked or not started)\n", res, h.iteration);
  }
  double bytes = 0;
  std::string blocks;
  for (const auto& [name, b] : c->state.blocks) {
    blocks += fmt::format("{}{} ({} columns)", blocks.empty() ? "" : ", ", name, b.columns);
    bytes += 8.0 * static_cast<double>(b.columns) * static_cast<double>(c->state.rows);
  }
  out += fmt::format("vectors     {}: {}\n", blocks.empty() ? "(none)" : blocks, human_bytes(bytes));
  std::error_code ec;
  const auto size = std::filesystem::file_size(path, ec);
  if (!ec) out += fmt::format("file size   {}\n", human_bytes(static_cast<double>(size)));
  print_once(comm, out);
  return Status::ok();
}

}  // namespace lodestone::cli

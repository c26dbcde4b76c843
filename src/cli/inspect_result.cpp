// `lodestone inspect RESULT.h5`: the pairs table and the run facts of a results file.
#include "cli/inspect_result.hpp"

#include <fmt/format.h>

#include <cmath>

#include "cli/command.hpp"
#include "io/result_file.hpp"
#include "support/format.hpp"

namespace lodestone::cli {

Status inspect_result(MPI_Comm comm, const std::string& path) {
  auto h = io::read_result_header(comm, path);
  if (!h) return h.status();
  const double limit = h->tolerance * h->norm_estimate;
  std::string text = fmt::format(
      "result      {} (results file, format {})\n"
      "pairs       {} returned, {} converged{}\n"
      "method      {}, selection {}\n"
      "tolerance   {:.3g} x norm estimate {:.6g} = residual limit {:.3e}\n"
      "work        {} matvecs, {} iterations, {} ranks, {}\n"
      "matrix      {} rows, fingerprint {}\n"
      "history     {} records\n\n",
      path, io::result_layout::kFormatVersion, h->pairs, h->converged,
      h->converged < h->pairs ? " (the run stopped before the rest converged)" : "", h->method, h->selection,
      h->tolerance, h->norm_estimate, limit, h->matvecs, h->iterations, h->ranks, human_seconds(h->elapsed_seconds),
      h->rows, io::fingerprint_text(h->matrix_fingerprint), h->history);
  text += fmt::format("{:>5}  {:>24}  {:>14}  {:>10}  {:>12}  {}\n", "pair", "eigenvalue", "imaginary", "residual",
                      "res / limit", "status");
  for (std::int64_t j = 0; j < h->pairs; ++j) {
    const auto i = static_cast<std::size_t>(j);
    const double ratio = limit > 0 ? h->residual_norms[i] / limit : NAN;
    text += fmt::format("{:>5}  {:>24.15g}  {:>14.6g}  {:>10.3e}  {:>12.3g}  {}\n", j + 1, h->eigenvalues[i],
                        h->eigenvalues_imag[i], h->residual_norms[i], ratio,
                        j < h->converged ? "converged" : "not converged");
  }
  text += fmt::format("\nCheck it independently: lodestone verify MATRIX.h5 {}\n", path);
  print_once(comm, text);
  return Status::ok();
}

}  // namespace lodestone::cli

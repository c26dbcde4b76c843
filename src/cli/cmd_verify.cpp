// `lodestone verify MATRIX.h5 RESULT.h5`: the independent check of a results file.
// Loads both, lets lodestone::verify_result recompute everything, prints the table once.
#include <fmt/format.h>

#include "cli/command.hpp"
#include "io/result_file.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/result.hpp"
#include "lodestone/verify.hpp"

namespace lodestone::cli {

static std::string eigenvalue_text(double re, double im) {
  if (im == 0.0) return fmt::format("{:.15g}", re);
  return fmt::format("{:.15g} {} {:.6g}i", re, im < 0 ? '-' : '+', std::abs(im));
}

static std::string table(const VerifyReport& rep) {
  std::string out = fmt::format("{:>5}  {:<32}  {:>10}  {:>10}  {:>10}  {:>10}  {}\n", "pair", "eigenvalue",
                                "stored res", "recomputed", "norm error", rep.symmetric ? "max |v.vj|" : "", "verdict");
  for (std::size_t j = 0; j < rep.pairs.size(); ++j) {
    const auto& p = rep.pairs[j];
    out += fmt::format("{:>5}  {:<32}  {:>10.3e}  {:>10.3e}  {:>10.3e}  {:>10}  {}\n", j + 1,
                       eigenvalue_text(p.eigenvalue, p.eigenvalue_imag), p.stored_residual, p.residual, p.norm_error,
                       rep.symmetric && (p.passed || p.verdict == "not orthogonal") ? fmt::format("{:.3e}", p.orthogonality) : "", p.verdict);
  }
  return out;
}

Command make_verify_command(CLI::App& root) {
  struct Args {
    std::string matrix;
    std::string result;
    std::string group = "/matrix";
  };
  auto args = std::make_shared<Args>();
  CLI::App* app = root.add_subcommand("verify", "Check a results file against its matrix, independently of the solver");
  app->add_option("matrix", args->matrix, "matrix file the result was computed from")->required();
  app->add_option("result", args->result, "results file written by 'lodestone solve'")->required();
  app->add_option("--group", args->group, "HDF5 group of the matrix")->check(group_path())->capture_default_str();
  app->footer(
      "Recomputes ||A v - lambda v||_2 for every pair with fresh matrix products, checks each vector has unit\n"
      "2-norm and, for a symmetric matrix, that the vectors are mutually orthogonal, and that the result's\n"
      "matrix fingerprint matches. Exit status 0 only if every pair the result calls converged has\n"
      "  residual <= tolerance * norm_estimate * 1.01 + 100 * sqrt(n) * eps * norm_estimate   (roundoff slack)\n"
      "  | ||v|| - 1 | and |v_i . v_j| <= max(1e-8, 100 * sqrt(n) * eps)\n"
      "and 1 otherwise.\n\n"
      "Examples:\n"
      "  lodestone verify plate.h5 plate-modes.h5\n"
      "  mpirun -n 4 lodestone verify --group /stiffness bridge.h5 modes.h5");
  return {app, [args](MPI_Comm comm) -> Status {
            LoadOptions o;
            o.group = args->group;
            auto m = Matrix::load(comm, args->matrix, o);
            if (!m) return m.status();
            // Cheap first look: a result for another matrix is refused before its vectors are read.
            auto header = io::read_result_header(comm, args->result);
            if (!header) return header.status();
            if (header->matrix_fingerprint != m->info().fingerprint || header->rows != m->info().rows)
              return Status::input(fmt::format(
                  "{} was not computed from {}: it records matrix fingerprint {} ({} rows), the matrix has {} ({} rows)",
                  args->result, args->matrix, io::fingerprint_text(header->matrix_fingerprint), header->rows,
                  io::fingerprint_text(m->info().fingerprint), m->info().rows));
            auto r = read_result(comm, args->result, m->info().row_begin, m->info().row_end);
            if (!r) return r.status();
            auto rep = verify_result(*m, *r);
            if (!rep) return rep.status();
            std::string text = fmt::format(
                "result      {}\nmatrix      {} (group {}), {} rows, {}\nfingerprint {} (matches)\n"
                "limit       residual <= {:.3e} (tolerance {:.3g} x norm estimate {:.6g}, with roundoff slack)\n\n",
                args->result, args->matrix, args->group, m->info().rows,
                rep->symmetric ? "symmetric" : "not symmetric", io::fingerprint_text(m->info().fingerprint),
                rep->residual_limit, r->tolerance, r->norm_estimate);
            text += table(*rep);
            const std::int64_t k = r->pairs();
            if (rep->checked < k)
              text += fmt::format("\nthe run converged {} of {} pairs; pairs {} to {} are shown but not checked\n",
                                  rep->checked, k, rep->checked + 1, k);
            if (rep->ok())
              text += fmt::format("\nverified: all {} converged pair{} meet the tolerance\n", rep->checked,
                                  rep->checked == 1 ? "" : "s");
            print_once(comm, text);
            if (!rep->ok())
              return Status::input(fmt::format("verify failed: {} of {} converged pairs fail; first, {}", rep->failed,
                                               rep->checked, rep->first_failure));
            return Status::ok();
          }};
}

}  // namespace lodestone::cli

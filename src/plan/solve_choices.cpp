// The solve options a plan passes on to its script (solve_choices.hpp).
#include "plan/solve_choices.hpp"

#include <fmt/format.h>

namespace lodestone::plan {

std::vector<std::string> passed_solve_options(const Plan& p) {
  std::vector<std::string> w;
  // One word each, --name=value, so a negative shift is not taken for an option;
  // fmt's shortest form reads back to the same double.
  auto add = [&](const char* name, const std::string& value) { w.push_back(fmt::format("{}={}", name, value)); };
  if (p.block_given > 0) add("--block-size", fmt::format("{}", p.block_given));
  if (!p.solve.selection.empty()) add("--select", p.solve.selection);
  if (p.solve.tolerance > 0) add("--tol", fmt::format("{}", p.solve.tolerance));
  if (p.solve.has_seed) add("--seed", fmt::format("{}", p.solve.seed));
  if (p.solve.has_shift) add("--shift", fmt::format("{}", p.solve.shift));
  return w;
}

}  // namespace lodestone::plan

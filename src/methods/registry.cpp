// The table of methods by name (see method.hpp).
#include "methods/method.hpp"

#include <fmt/format.h>

namespace lodestone::methods {

const char* selection_name(Selection s) {
  switch (s) {
    case Selection::largest: return "largest";
    case Selection::smallest: return "smallest";
    default: return "magnitude";
  }
}

Result<Selection> parse_selection(std::string_view s) {
  if (s == "magnitude") return Selection::magnitude;
  if (s == "largest") return Selection::largest;
  if (s == "smallest") return Selection::smallest;
  return Status::usage(fmt::format("--select '{}': expected magnitude, largest or smallest", s));
}

const std::vector<MethodInfo>& registry() {
  static const std::vector<MethodInfo> table = {
      {"power", "normalized power iteration, one vector, with restarted deflation", false, true, -1, false,
       &make_power},
      {"block", "block power (subspace) iteration with Rayleigh-Ritz and locking", false, true, 0, false,
       &make_block},
      // The filter damps the spectrum below the block's last Ritz value: that value must be
      // a guard's, not a wanted pair's, or the last wanted pair is never pulled clear.
      {"chebyshev", "Chebyshev-filtered block iteration (symmetric matrices)", true, false, 1, false,
       &make_chebyshev},
      {"krylov", "thick-restart Arnoldi (Krylov-Schur), one vector per product", false, true, 0, true,
       &make_krylov},
  };
  return table;
}

std::string method_names() {
  std::string out;
  const auto& all = registry();
  for (std::size_t i = 0; i < all.size(); ++i) {
    if (i > 0) out += i + 1 == all.size() ? " or " : ", ";
    out += all[i].name;
  }
  return out;
}

Status check_fit(const MethodInfo& m, const FitRequest& r) {
  if (r.selection == Selection::smallest && !r.symmetric)
    return Status::usage("--select smallest needs a symmetric matrix (this one is not declared symmetric)");
  if (m.symmetric_only && !r.symmetric)
    return Status::usage(fmt::format("--method {} needs a symmetric matrix; this one is not declared symmetric "
                                     "(use --method block)", m.name));
  if (r.selection == Selection::largest && !r.symmetric && !m.ranks_by_real_part)
    return Status::usage(fmt::format("--select largest on a matrix not declared symmetric needs --method krylov "
                                     "(or auto): {} ranks eigenvalues by |lambda + ||A|||, which can put a complex "
                                     "pair ahead of the largest real part", m.name));
  if (r.has_shift && !m.takes_shift)
    return Status::usage(fmt::format("--method {} does not take --shift; it chooses its own interval", m.name));
  if (r.block_size == 0 || m.block_beyond_pairs < 0) return Status::ok();
  if (r.block_size < r.pairs)
    return Status::usage(fmt::format("--block-size {} is smaller than --pairs {}", r.block_size, r.pairs));
  if (r.block_size < r.pairs + m.block_beyond_pairs)
    return Status::usage(fmt::format("--block-size {} leaves {} no guard vector beyond --pairs {}; give {} or more",
                                     r.block_size, m.name, r.pairs, r.pairs + m.block_beyond_pairs));
  return Status::ok();
}

const MethodInfo* find_method(std::string_view name) {
  for (const auto& m : registry())
    if (name == m.name) return &m;
  return nullptr;
}

}  // namespace lodestone::methods

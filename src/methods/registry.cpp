// The table of methods by name (see method.hpp).
#include "methods/method.hpp"

namespace lodestone::methods {

const char* selection_name(Selection s) {
  switch (s) {
    case Selection::largest: return "largest";
    case Selection::smallest: return "smallest";
    default: return "magnitude";
  }
}

const std::vector<MethodInfo>& registry() {
  static const std::vector<MethodInfo> table = {
      {"power", "normalized power iteration, one vector, with restarted deflation", false, &make_power},
      {"block", "block power (subspace) iteration with Rayleigh-Ritz and locking", false, &make_block},
      {"chebyshev", "Chebyshev-filtered block iteration (symmetric matrices)", true, &make_chebyshev},
      {"krylov", "thick-restart Arnoldi (Krylov-Schur), one vector per product", false, &make_krylov},
  };
  return table;
}

const MethodInfo* find_method(std::string_view name) {
  for (const auto& m : registry())
    if (name == m.name) return &m;
  return nullptr;
}

}  // namespace lodestone::methods

// When the power method stops on its own, and when it must not: two eigenvalues
// close in modulus but distinct are a slow hand-over it finishes; a tie (+-lambda)
// and a tolerance below the rounding level end the run with the converged pairs
// and a reason, never a loop without end and never an error that drops them.
#include <gtest/gtest.h>

#include <cmath>

#include "test_solver_matrices.hpp"

using namespace lodestone;

namespace {
// A symmetric matrix with eigenvalues `top` and `second` (closed form: the
// 2x2 rotation of diag(top, second) by 30 degrees, then a diagonal tail
// 1, 0.9, ... well below both).
test::RowRule rotated_pair(double top, double second) {
  const double c = std::cos(M_PI / 6), s = std::sin(M_PI / 6);
  return [=](std::int64_t i, test::Entries& e) {
    if (i == 0) e.push_back({0, c * c * top + s * s * second}), e.push_back({1, c * s * (top - second)});
    if (i == 1) e.push_back({0, c * s * (top - second)}), e.push_back({1, s * s * top + c * c * second});
    if (i >= 2) e.push_back({i, 1.0 - 0.01 * static_cast<double>(i - 2)});
  };
}
}  // namespace

// -10 and 9.99: moduli 0.1 % apart. One vector separates them at 0.999 an
// iteration, slowly but surely; the early plateau must not stop it.
TEST(MethodPowerStops, CloseModuliAreASlowHandOverNotAStall) {
  const std::int64_t n = 40;
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, rotated_pair(-10.0, 9.99));
  ASSERT_TRUE(m.is_ok());
  auto r = solve(*m, test::quiet_options(2, "power", "magnitude"));
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  EXPECT_TRUE(r->stall_reason.empty()) << r->stall_reason;
  ASSERT_EQ(r->converged, 2);
  EXPECT_NEAR(r->eigenvalues[0], -10.0, 1e-6);
  EXPECT_NEAR(r->eigenvalues[1], 9.99, 1e-6);
}

// -10 and +10 exactly: a tie one vector never breaks. The run stops with a reason
// naming both, and a shift that separates them (power's own remedy) finds both.
TEST(MethodPowerStops, PlusMinusTieStopsWithBothNamed) {
  const std::int64_t n = 40;
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, rotated_pair(-10.0, 10.0));
  ASSERT_TRUE(m.is_ok());
  auto r = solve(*m, test::quiet_options(2, "power", "magnitude"));
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  EXPECT_EQ(r->converged, 0);
  EXPECT_NE(r->stall_reason.find("have (nearly) the same modulus"), std::string::npos) << r->stall_reason;
  EXPECT_NE(r->stall_reason.find("10 and -10"), std::string::npos) << r->stall_reason;
  auto o = test::quiet_options(1, "power", "magnitude");
  o.has_shift = true;
  o.shift = 2.0;  // |-10 - 2| = 12 > |10 - 2| = 8
  auto s = solve(*m, o);
  ASSERT_TRUE(s.is_ok()) << s.status().message();
  EXPECT_TRUE(s->stall_reason.empty()) << s->stall_reason;
  ASSERT_EQ(s->converged, 1);
  EXPECT_NEAR(s->eigenvalues[0], -10.0, 1e-6);
}

// A tolerance below what double precision can reach: the residual settles at the
// rounding level, and the run says so instead of iterating for ever. The
// eigenvalue it returns is still as good as the rounding allows.
TEST(MethodPowerStops, ToleranceBelowRoundingStopsAndSaysSo) {
  const std::int64_t n = 40;
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, rotated_pair(7.0, 3.0));
  ASSERT_TRUE(m.is_ok());
  auto o = test::quiet_options(1, "power", "magnitude");
  o.tolerance = 1e-19;
  auto r = solve(*m, o);
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  EXPECT_EQ(r->converged, 0);
  EXPECT_NE(r->stall_reason.find("rounding level"), std::string::npos) << r->stall_reason;
  EXPECT_NEAR(r->eigenvalues[0], 7.0, 1e-12);
}

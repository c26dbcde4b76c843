// Shared by the checkpoint unit tests: a deterministic checkpoint whose every
// value is a function of (block, global row, column), so any rank count can
// rebuild the expected contents of any row range.
#pragma once

#include <cmath>
#include <string>

#include "io/generators.hpp"
#include "io/partition.hpp"
#include "lodestone/checkpoint.hpp"
#include "support/collective.hpp"

namespace lodestone::test {

inline double fixture_value(std::uint64_t block, std::int64_t row, std::int64_t col) {
  return io::hashed_uniform(1234 + block, static_cast<std::uint64_t>(row), static_cast<std::uint64_t>(col)) - 0.5;
}

inline RunIdentity fixture_identity(std::int64_t rows) {
  RunIdentity id;
  id.matrix_fingerprint = 0xfedcba9876543210ULL;  // above INT64_MAX on purpose
  id.rows = rows;
  id.options = {{"pairs", "3"}, {"selection", "magnitude"}, {"method", "block"}, {"tolerance", "1e-08"},
                {"seed", "7"}, {"block_size", "5"}, {"shift", "0"}};
  return id;
}

// This rank's rows [begin, end) of the fixture checkpoint with `rows` rows.
inline Checkpoint fixture_checkpoint(std::int64_t rows, std::int64_t begin, std::int64_t end) {
  Checkpoint c;
  c.identity = fixture_identity(rows);
  c.iterations = 42;
  c.matvecs = 210;
  c.converged = 1;
  c.elapsed_seconds = 3.25;
  SolverState& st = c.state;
  st.method = "block";
  st.rows = rows;
  st.row_begin = begin;
  st.row_end = end;
  const std::int64_t m = end - begin;
  const std::pair<const char*, std::int64_t> shapes[] = {{"basis", 5}, {"locked", 1}, {"empty", 0}};
  std::uint64_t id = 0;
  for (auto [name, cols] : shapes) {
    StateBlock b;
    b.columns = cols;
    for (std::int64_t j = 0; j < cols; ++j)
      for (std::int64_t i = 0; i < m; ++i) b.local.push_back(fixture_value(id, begin + i, j));
    st.blocks[name] = b;
    ++id;
  }
  st.arrays["ritz_values"] = {3.5, -2.25, 1e-300};
  st.arrays["interval"] = {0.5, 7.0};
  st.arrays["nothing"] = {};
  st.counters["seed_position"] = 123456789012345LL;
  st.counters["restarts"] = -3;
  for (int k = 1; k <= 4; ++k) {
    HistoryRecord h;
    h.iteration = k;
    h.matvecs = 5 * k;
    h.seconds = 0.5 * k;
    h.converged = k / 3;
    h.estimates = {3.0 + 1.0 / k, -2.0, std::nan("")};
    h.residuals = {1e-3 / k, 1e-2, std::nan("")};
    if (k == 2) h.residuals.pop_back();  // a shorter record is padded on write
    c.history.push_back(h);
  }
  return c;
}

inline Checkpoint fixture_for_rank(MPI_Comm comm, std::int64_t rows) {
  auto r = even_split(rows, comm_rank(comm), comm_size(comm));
  return fixture_checkpoint(rows, r.begin, r.end);
}

}  // namespace lodestone::test

// Test matrices for the solver tests, built from a rule for each global row so
// every rank count builds the same matrix: as a PETSc matrix wrapped directly,
// or written to a file (CSR or dense layout) and loaded back.
#pragma once

#include <petscmat.h>

#include <algorithm>
#include <functional>
#include <string>
#include <utility>
#include <vector>

#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "io/partition.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/solver.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

namespace lodestone::test {

using Entries = std::vector<std::pair<std::int64_t, double>>;
using RowRule = std::function<void(std::int64_t row, Entries& out)>;

// Wraps an MPIAIJ matrix built from the rule (rows split evenly).
inline Result<Matrix> build_aij(MPI_Comm comm, std::int64_t n, bool symmetric, const RowRule& rule) {
  auto r = even_split(n, comm_rank(comm), comm_size(comm));
  Mat a = nullptr;
  MatCreateAIJ(comm, static_cast<PetscInt>(r.size()), static_cast<PetscInt>(r.size()), static_cast<PetscInt>(n),
               static_cast<PetscInt>(n), 0, nullptr, 0, nullptr, &a);
  MatSetOption(a, MAT_NEW_NONZERO_ALLOCATION_ERR, PETSC_FALSE);
  MatSetUp(a);
  Entries e;
  for (std::int64_t i = r.begin; i < r.end; ++i) {
    e.clear();
    rule(i, e);
    for (auto [j, v] : e) {
      PetscInt row = static_cast<PetscInt>(i), col = static_cast<PetscInt>(j);
      MatSetValues(a, 1, &row, 1, &col, &v, ADD_VALUES);
    }
  }
  MatAssemblyBegin(a, MAT_FINAL_ASSEMBLY);
  MatAssemblyEnd(a, MAT_FINAL_ASSEMBLY);
  auto m = Matrix::wrap(a, symmetric);
  MatDestroy(&a);
  return m;
}

// Writes the rule's matrix to a file in the CSR or dense layout and loads it.
inline Result<Matrix> build_file(MPI_Comm comm, std::int64_t n, bool symmetric, bool dense, const RowRule& rule) {
  auto r = even_split(n, comm_rank(comm), comm_size(comm));
  std::string path = temp_path(comm, dense ? "dense.h5" : "csr.h5");
  Entries e;
  Status s;
  if (dense) {
    std::vector<double> values(static_cast<std::size_t>(r.size() * n), 0.0);
    for (std::int64_t i = r.begin; i < r.end; ++i) {
      e.clear();
      rule(i, e);
      for (auto [j, v] : e) values[static_cast<std::size_t>((i - r.begin) * n + j)] += v;
    }
    s = io::write_dense_file(comm, path, "/matrix", n, symmetric, r.begin, r.size(), values);
  } else {
    io::CsrRows rows;
    rows.row_begin = r.begin;
    for (std::int64_t i = r.begin; i < r.end; ++i) {
      e.clear();
      rule(i, e);
      std::sort(e.begin(), e.end());
      for (std::size_t k = 0; k < e.size(); ++k) {
        if (k > 0 && e[k].first == e[k - 1].first) {
          rows.values.back() += e[k].second;  // the rule may name a column twice: entries add up
          continue;
        }
        rows.columns.push_back(e[k].first), rows.values.push_back(e[k].second);
      }
      rows.offsets.push_back(static_cast<std::int64_t>(rows.columns.size()));
    }
    s = io::write_csr_file(comm, path, "/matrix", n, symmetric, rows);
  }
  if (!s) return s;
  return Matrix::load(comm, path);
}

// A dense random matrix from the counter-based hash, scale x (u - 1/2) per entry, with
// `planted` added to the first diagonal entries so that the wanted pairs stand clear
// of the random bulk.
inline RowRule planted_random(std::int64_t n, std::uint64_t seed, double scale, std::vector<double> planted) {
  return [=](std::int64_t i, Entries& e) {
    for (std::int64_t j = 0; j < n; ++j) {
      double v = scale * (io::hashed_uniform(seed, static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j)) - 0.5);
      if (i == j && i < static_cast<std::int64_t>(planted.size())) v += planted[static_cast<std::size_t>(i)];
      e.push_back({j, v});
    }
  };
}

// Block upper triangular: the 2x2 block [a b; c d] on rows 0-1, then the diagonal
// 3.0, 2.8, ... with upper couplings. A block-triangular matrix's spectrum is that of
// its diagonal blocks (closed form): the 2x2 block's pair plus the diagonal.
inline RowRule planted_block(double a, double b, double c, double d, std::int64_t n) {
  return [=](std::int64_t i, Entries& e) {
    if (i == 0) e.push_back({0, a}), e.push_back({1, b});
    if (i == 1) e.push_back({0, c}), e.push_back({1, d});
    if (i >= 2) e.push_back({i, 3.0 - 0.2 * static_cast<double>(i - 2)});
    if (i + 1 < n && i >= 1) e.push_back({i + 1, 0.5});
    if (i <= 1) e.push_back({n - 1, 0.3});
  };
}

// The whole matrix, on every rank (tests only: small n), row-major.
inline std::vector<double> full_dense(std::int64_t n, const RowRule& rule) {
  std::vector<double> a(static_cast<std::size_t>(n * n), 0.0);
  Entries e;
  for (std::int64_t i = 0; i < n; ++i) {
    e.clear();
    rule(i, e);
    for (auto [j, v] : e) a[static_cast<std::size_t>(i * n + j)] += v;
  }
  return a;
}

inline SolveOptions quiet_options(std::int64_t pairs, const std::string& method, const std::string& select) {
  SolveOptions o;
  o.pairs = pairs;
  o.method = method;
  o.selection = select;
  o.progress_seconds = 0;
  o.tolerance = 1e-9;
  return o;
}

// ||A v_j - lambda_j v_j|| recomputed here from the returned local rows (real pairs only).
inline double recomputed_residual(const Matrix& m, const SolveResult& r, std::int64_t j) {
  Vec x, y;
  MatCreateVecs(m.petsc(), &x, &y);
  PetscScalar* px = nullptr;
  VecGetArray(x, &px);
  for (std::int64_t i = 0; i < r.local_rows(); ++i) px[i] = r.vectors[static_cast<std::size_t>(j * r.local_rows() + i)];
  VecRestoreArray(x, &px);
  MatMult(m.petsc(), x, y);
  VecAXPY(y, -r.eigenvalues[static_cast<std::size_t>(j)], x);
  PetscReal nr = 0, nx = 0;
  VecNorm(y, NORM_2, &nr);
  VecNorm(x, NORM_2, &nx);
  VecDestroy(&x);
  VecDestroy(&y);
  return nr / nx;
}

// Gram matrix of the returned vectors (replicated).
inline std::vector<double> vector_gram(MPI_Comm comm, const SolveResult& r) {
  const std::int64_t k = r.pairs(), m = r.local_rows();
  std::vector<double> g(static_cast<std::size_t>(k * k), 0.0);
  for (std::int64_t a = 0; a < k; ++a)
    for (std::int64_t b = 0; b < k; ++b)
      for (std::int64_t i = 0; i < m; ++i)
        g[static_cast<std::size_t>(a * k + b)] +=
            r.vectors[static_cast<std::size_t>(a * m + i)] * r.vectors[static_cast<std::size_t>(b * m + i)];
  MPI_Allreduce(MPI_IN_PLACE, g.data(), static_cast<int>(g.size()), MPI_DOUBLE, MPI_SUM, comm);
  return g;
}

}  // namespace lodestone::test

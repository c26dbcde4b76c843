// Small dense eigenproblems (the projected problems of the block methods),
// solved with the LAPACK that PETSc links. Each function is computed on rank 0
// and broadcast, so every rank holds bit-identical results and takes the same
// branches afterwards.
#pragma once

#include <mpi.h>

#include <functional>
#include <vector>

#include "algebra/small.hpp"
#include "lodestone/status.hpp"

namespace lodestone::algebra {

struct SymmetricEigen {
  std::vector<double> values;  // ascending
  Small vectors;               // orthonormal columns
};

// Collective. Eigen-decomposition of a symmetric matrix (upper triangle used).
Result<SymmetricEigen> symmetric_eigen(MPI_Comm comm, const Small& h);

// How wanted an eigenvalue (re, im) is: larger means more wanted.
using Priority = std::function<double(double re, double im)>;

struct RealSchur {
  Small t;                 // upper quasi-triangular: 1x1 blocks (real) and 2x2 blocks (complex pairs)
  Small u;                 // orthogonal: h = u t u^T
  std::vector<double> re;  // eigenvalues along the diagonal of t
  std::vector<double> im;  // complex pairs: +im first, then -im
};

// Collective. Real Schur form with the diagonal blocks ordered most wanted first.
Result<RealSchur> real_schur(MPI_Comm comm, const Small& h, const Priority& priority);

// Right eigenvectors of an upper quasi-triangular t, one column per eigenvalue;
// a complex pair occupies columns j (real part) and j+1 (imaginary part) for the
// eigenvalue with positive imaginary part in column j. Not normalized.
Result<Small> schur_eigenvectors(MPI_Comm comm, const Small& t);

// Local. The eigenvalues on the diagonal blocks of an upper quasi-triangular t
// (a complex pair: +im first).
void quasi_triangular_eigenvalues(const Small& t, std::vector<double>& re, std::vector<double>& im);

// Local, no communication: upper Cholesky factor of a symmetric positive
// definite g (returns false if g is not numerically positive definite).
bool cholesky_upper(Small& g);

}  // namespace lodestone::algebra

// Block products with the matrix (see operator.hpp).
#include "algebra/operator.hpp"

#include <cmath>

#include "support/petsc_status.hpp"

namespace lodestone::algebra {

Operator::~Operator() = default;

Status Operator::apply(const Block& x, Block& y) {
  Mat c = y.mat();
  // Each output block keeps its own product object; a different input block of the
  // same shape is swapped in without redoing the symbolic phase.
  MatProductType type = MATPRODUCT_UNSPECIFIED;
  LODESTONE_PETSC(MatProductGetType(c, &type));
  if (type == MATPRODUCT_UNSPECIFIED) {
    LODESTONE_PETSC(MatProductCreateWithMat(a_, x.mat(), nullptr, c));
    LODESTONE_PETSC(MatProductSetType(c, MATPRODUCT_AB));
    LODESTONE_PETSC(MatProductSetFromOptions(c));
    LODESTONE_PETSC(MatProductSymbolic(c));
  } else {
    Mat pa = nullptr, pb = nullptr, pc = nullptr;
    LODESTONE_PETSC(MatProductGetMats(c, &pa, &pb, &pc));
    if (pb != x.mat()) LODESTONE_PETSC(MatProductReplaceMats(nullptr, x.mat(), nullptr, c));
  }
  LODESTONE_PETSC(MatProductNumeric(c));
  matvecs_ += x.cols();
  return Status::ok();
}

Result<double> norm_estimate(Mat a) {
  PetscReal n1 = 0, ninf = 0;
  LODESTONE_PETSC(MatNorm(a, NORM_1, &n1));
  LODESTONE_PETSC(MatNorm(a, NORM_INFINITY, &ninf));
  // The product of the two norms would overflow (underflow) for entries near 1e+-300.
  return std::sqrt(static_cast<double>(n1)) * std::sqrt(static_cast<double>(ninf));
}

double extreme_scale(double norm) {
  if (!(norm > 0) || !std::isfinite(norm) || (norm <= 0x1p200 && norm >= 0x1p-200)) return 1.0;
  int e = 0;
  std::frexp(norm, &e);
  return std::ldexp(1.0, e);
}

}  // namespace lodestone::algebra

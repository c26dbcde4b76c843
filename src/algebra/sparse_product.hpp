// Sparse (AIJ) matrix times a dense block, Y = alpha (A X - shift X) + beta Y, in
// one pass over the local rows: each row of the matrix is read once per twelve
// columns of the block (kChunk in the source), and the shift and the update of Y
// happen while the row's sums are still in registers. PETSc 3.18's sparse x dense
// product reads the matrix once per four columns, writes A X to a block of its own
// and needs a second pass to combine it with X and Y (a Chebyshev step), which is
// why the methods' hot loop runs this kernel instead (docs/benchmarks.md, target 3).
//
// On more than one rank the values of X that the local rows need from other
// ranks (the ghost values, the off-diagonal part's columns) arrive through one
// PETSc star forest set up once: interlaced, a row's values of all columns travel
// as one unit in one exchange, and while they travel the rows that need none of
// them are multiplied (where such rows are most of the local rows, in long runs);
// by columns, one exchange per column, before the product.
#pragma once

#include <petscmat.h>
#include <petscsf.h>

#include <map>
#include <vector>

#include "algebra/block.hpp"
#include "lodestone/status.hpp"

namespace lodestone::algebra {

class SparseProduct {
 public:
  SparseProduct() = default;
  SparseProduct(const SparseProduct&) = delete;
  SparseProduct& operator=(const SparseProduct&) = delete;
  ~SparseProduct();

  // True when A is a PETSc AIJ matrix (MATSEQAIJ or MATMPIAIJ exactly) that this
  // kernel can multiply; other types keep PETSc's own product.
  static bool handles(Mat a);

  // Collective. Y = alpha (A X - shift X) + beta Y; beta = 0 never reads Y. X and Y
  // are distinct blocks with the same columns, laid out like A's columns and rows.
  Status apply(Mat a, const Block& x, Block& y, double alpha, double shift, double beta);
  // Collective. The same on this rank's rows held interlaced: row i's `cols` values
  // side by side at x[i * cols + j] (local rows x cols each, cols the same on every
  // rank). A loop of products (a Chebyshev filter) runs fastest in this layout:
  // each stored entry meets its row of X in one contiguous load.
  Status apply_rows(Mat a, int cols, const double* x, double* y, double alpha, double shift, double beta);
  // Collective. y = A x for one column given by its local values (x and y distinct).
  Status apply_column(Mat a, const double* x, double* y);
  // Whether the last product multiplied this rank's rows without ghost entries while
  // the ghost values were exchanged (interlaced, on more than one rank, a pattern
  // whose rows mostly have no ghost entries). For tests.
  bool overlapped() const { return overlapped_; }

  // Collective on first use, then remembered. True when A's pattern is scattered:
  // fewer than half of a sample of stored entries continue a column of the row before
  // shifted by one (a stencil or band continues nearly all; a random graph almost
  // none). Then the values of X are prefetched ahead in one- and two-column products,
  // and a single product runs here rather than in PETSc's MatMult, which is the
  // faster of the two on regular patterns (docs/benchmarks.md, case c).
  Result<bool> scattered(Mat a);

 private:
  // The ghost values of X's columns into ghost_values_: interlaced, ghost g's row at
  // g * cols, started here and completed by finish_exchange(); by columns, column j at
  // j * ghosts, complete on return.
  Status start_exchange(Mat a, int cols, bool interlaced, const double* x, PetscInt rows, PetscInt ghosts,
                        const PetscInt* garray);
  Status finish_exchange();
  // Once per matrix: this rank's rows split into runs with and without ghost entries
  // (runs_); true if multiplying the rows without them during the exchange pays.
  bool split_rows(const PetscInt* off_start, PetscInt m);  // off_start: the off-diagonal part's row offsets, or null
  Status product(Mat a, int cols, bool interlaced, const double* x, double* y, double alpha, double shift, double beta);

  struct Pending {  // an interlaced exchange started and not yet finished
    MPI_Datatype unit = MPI_DATATYPE_NULL;
    const double* root = nullptr;
    double* leaf = nullptr;
  };
  struct RowRun {
    PetscInt begin, end;  // rows begin .. end - 1
    bool ghosts;          // every row of the run has ghost entries, or none has
  };

  PetscSF sf_ = nullptr;                        // ghost columns <- their owning rows, set up once
  std::map<int, MPI_Datatype> row_types_;       // `cols` contiguous doubles, one per width used
  std::vector<double> ghost_values_;
  int scattered_ = -1;                          // -1 not yet known, else 0 or 1
  Pending pending_;
  std::vector<RowRun> runs_;
  int overlap_ = -1;                            // -1 not yet known, else 0 or 1 (split_rows)
  bool overlapped_ = false;
};

// This rank's rows of X interlaced into `rows` (local rows x cols values), and back.
void to_rows(const Block& x, double* rows);
void from_rows(const double* rows, Block& x);

}  // namespace lodestone::algebra

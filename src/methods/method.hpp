// Method: the one shape every eigen-method has, so the solve loop, the
// progress report and the checkpoint layer treat them all alike.
//
// A method is set up on an Operator (the matrix with a product counter) and a
// Problem (what to find), then stepped one iteration at a time by the caller,
// which owns the loop, the budget and the clock. Between steps it can say how
// many wanted pairs are converged and give the current estimates; at the end it
// extracts the pairs. Its whole state can be saved as named distributed blocks
// (laid out by global row, like the matrix) plus named replicated scalars, and
// restored from them on any number of ranks: that is all a checkpoint needs.
#pragma once

#include <petscmat.h>

#include <cstdint>
#include <map>
#include <memory>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "algebra/block.hpp"
#include "algebra/operator.hpp"
#include "lodestone/status.hpp"

namespace lodestone::methods {

enum class Selection { magnitude, largest, smallest };
const char* selection_name(Selection s);
// "magnitude", "largest" or "smallest"; a usage error naming --select otherwise.
Result<Selection> parse_selection(std::string_view s);

struct Problem {
  bool symmetric = false;
  Selection selection = Selection::magnitude;
  int pairs = 1;                 // K
  int block_size = 0;            // 0: the method's default
  double tolerance = 1e-8;       // relative to norm_estimate
  double norm_estimate = 1.0;    // ||A||_est
  std::uint64_t seed = 0;
  bool has_shift = false;        // power and block: iterate with A - shift*I
  double shift = 0.0;
  double value_scale = 1.0;      // the input's eigenvalues are value_scale times these (for messages)
};

// Everything a method needs to continue later, possibly on another rank count.
struct MethodState {
  std::vector<std::pair<std::string, algebra::Block>> blocks;  // distributed, rows as the matrix
  std::map<std::string, std::vector<double>> scalars;          // replicated
};

// The final pairs, most wanted first; a complex pair is never split.
struct Pairs {
  std::vector<double> re, im, residuals;
  int converged = 0;           // the first `converged` entries met the tolerance
  algebra::Block vectors;      // unit 2-norm (a complex pair: the complex vector has unit norm)
};

class Method {
 public:
  virtual ~Method() = default;
  virtual const char* name() const = 0;
  // Collective. Prepares start vectors (may use products).
  virtual Status setup(algebra::Operator& op, const Problem& problem) = 0;
  // Collective. One iteration.
  virtual Status step() = 0;
  // Wanted pairs converged and locked so far (may exceed K by one to keep a complex pair whole).
  virtual int converged() const = 0;
  virtual std::int64_t iterations() const = 0;
  // Length K: current estimate (real part) and residual of each wanted pair still
  // being worked on; NaN for locked pairs and for pairs not yet in view.
  virtual void progress(std::vector<double>& estimates, std::vector<double>& residuals) const = 0;
  // Collective. Converged pairs first, then the best approximations to the rest,
  // up to K (one product with the matrix to certify the residuals).
  virtual Result<Pairs> extract() = 0;
  // Collective. Save and restore the whole state; restore() replaces setup().
  virtual Status save(MethodState& state) = 0;
  virtual Status restore(algebra::Operator& op, const Problem& problem, MethodState& state) = 0;
  // Non-empty once the method can make no further progress on the pairs still
  // wanted: why, in one sentence for a person. The caller then stops and extracts
  // what converged. Replicated (every rank decides alike).
  virtual std::string stall_reason() const { return {}; }
};

// The registry: adding a method is one more entry of the same shape. An entry
// states what the method cannot serve, and check_fit() turns that into refusals,
// so the solver and the planner refuse the same requests in the same words.
struct MethodInfo {
  const char* name;
  const char* summary;
  bool symmetric_only;  // refuses a matrix not declared symmetric
  bool takes_shift;     // honours --shift
  // Columns a given --block-size must hold beyond --pairs (a guard vector, say);
  // -1 for a one-vector method, which ignores --block-size.
  int block_beyond_pairs;
  // Orders a non-symmetric matrix's eigenvalues by real part, as --select largest
  // asks. Power and block iterate with A + ||A|| I and so rank by |lambda + ||A|||,
  // which puts a complex pair with a large imaginary part ahead of a larger real one.
  bool ranks_by_real_part;
  std::unique_ptr<Method> (*make)();
};
const std::vector<MethodInfo>& registry();
const MethodInfo* find_method(std::string_view name);
// "power, block, chebyshev or krylov", for messages.
std::string method_names();
// What a run asks of a method, as far as check_fit() can judge before any product.
struct FitRequest {
  bool symmetric = false;  // the matrix is declared symmetric
  Selection selection = Selection::magnitude;
  std::int64_t pairs = 1;
  std::int64_t block_size = 0;  // 0: the method chooses
  bool has_shift = false;
};
// A usage error naming the first thing this method cannot serve; ok otherwise.
Status check_fit(const MethodInfo& m, const FitRequest& r);

std::unique_ptr<Method> make_power();
std::unique_ptr<Method> make_block();
std::unique_ptr<Method> make_chebyshev();
std::unique_ptr<Method> make_krylov();

}  // namespace lodestone::methods

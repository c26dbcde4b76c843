// Converting between a method's own saved state (methods::MethodState: PETSc
// dense blocks and replicated scalars) and the method-independent SolverState
// the checkpoint file stores.
#pragma once

#include <petscmat.h>

#include "lodestone/solver_state.hpp"
#include "methods/method.hpp"

namespace lodestone::state {

// Local: copies this rank's rows of every block.
SolverState export_state(const std::string& method, const methods::MethodState& from, std::int64_t rows,
                         std::int64_t row_begin, std::int64_t row_end);

// Collective: blocks laid out like `a` (the state must hold a's row range).
Result<methods::MethodState> import_state(Mat a, const SolverState& from);

}  // namespace lodestone::state

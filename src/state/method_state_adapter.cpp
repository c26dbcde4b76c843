// MethodState <-> SolverState (state/method_state_adapter.hpp).
#include "state/method_state_adapter.hpp"

#include <fmt/format.h>

#include <algorithm>

#include "support/collective.hpp"

namespace lodestone::state {

SolverState export_state(const std::string& method, const methods::MethodState& from, std::int64_t rows,
                         std::int64_t row_begin, std::int64_t row_end) {
  SolverState st;
  st.method = method;
  st.rows = rows;
  st.row_begin = row_begin;
  st.row_end = row_end;
  for (const auto& [name, block] : from.blocks) {
    StateBlock b;
    b.columns = block.cols();
    const double* d = block.data();
    b.local.assign(d, d + static_cast<std::size_t>(block.cols()) * static_cast<std::size_t>(block.local_rows()));
    st.blocks[name] = std::move(b);
  }
  st.arrays = from.scalars;
  return st;
}

Result<methods::MethodState> import_state(Mat a, const SolverState& from) {
  methods::MethodState out;
  out.scalars = from.arrays;
  MPI_Comm comm = MPI_COMM_NULL;
  PetscObjectGetComm(reinterpret_cast<PetscObject>(a), &comm);
  for (const auto& [name, b] : from.blocks) {
    auto block = algebra::Block::like(a, static_cast<int>(b.columns));
    LODESTONE_TRY(agree(comm, block.status()));
    const std::size_t n = static_cast<std::size_t>(b.columns) * static_cast<std::size_t>(block->local_rows());
    Status s;
    if (block->row_begin() != from.row_begin || n != b.local.size())
      s = Status::input(fmt::format("checkpoint block '{}' does not line up with the matrix rows", name));
    LODESTONE_TRY(agree(comm, s));
    std::copy(b.local.begin(), b.local.end(), block->data());
    block->changed();
    out.blocks.emplace_back(name, std::move(*block));
  }
  return out;
}

}  // namespace lodestone::state

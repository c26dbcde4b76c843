// Failure agreement and small reductions shared by every layer.
#include "support/collective.hpp"

#include <fmt/format.h>

#include <string>

namespace lodestone {

int comm_rank(MPI_Comm comm) {
  int r = 0;
  MPI_Comm_rank(comm, &r);
  return r;
}

int comm_size(MPI_Comm comm) {
  int s = 1;
  MPI_Comm_size(comm, &s);
  return s;
}

Status agree(MPI_Comm comm, const Status& local) {
  const int size = comm_size(comm);
  const int rank = comm_rank(comm);
  int mine = local.is_ok() ? size : rank;
  int first = size;
  MPI_Allreduce(&mine, &first, 1, MPI_INT, MPI_MIN, comm);
  if (first == size) return Status::ok();
  // The first failing rank tells everyone what happened.
  int header[2] = {0, 0};
  std::string text;
  if (rank == first) {
    header[0] = static_cast<int>(local.kind());
    header[1] = static_cast<int>(local.message().size());
    text = local.message();
  }
  MPI_Bcast(header, 2, MPI_INT, first, comm);
  text.resize(static_cast<std::size_t>(header[1]));
  if (header[1] > 0) MPI_Bcast(text.data(), header[1], MPI_CHAR, first, comm);
  return Status(static_cast<ErrorKind>(header[0]), text);
}

std::int64_t sum_all(MPI_Comm comm, std::int64_t v) {
  std::int64_t out = 0;
  MPI_Allreduce(&v, &out, 1, MPI_INT64_T, MPI_SUM, comm);
  return out;
}
std::int64_t max_all(MPI_Comm comm, std::int64_t v) {
  std::int64_t out = 0;
  MPI_Allreduce(&v, &out, 1, MPI_INT64_T, MPI_MAX, comm);
  return out;
}
std::int64_t min_all(MPI_Comm comm, std::int64_t v) {
  std::int64_t out = 0;
  MPI_Allreduce(&v, &out, 1, MPI_INT64_T, MPI_MIN, comm);
  return out;
}
std::uint64_t sum_all_u64(MPI_Comm comm, std::uint64_t v) {
  std::uint64_t out = 0;
  MPI_Allreduce(&v, &out, 1, MPI_UINT64_T, MPI_SUM, comm);
  return out;
}
double sum_all(MPI_Comm comm, double v) {
  double out = 0;
  MPI_Allreduce(&v, &out, 1, MPI_DOUBLE, MPI_SUM, comm);
  return out;
}
double max_all(MPI_Comm comm, double v) {
  double out = 0;
  MPI_Allreduce(&v, &out, 1, MPI_DOUBLE, MPI_MAX, comm);
  return out;
}
std::int64_t exclusive_prefix_sum(MPI_Comm comm, std::int64_t v) {
  std::int64_t out = 0;
  MPI_Exscan(&v, &out, 1, MPI_INT64_T, MPI_SUM, comm);
  if (comm_rank(comm) == 0) out = 0;  // MPI_Exscan leaves rank 0 undefined
  return out;
}

Status check_row_blocks(MPI_Comm comm, std::int64_t row_begin, std::int64_t local_rows, std::int64_t rows,
                        std::string_view what) {
  const std::int64_t before = exclusive_prefix_sum(comm, local_rows);
  const std::int64_t total = sum_all(comm, local_rows);
  Status s;
  if (before != row_begin)
    s = Status::input(fmt::format("{}: rank {} starts at row {}, but the ranks before it hold {} rows "
                                  "(row blocks must be contiguous and in rank order)",
                                  what, comm_rank(comm), row_begin, before));
  else if (total != rows)
    s = Status::input(fmt::format("{}: the ranks hold {} rows together, not {}", what, total, rows));
  return agree(comm, s);
}

}  // namespace lodestone

// Routing entries to their row's owner, and CSR assembly (io/mm_entries.hpp).
#include "io/mm_entries.hpp"

#include <algorithm>
#include <climits>
#include <cstdint>

#include "support/collective.hpp"

namespace lodestone::io {

int even_owner(std::int64_t n, int parts, std::int64_t row) {
  const std::int64_t base = n / parts, extra = n % parts;
  const std::int64_t big = extra * (base + 1);  // rows held by the first `extra` ranks
  if (row < big) return static_cast<int>(row / (base + 1));
  return static_cast<int>(extra + (row - big) / base);
}

EntryRouter::EntryRouter(MPI_Comm comm, std::int64_t n)
    : comm_(comm), n_(n), size_(comm_size(comm)), outgoing_(static_cast<std::size_t>(size_)) {
  MPI_Type_contiguous(static_cast<int>(sizeof(mm::Entry)), MPI_BYTE, &type_);
  MPI_Type_commit(&type_);
}

EntryRouter::~EntryRouter() {
  int finalized = 0;
  MPI_Finalized(&finalized);
  if (!finalized && type_ != MPI_DATATYPE_NULL) MPI_Type_free(&type_);
}

void EntryRouter::exchange() {
  const std::size_t p = static_cast<std::size_t>(size_);
  // Rounds are bounded by the caller, so counts fit MPI's int arguments.
  std::vector<int> send_counts(p), recv_counts(p), send_displs(p), recv_displs(p);
  std::vector<mm::Entry> send;
  send.reserve(static_cast<std::size_t>(pending_));
  for (std::size_t r = 0; r < p; ++r) {
    send_displs[r] = static_cast<int>(send.size());
    send_counts[r] = static_cast<int>(outgoing_[r].size());
    send.insert(send.end(), outgoing_[r].begin(), outgoing_[r].end());
    std::vector<mm::Entry>().swap(outgoing_[r]);
  }
  pending_ = 0;
  MPI_Alltoall(send_counts.data(), 1, MPI_INT, recv_counts.data(), 1, MPI_INT, comm_);
  std::size_t total = 0;
  for (std::size_t r = 0; r < p; ++r) {
    recv_displs[r] = static_cast<int>(total);
    total += static_cast<std::size_t>(recv_counts[r]);
  }
  const std::size_t old = received_.size();
  received_.resize(old + total);
  MPI_Alltoallv(send.data(), send_counts.data(), send_displs.data(), type_, received_.data() + old,
                recv_counts.data(), recv_displs.data(), type_, comm_);
}

std::int64_t bounded_round(MPI_Comm comm, std::int64_t wanted) {
  const std::int64_t limit = std::max<std::int64_t>(1, (std::int64_t{INT32_MAX} / 4) / comm_size(comm));
  return std::clamp<std::int64_t>(wanted, 1, limit);
}

CsrRows assemble_rows(RowRange range, std::vector<mm::Entry>& entries) {
  // Entries arrive in an order set by the rank count and the exchange rounds; ties
  // broken by value make the order in which duplicates are summed (and so the sum's
  // last bits) depend on the entries alone. Values are never NaN (the parser refuses it).
  std::sort(entries.begin(), entries.end(), [](const mm::Entry& a, const mm::Entry& b) {
    if (a.row != b.row) return a.row < b.row;
    if (a.col != b.col) return a.col < b.col;
    return a.value < b.value;
  });
  CsrRows out;
  out.row_begin = range.begin;
  out.offsets.assign(static_cast<std::size_t>(range.size()) + 1, 0);
  out.columns.reserve(entries.size());
  out.values.reserve(entries.size());
  for (std::size_t k = 0; k < entries.size();) {
    const mm::Entry& e = entries[k];
    double sum = 0;
    std::size_t j = k;
    for (; j < entries.size() && entries[j].row == e.row && entries[j].col == e.col; ++j) sum += entries[j].value;
    out.columns.push_back(e.col);
    out.values.push_back(sum);
    ++out.offsets[static_cast<std::size_t>(e.row - range.begin) + 1];
    k = j;
  }
  for (std::size_t i = 1; i < out.offsets.size(); ++i) out.offsets[i] += out.offsets[i - 1];
  std::vector<mm::Entry>().swap(entries);
  return out;
}

}  // namespace lodestone::io

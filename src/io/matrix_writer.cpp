// Collective writer of the matrix file layout (io/matrix_writer.hpp).
#include "io/matrix_writer.hpp"

#include <fmt/format.h>

#include "io/atomic_output.hpp"
#include "io/h5.hpp"
#include "io/layout.hpp"
#include "support/collective.hpp"

namespace lodestone::io {

Status write_matrix_attributes(hid_t group, const char* kind, std::int64_t n, bool symmetric) {
  LODESTONE_TRY(h5::write_int_attribute(group, layout::kFormat, layout::kFormatVersion));
  LODESTONE_TRY(h5::write_string_attribute(group, layout::kLayout, kind));
  LODESTONE_TRY(h5::write_int_attribute(group, layout::kRows, n));
  LODESTONE_TRY(h5::write_int_attribute(group, layout::kCols, n));
  LODESTONE_TRY(h5::write_int_attribute(group, layout::kSymmetric, symmetric ? 1 : 0));
  return Status::ok();
}

Status write_csr(MPI_Comm comm, hid_t file, const std::string& group_path, std::int64_t n, bool symmetric,
                 const CsrRows& rows) {
  const int rank = comm_rank(comm), size = comm_size(comm);
  const std::int64_t m = rows.local_rows();
  const std::int64_t local_nnz = rows.offsets.back();
  const std::int64_t nnz_before = exclusive_prefix_sum(comm, local_nnz);
  const std::int64_t nnz = sum_all(comm, local_nnz);
  auto group = h5::create_group(file, group_path);
  LODESTONE_TRY(agree(comm, group.status()));
  LODESTONE_TRY(agree(comm, write_matrix_attributes(group->get(), "csr", n, symmetric)));

  const bool narrow = n <= INT32_MAX;
  auto off = h5::create_dataset(group->get(), layout::kRowOffsets, H5T_STD_I64LE, {n + 1});
  auto col = h5::create_dataset(group->get(), layout::kColumnIndices, narrow ? H5T_STD_I32LE : H5T_STD_I64LE, {nnz});
  auto val = h5::create_dataset(group->get(), layout::kValues, H5T_IEEE_F64LE, {nnz});
  Status s = !off ? off.status() : !col ? col.status() : val.status();
  LODESTONE_TRY(agree(comm, s));

  // Each rank writes offsets for its rows; the last rank also writes the end.
  std::vector<std::int64_t> global_off(rows.offsets.begin(), rows.offsets.end() - (rank == size - 1 ? 0 : 1));
  for (auto& o : global_off) o += nnz_before;
  s = h5::write_range(off->get(), H5T_NATIVE_INT64, rows.row_begin, static_cast<std::int64_t>(global_off.size()),
                      global_off.data());
  if (s) s = h5::write_range(col->get(), H5T_NATIVE_INT64, nnz_before, local_nnz, rows.columns.data());
  if (s) s = h5::write_range(val->get(), H5T_NATIVE_DOUBLE, nnz_before, local_nnz, rows.values.data());
  (void)m;
  return agree(comm, s);
}

Status write_dense(MPI_Comm comm, hid_t file, const std::string& group_path, std::int64_t n, bool symmetric,
                   std::int64_t row_begin, std::int64_t local_rows, const std::vector<double>& values) {
  auto group = h5::create_group(file, group_path);
  LODESTONE_TRY(agree(comm, group.status()));
  LODESTONE_TRY(agree(comm, write_matrix_attributes(group->get(), "dense", n, symmetric)));
  auto val = h5::create_dataset(group->get(), layout::kValues, H5T_IEEE_F64LE, {n, n});
  LODESTONE_TRY(agree(comm, val.status()));
  return agree(comm, h5::write_rows(val->get(), H5T_NATIVE_DOUBLE, row_begin, local_rows, n, values.data()));
}

template <class WriteFn>
static Status write_file(MPI_Comm comm, const std::string& path, const std::vector<std::string>& inputs, WriteFn fn) {
  auto out = AtomicOutput::begin(comm, path, inputs);
  if (!out) return out.status();
  auto file = h5::create(comm, out->temp_path());
  if (!file) return file.status();
  Status s = fn(file->get());
  bool closed = file->sync_and_close_file();
  if (s && !closed) s = Status::input(fmt::format("{}: could not finish writing (disk full or file-size limit?)", path));
  LODESTONE_TRY(agree(comm, s));
  return out->commit();
}

Status write_csr_file(MPI_Comm comm, const std::string& path, const std::string& group, std::int64_t n,
                      bool symmetric, const CsrRows& rows, const std::vector<std::string>& inputs) {
  return write_file(comm, path, inputs,
                    [&](hid_t f) { return write_csr(comm, f, group, n, symmetric, rows); });
}

Status write_dense_file(MPI_Comm comm, const std::string& path, const std::string& group, std::int64_t n,
                        bool symmetric, std::int64_t row_begin, std::int64_t local_rows,
                        const std::vector<double>& values, const std::vector<std::string>& inputs) {
  return write_file(comm, path, inputs, [&](hid_t f) {
    return write_dense(comm, f, group, n, symmetric, row_begin, local_rows, values);
  });
}

}  // namespace lodestone::io

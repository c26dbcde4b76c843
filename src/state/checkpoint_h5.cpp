// HDF5 helpers for the checkpoint file (state/checkpoint_h5.hpp).
#include "state/checkpoint_h5.hpp"

#include <fmt/format.h>

#include "io/h5.hpp"
#include "support/collective.hpp"

namespace lodestone::ckpt {

Status write_u64_attribute(hid_t obj, const std::string& name, std::uint64_t value) {
  if (h5::has_attribute(obj, name)) H5Adelete(obj, name.c_str());
  h5::Handle space(H5Screate(H5S_SCALAR));
  h5::Handle attr(H5Acreate2(obj, name.c_str(), H5T_STD_U64LE, space.get(), H5P_DEFAULT, H5P_DEFAULT));
  if (!attr.valid() || H5Awrite(attr.get(), H5T_NATIVE_UINT64, &value) < 0)
    return Status::input(fmt::format("cannot write attribute '{}'", name));
  return Status::ok();
}

Result<std::uint64_t> read_u64_attribute(hid_t obj, const std::string& name) {
  if (!h5::has_attribute(obj, name)) return Status::input(fmt::format("missing attribute '{}'", name));
  h5::Handle attr(H5Aopen(obj, name.c_str(), H5P_DEFAULT));
  if (!attr.valid()) return Status::input(fmt::format("cannot open attribute '{}'", name));
  h5::Handle type(H5Aget_type(attr.get()));
  h5::Handle space(H5Aget_space(attr.get()));
  if (H5Tget_class(type.get()) != H5T_INTEGER || H5Tget_size(type.get()) != 8 ||
      H5Sget_simple_extent_npoints(space.get()) != 1)
    return Status::input(fmt::format("attribute '{}' must be one 64-bit integer", name));
  std::uint64_t v = 0;
  if (H5Aread(attr.get(), H5T_NATIVE_UINT64, &v) < 0)
    return Status::input(fmt::format("cannot read attribute '{}'", name));
  return v;
}

Status transfer_box(hid_t dataset, hid_t mem_type, std::int64_t start0, std::int64_t start1, std::int64_t count0,
                    std::int64_t count1, void* buf, bool write) {
  h5::Handle file_space(H5Dget_space(dataset));
  hsize_t total = static_cast<hsize_t>(count0) * static_cast<hsize_t>(count1);
  hsize_t one = total == 0 ? 1 : total;
  h5::Handle mem_space(H5Screate_simple(1, &one, nullptr));
  if (total == 0) {
    H5Sselect_none(file_space.get());
    H5Sselect_none(mem_space.get());
  } else {
    hsize_t start[2] = {static_cast<hsize_t>(start0), static_cast<hsize_t>(start1)};
    hsize_t count[2] = {static_cast<hsize_t>(count0), static_cast<hsize_t>(count1)};
    if (H5Sselect_hyperslab(file_space.get(), H5S_SELECT_SET, start, nullptr, count, nullptr) < 0)
      return Status::input("cannot select rows in the file (shape mismatch)");
  }
  h5::Handle xfer = h5::collective_transfer();
  double dummy = 0;
  void* p = total == 0 ? &dummy : buf;
  herr_t e = write ? H5Dwrite(dataset, mem_type, mem_space.get(), file_space.get(), xfer.get(), p)
                   : H5Dread(dataset, mem_type, mem_space.get(), file_space.get(), xfer.get(), p);
  if (e < 0) return Status::input(write ? "HDF5 write failed (disk full or file-size limit?)" : "HDF5 read failed");
  return Status::ok();
}

Status write_replicated(MPI_Comm comm, hid_t loc, const std::string& name, hid_t file_type, hid_t mem_type,
                        const std::vector<std::int64_t>& dims, const void* data) {
  auto ds = h5::create_dataset(loc, name, file_type, dims);
  LODESTONE_TRY(agree(comm, ds.status()));
  std::int64_t d0 = dims.empty() ? 1 : dims[0];
  std::int64_t d1 = dims.size() > 1 ? dims[1] : 1;
  const bool root = comm_rank(comm) == 0;
  Status s;
  if (d0 * d1 == 0) {
    // An empty dataset has no storage to write (the same on every rank).
  } else if (dims.size() <= 1) {
    s = h5::write_range(ds->get(), mem_type, 0, root ? d0 : 0, data);
  } else {
    s = transfer_box(ds->get(), mem_type, 0, 0, root ? d0 : 0, root ? d1 : 0, const_cast<void*>(data), true);
  }
  return agree(comm, s.is_ok() ? s : Status::input(fmt::format("dataset '{}': {}", name, s.message())));
}

static Result<h5::Handle> open_numeric(hid_t loc, const std::string& name, int rank, std::vector<std::int64_t>& dims) {
  if (H5Lexists(loc, name.c_str(), H5P_DEFAULT) <= 0) return Status::input(fmt::format("missing dataset '{}'", name));
  hid_t d = H5Dopen2(loc, name.c_str(), H5P_DEFAULT);
  if (d < 0) return Status::input(fmt::format("cannot open dataset '{}'", name));
  h5::Handle ds(d);
  auto shape = h5::dataset_shape(d);
  if (!shape) return Status::input(fmt::format("dataset '{}': {}", name, shape.status().message()));
  if (static_cast<int>(shape->dims.size()) != rank)
    return Status::input(fmt::format("dataset '{}' has {} dimensions, expected {}", name, shape->dims.size(), rank));
  if (shape->type_class != H5T_FLOAT && shape->type_class != H5T_INTEGER)
    return Status::input(fmt::format("dataset '{}' is not numeric", name));
  dims = shape->dims;
  return ds;
}

Result<std::vector<double>> read_replicated_doubles(hid_t loc, const std::string& name, int rank,
                                                    std::vector<std::int64_t>& dims) {
  auto ds = open_numeric(loc, name, rank, dims);
  if (!ds) return ds.status();
  std::int64_t total = 1;
  for (auto x : dims) total *= x;
  std::vector<double> out(static_cast<std::size_t>(total));
  if (total == 0) return out;
  Status s = rank == 1 ? h5::read_range(ds->get(), H5T_NATIVE_DOUBLE, 0, total, out.data())
                       : transfer_box(ds->get(), H5T_NATIVE_DOUBLE, 0, 0, dims[0], dims[1], out.data(), false);
  if (!s) return Status::input(fmt::format("dataset '{}': {}", name, s.message()));
  return out;
}

Result<std::vector<std::int64_t>> read_replicated_ints(hid_t loc, const std::string& name, std::int64_t length) {
  std::vector<std::int64_t> dims;
  auto ds = open_numeric(loc, name, 1, dims);
  if (!ds) return ds.status();
  if (dims[0] != length)
    return Status::input(fmt::format("dataset '{}' has length {}, expected {}", name, dims[0], length));
  std::vector<std::int64_t> out(static_cast<std::size_t>(length));
  if (length == 0) return out;
  Status s = h5::read_range(ds->get(), H5T_NATIVE_INT64, 0, length, out.data());
  if (!s) return Status::input(fmt::format("dataset '{}': {}", name, s.message()));
  return out;
}

static herr_t collect_attr(hid_t, const char* name, const H5A_info_t*, void* data) {
  static_cast<std::vector<std::string>*>(data)->emplace_back(name);
  return 0;
}

std::vector<std::string> attribute_names(hid_t obj) {
  std::vector<std::string> out;
  hsize_t idx = 0;
  H5Aiterate2(obj, H5_INDEX_NAME, H5_ITER_INC, &idx, collect_attr, &out);
  return out;
}

static herr_t collect_link(hid_t, const char* name, const H5L_info_t*, void* data) {
  static_cast<std::vector<std::string>*>(data)->emplace_back(name);
  return 0;
}

std::vector<std::string> link_names(hid_t group) {
  std::vector<std::string> out;
  hsize_t idx = 0;
  H5Literate(group, H5_INDEX_NAME, H5_ITER_INC, &idx, collect_link, &out);
  return out;
}

}  // namespace lodestone::ckpt

// RAII handles and small helpers over the HDF5 C API (parallel files).
#include "io/h5.hpp"

#include <fmt/format.h>

#include <filesystem>

#include "support/collective.hpp"

// Set by HDF5 once the library is initialised; H5_term_library does nothing while
// it is false. Not in the public headers, but exported by every HDF5 1.8-1.14.
extern "C" hbool_t H5_libinit_g;

namespace lodestone::h5 {

namespace {
bool close_failed = false;
}  // namespace

bool a_close_failed() { return close_failed; }

void skip_library_shutdown() { H5_libinit_g = false; }

Handle& Handle::operator=(Handle&& o) noexcept {
  if (this != &o) {
    close();
    id_ = o.id_;
    o.id_ = H5I_INVALID_HID;
  }
  return *this;
}

void Handle::close() {
  if (id_ < 0) return;
  if (H5Iis_valid(id_) > 0) {
    const bool file = H5Iget_type(id_) == H5I_FILE;
    if (H5Idec_ref(id_) < 0 && file) close_failed = true;
  }
  id_ = H5I_INVALID_HID;
}

bool Handle::close_file() {
  if (id_ < 0) return true;
  herr_t e = H5Fclose(id_);
  id_ = H5I_INVALID_HID;
  if (e < 0) close_failed = true;
  return e >= 0;
}

bool Handle::sync_and_close_file() {
  if (id_ < 0) return true;
  const bool synced = H5Fflush(id_, H5F_SCOPE_GLOBAL) >= 0;
  const bool closed = close_file();
  return synced && closed;
}

void silence_errors() { H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr); }

Handle collective_transfer() {
  hid_t p = H5Pcreate(H5P_DATASET_XFER);
  H5Pset_dxpl_mpio(p, H5FD_MPIO_COLLECTIVE);
  return Handle(p);
}

static Handle parallel_access(MPI_Comm comm) {
  hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
  H5Pset_fapl_mpio(fapl, comm, MPI_INFO_NULL);
  H5Pset_all_coll_metadata_ops(fapl, true);
  H5Pset_coll_metadata_write(fapl, true);
  return Handle(fapl);
}

Result<Handle> open_read(MPI_Comm comm, const std::string& path) {
  Status pre;
  if (comm_rank(comm) == 0) {
    std::error_code ec;
    auto st = std::filesystem::status(path, ec);
    if (ec || !std::filesystem::exists(st)) {
      pre = Status::input(fmt::format("{}: no such file", path));
    } else if (!std::filesystem::is_regular_file(st)) {
      pre = Status::input(fmt::format("{}: not a regular file", path));
    } else if (H5Fis_hdf5(path.c_str()) <= 0) {
      pre = Status::input(fmt::format("{}: not an HDF5 file, or damaged (truncated?)", path));
    }
  }
  LODESTONE_TRY(agree(comm, pre));
  Handle fapl = parallel_access(comm);
  hid_t f = H5Fopen(path.c_str(), H5F_ACC_RDONLY, fapl.get());
  Status s = f < 0 ? Status::input(fmt::format("{}: HDF5 could not open the file (damaged or truncated?)", path))
                   : Status::ok();
  Handle file(f);
  LODESTONE_TRY(agree(comm, s));
  return file;
}

Result<Handle> create(MPI_Comm comm, const std::string& path) {
  Handle fapl = parallel_access(comm);
  hid_t f = H5Fcreate(path.c_str(), H5F_ACC_EXCL, H5P_DEFAULT, fapl.get());
  Status s = f < 0 ? Status::input(fmt::format("{}: cannot create file (does the directory exist and is it writable?)", path))
                   : Status::ok();
  Handle file(f);
  LODESTONE_TRY(agree(comm, s));
  return file;
}

bool exists(hid_t loc, const std::string& path) {
  if (path == "/" || path.empty()) return true;
  // Check each component, as H5Lexists fails on a missing intermediate group.
  std::string partial;
  std::size_t pos = 0;
  while (pos < path.size()) {
    std::size_t next = path.find('/', pos + 1);
    partial = path.substr(0, next);
    if (!partial.empty() && partial != "/") {
      if (H5Lexists(loc, partial.c_str(), H5P_DEFAULT) <= 0) return false;
    }
    if (next == std::string::npos) break;
    pos = next;
  }
  return true;
}

Result<Handle> open_group(hid_t file, const std::string& path, const std::string& file_name) {
  if (!exists(file, path)) return Status::input(fmt::format("{}: no group '{}' in the file", file_name, path));
  H5O_info_t info;
  if (H5Oget_info_by_name2(file, path.c_str(), &info, H5O_INFO_BASIC, H5P_DEFAULT) < 0 || info.type != H5O_TYPE_GROUP)
    return Status::input(fmt::format("{}: '{}' is not a group", file_name, path));
  hid_t g = H5Gopen2(file, path.c_str(), H5P_DEFAULT);
  if (g < 0) return Status::input(fmt::format("{}: cannot open group '{}'", file_name, path));
  return Handle(g);
}

Result<Handle> create_group(hid_t file, const std::string& path) {
  if (path == "/" || path.empty()) {
    hid_t g = H5Gopen2(file, "/", H5P_DEFAULT);
    return Handle(g);
  }
  hid_t lcpl = H5Pcreate(H5P_LINK_CREATE);
  H5Pset_create_intermediate_group(lcpl, 1);
  hid_t g = H5Gcreate2(file, path.c_str(), lcpl, H5P_DEFAULT, H5P_DEFAULT);
  H5Pclose(lcpl);
  if (g < 0) return Status::input(fmt::format("cannot create group '{}'", path));
  return Handle(g);
}

bool has_attribute(hid_t obj, const std::string& name) { return H5Aexists(obj, name.c_str()) > 0; }

static Result<Handle> open_attribute(hid_t obj, const std::string& name) {
  if (!has_attribute(obj, name)) return Status::input(fmt::format("missing attribute '{}'", name));
  hid_t a = H5Aopen(obj, name.c_str(), H5P_DEFAULT);
  if (a < 0) return Status::input(fmt::format("cannot open attribute '{}'", name));
  Handle attr(a);
  Handle space(H5Aget_space(a));
  if (H5Sget_simple_extent_npoints(space.get()) != 1)
    return Status::input(fmt::format("attribute '{}' must be a single value", name));
  return attr;
}

Result<std::string> read_string_attribute(hid_t obj, const std::string& name) {
  auto attr = open_attribute(obj, name);
  if (!attr) return attr.status();
  Handle type(H5Aget_type(attr->get()));
  if (H5Tget_class(type.get()) != H5T_STRING)
    return Status::input(fmt::format("attribute '{}' must be a string", name));
  if (H5Tis_variable_str(type.get()) > 0) {
    Handle mem(H5Tcopy(H5T_C_S1));
    H5Tset_size(mem.get(), H5T_VARIABLE);
    H5Tset_cset(mem.get(), H5Tget_cset(type.get()));
    char* text = nullptr;
    if (H5Aread(attr->get(), mem.get(), &text) < 0 || text == nullptr)
      return Status::input(fmt::format("cannot read attribute '{}'", name));
    std::string out(text);
    H5free_memory(text);
    return out;
  }
  std::size_t size = H5Tget_size(type.get());
  if (size > (1u << 20)) return Status::input(fmt::format("attribute '{}' is too long", name));
  std::string buf(size, '\0');
  if (H5Aread(attr->get(), type.get(), buf.data()) < 0)
    return Status::input(fmt::format("cannot read attribute '{}'", name));
  auto end = buf.find('\0');
  if (end != std::string::npos) buf.resize(end);
  while (!buf.empty() && buf.back() == ' ') buf.pop_back();  // space-padded strings
  return buf;
}

Result<std::int64_t> read_int_attribute(hid_t obj, const std::string& name) {
  auto attr = open_attribute(obj, name);
  if (!attr) return attr.status();
  Handle type(H5Aget_type(attr->get()));
  if (H5Tget_class(type.get()) != H5T_INTEGER)
    return Status::input(fmt::format("attribute '{}' must be an integer", name));
  std::int64_t v = 0;
  if (H5Aread(attr->get(), H5T_NATIVE_INT64, &v) < 0)
    return Status::input(fmt::format("attribute '{}' does not fit a 64-bit integer", name));
  return v;
}

Result<double> read_double_attribute(hid_t obj, const std::string& name) {
  auto attr = open_attribute(obj, name);
  if (!attr) return attr.status();
  Handle type(H5Aget_type(attr->get()));
  auto cls = H5Tget_class(type.get());
  if (cls != H5T_FLOAT && cls != H5T_INTEGER)
    return Status::input(fmt::format("attribute '{}' must be a number", name));
  double v = 0;
  if (H5Aread(attr->get(), H5T_NATIVE_DOUBLE, &v) < 0)
    return Status::input(fmt::format("cannot read attribute '{}'", name));
  return v;
}

static Status write_scalar_attribute(hid_t obj, const std::string& name, hid_t file_type, hid_t mem_type,
                                     const void* value) {
  if (has_attribute(obj, name)) H5Adelete(obj, name.c_str());
  Handle space(H5Screate(H5S_SCALAR));
  Handle attr(H5Acreate2(obj, name.c_str(), file_type, space.get(), H5P_DEFAULT, H5P_DEFAULT));
  if (!attr.valid() || H5Awrite(attr.get(), mem_type, value) < 0)
    return Status::input(fmt::format("cannot write attribute '{}'", name));
  return Status::ok();
}

Status write_string_attribute(hid_t obj, const std::string& name, const std::string& value) {
  Handle type(H5Tcopy(H5T_C_S1));
  H5Tset_size(type.get(), value.empty() ? 1 : value.size());
  H5Tset_strpad(type.get(), H5T_STR_NULLPAD);
  H5Tset_cset(type.get(), H5T_CSET_UTF8);
  return write_scalar_attribute(obj, name, type.get(), type.get(), value.c_str());
}

Status write_int_attribute(hid_t obj, const std::string& name, std::int64_t value) {
  return write_scalar_attribute(obj, name, H5T_STD_I64LE, H5T_NATIVE_INT64, &value);
}

Status write_double_attribute(hid_t obj, const std::string& name, double value) {
  return write_scalar_attribute(obj, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, &value);
}

Result<DatasetShape> dataset_shape(hid_t dataset) {
  DatasetShape out;
  Handle space(H5Dget_space(dataset));
  int nd = H5Sget_simple_extent_ndims(space.get());
  if (nd < 0) return Status::input("cannot read dataset shape");
  std::vector<hsize_t> d(static_cast<std::size_t>(nd));
  H5Sget_simple_extent_dims(space.get(), d.data(), nullptr);
  for (auto x : d) out.dims.push_back(static_cast<std::int64_t>(x));
  Handle type(H5Dget_type(dataset));
  out.type_class = H5Tget_class(type.get());
  out.type_size = H5Tget_size(type.get());
  return out;
}

static Status transfer_block(hid_t dataset, hid_t mem_type, const std::vector<hsize_t>& start,
                             const std::vector<hsize_t>& count, void* buf, bool write) {
  Handle file_space(H5Dget_space(dataset));
  // An empty dataset has nothing to move (and no storage for MPI-IO to touch);
  // its size is the same on every rank, so every rank skips together.
  if (H5Sget_simple_extent_npoints(file_space.get()) == 0) return Status::ok();
  hsize_t total = 1;
  for (auto c : count) total *= c;
  Handle mem_space(H5Screate_simple(1, &total, nullptr));
  if (total == 0) {
    H5Sselect_none(file_space.get());
    H5Sselect_none(mem_space.get());
  } else {
    H5Sselect_hyperslab(file_space.get(), H5S_SELECT_SET, start.data(), nullptr, count.data(), nullptr);
  }
  Handle xfer = collective_transfer();
  herr_t e = write ? H5Dwrite(dataset, mem_type, mem_space.get(), file_space.get(), xfer.get(), buf)
                   : H5Dread(dataset, mem_type, mem_space.get(), file_space.get(), xfer.get(), buf);
  if (e < 0) {
    char name[256] = "?";
    H5Iget_name(dataset, name, sizeof name);
    return Status::input(write ? fmt::format("dataset '{}': HDF5 write failed (disk full or file-size limit?)", name)
                               : fmt::format("dataset '{}': HDF5 could not read it (damaged file?)", name));
  }
  return Status::ok();
}

Status read_range(hid_t dataset, hid_t mem_type, std::int64_t offset, std::int64_t count, void* out) {
  return transfer_block(dataset, mem_type, {static_cast<hsize_t>(offset)}, {static_cast<hsize_t>(count)}, out, false);
}

Status write_range(hid_t dataset, hid_t mem_type, std::int64_t offset, std::int64_t count, const void* in) {
  return transfer_block(dataset, mem_type, {static_cast<hsize_t>(offset)}, {static_cast<hsize_t>(count)},
                        const_cast<void*>(in), true);
}

Status read_rows(hid_t dataset, hid_t mem_type, std::int64_t row, std::int64_t nrows, std::int64_t ncols, void* out) {
  return transfer_block(dataset, mem_type, {static_cast<hsize_t>(row), 0},
                        {static_cast<hsize_t>(nrows), static_cast<hsize_t>(ncols)}, out, false);
}

Status write_rows(hid_t dataset, hid_t mem_type, std::int64_t row, std::int64_t nrows, std::int64_t ncols,
                  const void* in) {
  return transfer_block(dataset, mem_type, {static_cast<hsize_t>(row), 0},
                        {static_cast<hsize_t>(nrows), static_cast<hsize_t>(ncols)}, const_cast<void*>(in), true);
}

Result<Handle> create_dataset(hid_t loc, const std::string& name, hid_t file_type,
                              const std::vector<std::int64_t>& dims) {
  std::vector<hsize_t> d(dims.begin(), dims.end());
  Handle space(H5Screate_simple(static_cast<int>(d.size()), d.data(), nullptr));
  // Every dataset Lodestone creates is then written whole, so the file space is
  // not pre-filled: parallel HDF5 allocates it at creation and would otherwise
  // write the fill value over all of it first, doubling the bytes written.
  Handle dcpl(H5Pcreate(H5P_DATASET_CREATE));
  H5Pset_fill_time(dcpl.get(), H5D_FILL_TIME_NEVER);
  hid_t ds = H5Dcreate2(loc, name.c_str(), file_type, space.get(), H5P_DEFAULT, dcpl.get(), H5P_DEFAULT);
  if (ds < 0) return Status::input(fmt::format("cannot create dataset '{}'", name));
  return Handle(ds);
}

}  // namespace lodestone::h5

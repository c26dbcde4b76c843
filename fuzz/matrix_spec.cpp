// Parsing matrix specs, writing them as HDF5 files, and the load-and-check oracle
// shared by the matrix fuzz targets (see matrix_spec.hpp for the language).
#include "matrix_spec.hpp"

#include <hdf5.h>
#include <petscmat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <sstream>

#include "lodestone/matrix.hpp"
#include "lodestone/runtime.hpp"

namespace lodestone::fuzz {
namespace {

bool known_type(const std::string& t) {
  static const char* types[] = {"i8", "i16", "i32", "i64", "u8", "u32", "u64", "f32", "f64", "str", "vstr"};
  for (const char* x : types)
    if (t == x) return true;
  return false;
}

hid_t file_type(const std::string& t) {
  if (t == "i8") return H5T_STD_I8LE;
  if (t == "i16") return H5T_STD_I16LE;
  if (t == "i32") return H5T_STD_I32LE;
  if (t == "i64") return H5T_STD_I64LE;
  if (t == "u8") return H5T_STD_U8LE;
  if (t == "u32") return H5T_STD_U32LE;
  if (t == "u64") return H5T_STD_U64LE;
  if (t == "f32") return H5T_IEEE_F32LE;
  return H5T_IEEE_F64LE;
}

bool parse_int(const std::string& s, std::int64_t* out) {
  errno = 0;
  char* end = nullptr;
  long long v = std::strtoll(s.c_str(), &end, 0);
  if (errno != 0 || end == s.c_str() || *end != '\0') return false;
  *out = v;
  return true;
}

bool parse_real(const std::string& s, double* out) {
  char* end = nullptr;
  double v = std::strtod(s.c_str(), &end);
  if (end == s.c_str() || *end != '\0') return false;
  *out = v;
  return true;
}

// "s" -> scalar, "N" -> {N}, "NxM" -> {N, M}; element count limited.
bool parse_dims(const std::string& s, std::vector<std::int64_t>* dims) {
  dims->clear();
  if (s == "s") return true;
  std::int64_t total = 1;
  std::size_t pos = 0;
  while (pos <= s.size()) {
    std::size_t x = s.find('x', pos);
    std::string part = s.substr(pos, x == std::string::npos ? std::string::npos : x - pos);
    std::int64_t d = 0;
    if (!parse_int(part, &d) || d < 0 || d > kMaxElements) return false;
    dims->push_back(d);
    total *= d;
    if (total > kMaxElements || dims->size() > 2) return false;
    if (x == std::string::npos) break;
    pos = x + 1;
  }
  return !dims->empty();
}

std::int64_t element_count(const Item& it) {
  std::int64_t n = 1;
  for (auto d : it.dims) n *= d;
  return n;
}

// Reads the values of an item from the remaining tokens.
bool parse_values(Item& it, std::istringstream& in, const std::string& rest_of_line) {
  if (it.is_string()) {
    it.text = rest_of_line;
    return it.text.size() <= 256;
  }
  std::string tok;
  while (in >> tok) {
    if (static_cast<std::int64_t>(it.ints.size() + it.reals.size()) >= kMaxElements) return false;
    if (it.is_float()) {
      double v = 0;
      if (!parse_real(tok, &v)) return false;
      it.reals.push_back(v);
    } else {
      std::int64_t v = 0;
      if (!parse_int(tok, &v)) return false;
      it.ints.push_back(v);
    }
  }
  return true;
}

const Item* find(const std::vector<Item>& items, const std::string& name) {
  for (const auto& it : items)
    if (it.name == name) return &it;
  return nullptr;
}

// Tridiagonal (-1, 2, -1) entries for an n x n matrix.
void tridiagonal_csr(std::int64_t n, MatrixSpec& spec) {
  Item off{"row_offsets", "i64", {n + 1}, {}, {}, {}};
  Item col{"column_indices", "i64", {}, {}, {}, {}};
  Item val{"values", "f64", {}, {}, {}, {}};
  off.ints.push_back(0);
  for (std::int64_t i = 0; i < n; ++i) {
    for (std::int64_t j = std::max<std::int64_t>(0, i - 1); j <= std::min(n - 1, i + 1); ++j) {
      col.ints.push_back(j);
      val.reals.push_back(i == j ? 2.0 : -1.0);
    }
    off.ints.push_back(static_cast<std::int64_t>(col.ints.size()));
  }
  col.dims = {static_cast<std::int64_t>(col.ints.size())};
  val.dims = col.dims;
  spec.dsets.push_back(std::move(off));
  spec.dsets.push_back(std::move(col));
  spec.dsets.push_back(std::move(val));
}

bool write_item_data(hid_t obj, bool is_attr, const Item& it) {
  const std::int64_t n = element_count(it);
  if (it.is_float()) {
    std::vector<double> buf(static_cast<std::size_t>(n), 0.0);
    for (std::size_t i = 0; i < buf.size() && i < it.reals.size(); ++i) buf[i] = it.reals[i];
    return (is_attr ? H5Awrite(obj, H5T_NATIVE_DOUBLE, buf.data())
                    : H5Dwrite(obj, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf.data())) >= 0;
  }
  std::vector<std::int64_t> buf(static_cast<std::size_t>(n), 0);
  for (std::size_t i = 0; i < buf.size() && i < it.ints.size(); ++i) buf[i] = it.ints[i];
  return (is_attr ? H5Awrite(obj, H5T_NATIVE_INT64, buf.data())
                  : H5Dwrite(obj, H5T_NATIVE_INT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf.data())) >= 0;
}

}  // namespace

bool write_item(hid_t group, bool is_attr, const Item& it) {
  hid_t type = H5I_INVALID_HID;
  if (it.is_string()) {
    type = H5Tcopy(H5T_C_S1);
    H5Tset_size(type, it.type == "vstr" ? H5T_VARIABLE : std::max<std::size_t>(1, it.text.size()));
  } else {
    type = H5Tcopy(file_type(it.type));
  }
  std::vector<hsize_t> d(it.dims.begin(), it.dims.end());
  hid_t space = d.empty() ? H5Screate(H5S_SCALAR) : H5Screate_simple(static_cast<int>(d.size()), d.data(), nullptr);
  hid_t obj = is_attr ? H5Acreate2(group, it.name.c_str(), type, space, H5P_DEFAULT, H5P_DEFAULT)
                      : H5Dcreate2(group, it.name.c_str(), type, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
  bool ok = obj >= 0;
  if (ok && it.is_string()) {
    if (element_count(it) == 1) {
      const char* p = it.text.c_str();
      if (it.type == "vstr") {
        ok = (is_attr ? H5Awrite(obj, type, &p) : H5Dwrite(obj, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, &p)) >= 0;
      } else {
        std::string padded = it.text;
        padded.resize(std::max<std::size_t>(1, it.text.size()), '\0');
        ok = (is_attr ? H5Awrite(obj, type, padded.data())
                      : H5Dwrite(obj, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, padded.data())) >= 0;
      }
    }
  } else if (ok) {
    ok = write_item_data(obj, is_attr, it);
  }
  if (obj >= 0) is_attr ? H5Aclose(obj) : H5Dclose(obj);
  H5Sclose(space);
  H5Tclose(type);
  return ok;
}

namespace {

[[noreturn]] void oracle_failure(const std::string& what) {
  std::fprintf(stderr, "fuzz oracle: %s\n", what.c_str());
  std::abort();
}

// Reads a whole 1-D dataset with the given memory type (empty on failure).
template <class T>
std::vector<T> read_all(hid_t group, const char* name, hid_t mem_type) {
  std::vector<T> out;
  hid_t ds = H5Dopen2(group, name, H5P_DEFAULT);
  if (ds < 0) return out;
  hid_t space = H5Dget_space(ds);
  hssize_t n = H5Sget_simple_extent_npoints(space);
  if (n > 0) {
    out.resize(static_cast<std::size_t>(n));
    if (H5Dread(ds, mem_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, out.data()) < 0) out.clear();
  }
  H5Sclose(space);
  H5Dclose(ds);
  return out;
}

void check_csr(const Matrix& m, const std::string& path, const std::string& group_path) {
  const std::int64_t n = m.info().rows;
  hid_t file = H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
  if (file < 0) oracle_failure("cannot reopen the file to check it");
  hid_t group = H5Gopen2(file, group_path.c_str(), H5P_DEFAULT);
  auto off = read_all<std::int64_t>(group, "row_offsets", H5T_NATIVE_INT64);
  auto col = read_all<std::int64_t>(group, "column_indices", H5T_NATIVE_INT64);
  auto val = read_all<double>(group, "values", H5T_NATIVE_DOUBLE);
  H5Gclose(group);
  H5Fclose(file);
  if (static_cast<std::int64_t>(off.size()) != n + 1) oracle_failure("Matrix::load accepted the file but row_offsets does not have rows+1 entries");
  if (col.size() != val.size()) oracle_failure("Matrix::load accepted the file but column_indices and values differ in length");
  if (m.info().nnz != static_cast<std::int64_t>(col.size())) oracle_failure("Matrix::load accepted the file but its nnz is not the stored entry count");
  if (off.front() != 0 || off.back() != static_cast<std::int64_t>(col.size()))
    oracle_failure("Matrix::load accepted the file but row_offsets does not run from 0 to nnz");
  for (std::int64_t r = 0; r < n; ++r) {
    const std::int64_t b = off[static_cast<std::size_t>(r)], e = off[static_cast<std::size_t>(r) + 1];
    if (b > e || b < 0 || e > static_cast<std::int64_t>(col.size())) oracle_failure("Matrix::load accepted the file but row_offsets is not monotone");
    PetscInt len = 0;
    const PetscInt* c = nullptr;
    const PetscScalar* v = nullptr;
    if (MatGetRow(m.petsc(), static_cast<PetscInt>(r), &len, &c, &v)) oracle_failure("MatGetRow failed on a loaded matrix");
    if (len != e - b) oracle_failure("Matrix::load accepted the file but a row of the matrix has a different entry count than the file");
    for (std::int64_t k = b; k < e; ++k) {
      const std::int64_t fc = col[static_cast<std::size_t>(k)];
      const double fv = val[static_cast<std::size_t>(k)];
      if (fc < 0 || fc >= n) oracle_failure("Matrix::load accepted the file but a column index is outside [0, n)");
      if (k > b && fc <= col[static_cast<std::size_t>(k) - 1]) oracle_failure("Matrix::load accepted the file but a row's columns are not strictly increasing");
      if (!std::isfinite(fv)) oracle_failure("Matrix::load accepted the file but a value is not finite");
      if (c[k - b] != fc || PetscRealPart(v[k - b]) != fv) oracle_failure("Matrix::load accepted the file but an entry differs from the file");
    }
    MatRestoreRow(m.petsc(), static_cast<PetscInt>(r), &len, &c, &v);
  }
}

}  // namespace

MatrixSpec parse_spec(std::string_view text) {
  MatrixSpec spec;
  std::size_t pos = 0;
  while (pos < text.size()) {
    std::size_t nl = text.find('\n', pos);
    std::string line(text.substr(pos, nl == std::string_view::npos ? std::string_view::npos : nl - pos));
    pos = nl == std::string_view::npos ? text.size() : nl + 1;
    if (auto hash = line.find('#'); hash != std::string::npos) line.resize(hash);
    std::istringstream in(line);
    std::string word;
    if (!(in >> word)) continue;
    if (word == "group" || word == "load") {
      std::string p;
      if (in >> p) (word == "group" ? spec.group : spec.load_group) = p;
    } else if (word == "chunk") {
      std::string t;
      std::int64_t c = 0;
      if (in >> t && parse_int(t, &c) && c >= 1 && c <= (std::int64_t{1} << 22)) spec.chunk = c;
    } else if (word == "attr" || word == "dset") {
      if (spec.attrs.size() + spec.dsets.size() >= 32) continue;
      Item it;
      if (!(in >> it.name >> it.type) || !known_type(it.type)) continue;
      if (word == "dset") {
        std::string dims;
        if (!(in >> dims) || !parse_dims(dims, &it.dims)) continue;
      }
      std::string rest;
      std::getline(in >> std::ws, rest);
      std::istringstream values(rest);
      if (!parse_values(it, values, rest)) continue;
      if (word == "attr") {
        const std::size_t count = it.is_string() ? 1 : it.ints.size() + it.reals.size();
        if (count == 0) continue;
        if (count > 1) it.dims = {static_cast<std::int64_t>(count)};
        spec.attrs.push_back(std::move(it));
      } else {
        spec.dsets.push_back(std::move(it));
      }
    }
  }
  return spec;
}

void add_default_datasets(MatrixSpec& spec) {
  if (!spec.dsets.empty()) return;
  std::int64_t n = 4;
  if (const Item* rows = find(spec.attrs, "rows"); rows && !rows->ints.empty() && rows->ints[0] >= 1 &&
                                                    rows->ints[0] <= 200)
    n = rows->ints[0];
  const Item* layout = find(spec.attrs, "layout");
  if (layout && layout->text == "dense") {
    Item val{"values", "f64", {n, n}, {}, {}, {}};
    val.reals.assign(static_cast<std::size_t>(n * n), 0.0);
    for (std::int64_t i = 0; i < n; ++i) {
      val.reals[static_cast<std::size_t>(i * n + i)] = 2.0;
      if (i + 1 < n) val.reals[static_cast<std::size_t>(i * n + i + 1)] = val.reals[static_cast<std::size_t>((i + 1) * n + i)] = -1.0;
    }
    spec.dsets.push_back(std::move(val));
  } else {
    tridiagonal_csr(n, spec);
  }
}

void add_default_attributes(MatrixSpec& spec) {
  if (!spec.attrs.empty()) return;
  std::int64_t n = 1;
  bool dense = false;
  if (const Item* off = find(spec.dsets, "row_offsets"); off && off->dims.size() == 1 && off->dims[0] >= 2) {
    n = off->dims[0] - 1;
  } else if (const Item* val = find(spec.dsets, "values"); val && val->dims.size() == 2) {
    n = val->dims[0];
    dense = true;
  }
  spec.attrs.push_back(Item{"format_version", "i64", {}, {1}, {}, {}});
  spec.attrs.push_back(Item{"layout", "str", {}, {}, {}, dense ? "dense" : "csr"});
  spec.attrs.push_back(Item{"rows", "i64", {}, {n}, {}, {}});
  spec.attrs.push_back(Item{"cols", "i64", {}, {n}, {}, {}});
  spec.attrs.push_back(Item{"symmetric", "i64", {}, {0}, {}, {}});
}

bool write_spec(const MatrixSpec& spec, const std::string& path) {
  std::filesystem::remove(path);
  hid_t file = H5Fcreate(path.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
  if (file < 0) return false;
  bool ok = true;
  hid_t group = H5I_INVALID_HID;
  if (spec.group == "/") {
    group = H5Gopen2(file, "/", H5P_DEFAULT);
  } else {
    hid_t lcpl = H5Pcreate(H5P_LINK_CREATE);
    H5Pset_create_intermediate_group(lcpl, 1);
    group = H5Gcreate2(file, spec.group.c_str(), lcpl, H5P_DEFAULT, H5P_DEFAULT);
    H5Pclose(lcpl);
  }
  if (group < 0) ok = false;
  for (const auto& a : spec.attrs)
    if (ok) ok = write_item(group, true, a);
  for (const auto& d : spec.dsets)
    if (ok) ok = write_item(group, false, d);
  if (group >= 0) H5Gclose(group);
  if (H5Fclose(file) < 0) ok = false;
  return ok;
}

std::string scratch_path(const char* tag) {
  std::error_code ec;
  const bool shm = std::filesystem::is_directory("/dev/shm", ec);
  const char* tmp = std::getenv("TMPDIR");
  std::string dir = shm ? "/dev/shm" : (tmp ? tmp : "/tmp");
  return dir + "/lodestone-fuzz-" + tag + "-" + std::to_string(::getpid()) + ".h5";
}

void start_runtime() {
  static int argc = 1;
  static char name[] = "lodestone-fuzz";
  static char* args[] = {name, nullptr};
  static char** argv = args;
  static Runtime* runtime = new Runtime(&argc, &argv);  // lives as long as the process
  if (!runtime->ok()) {
    std::fprintf(stderr, "fuzz: MPI/PETSc start-up failed\n");
    std::abort();
  }
  // Load one valid matrix before fuzzing starts: the first parallel HDF5 open
  // loads OpenMPI's MPI-IO plugins, whose lifetime allocations would otherwise
  // look like a leak of the first input.
  MatrixSpec warm = parse_spec("dset row_offsets i64 2 0 1\ndset column_indices i64 1 0\ndset values f64 1 1\n");
  add_default_attributes(warm);
  const std::string path = scratch_path("warm-up");
  if (write_spec(warm, path)) load_and_check(warm, path);
  std::filesystem::remove(path);
}

void load_and_check(const MatrixSpec& spec, const std::string& path) {
  LoadOptions options;
  options.group = spec.load_group.empty() ? spec.group : spec.load_group;
  if (spec.chunk > 0) {
    // At most 256 read rounds, so one input stays well inside the time limit.
    std::int64_t largest = 0;
    for (const auto& d : spec.dsets) largest = std::max(largest, element_count(d));
    options.chunk_entries = std::max(spec.chunk, largest / 256);
  }
  auto m = Matrix::load(MPI_COMM_SELF, path, options);
  if (!m) {
    if (m.status().message().empty()) oracle_failure("Matrix::load refused the file with an empty message");
    if (m.status().kind() != ErrorKind::input) oracle_failure("Matrix::load refused the file with a status other than input (exit 1)");
    return;
  }
  const MatrixInfo& info = m->info();
  if (info.rows != info.cols || info.rows <= 0) oracle_failure("Matrix::load accepted the file but its size is not square and positive");
  if (info.row_begin != 0 || info.row_end != info.rows) oracle_failure("Matrix::load accepted the file but one rank does not hold every row");
  PetscInt rows = 0, cols = 0;
  MatGetSize(m->petsc(), &rows, &cols);
  if (rows != info.rows || cols != info.cols) oracle_failure("Matrix::load accepted the file but the PETSc matrix has a different size than the header");
  if (info.layout == Layout::csr) check_csr(*m, path, options.group);
  else if (info.nnz != info.rows * info.cols) oracle_failure("Matrix::load accepted the file but a dense matrix does not count rows*cols entries");
}

}  // namespace lodestone::fuzz

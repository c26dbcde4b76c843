// Matrix specs for the fuzz targets: a small text language that describes an
// HDF5 matrix file, so seed corpora are readable text and the fuzzer mutates
// the matrix (attributes, dataset types, shapes and entries) rather than the
// HDF5 container format, which is HDF5's business.
//
// One directive a line; '#' starts a comment; unknown or malformed lines are ignored.
//   group PATH                   where the matrix group is created (default /matrix)
//   load PATH                    the group Matrix::load is asked for (default: the group)
//   chunk N                      LoadOptions::chunk_entries (1 .. 2^22)
//   attr NAME TYPE VALUE...      an attribute of the group; one value is a scalar, more an array
//   dset NAME TYPE DIMS VALUE... a dataset in the group; DIMS is "s" (scalar), "N" or "NxM";
//                                values fill it in order, the rest are zero
// TYPE is one of i8 i16 i32 i64 u8 u32 u64 f32 f64 str vstr (a string takes the rest of the line).
// Numbers for integer types are read as 64-bit integers, for float types as doubles
// (nan, inf and hex floats allowed). A dataset holds at most 65536 elements.
#pragma once

#include <hdf5.h>

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

namespace lodestone::fuzz {

struct Item {
  std::string name;
  std::string type;                   // as written in the spec
  std::vector<std::int64_t> dims;     // empty: scalar (attributes: scalar when one value)
  std::vector<std::int64_t> ints;     // integer types
  std::vector<double> reals;          // float types
  std::string text;                   // string types
  bool is_string() const { return type == "str" || type == "vstr"; }
  bool is_float() const { return type == "f32" || type == "f64"; }
};

struct MatrixSpec {
  std::string group = "/matrix";
  std::string load_group;             // empty: same as group
  std::int64_t chunk = 0;             // 0: library default
  std::vector<Item> attrs;
  std::vector<Item> dsets;
};

inline constexpr std::int64_t kMaxElements = 65536;

MatrixSpec parse_spec(std::string_view text);

// When the spec has no datasets: a valid tridiagonal matrix whose size and layout
// follow the spec's own `rows` and `layout` attributes (so header mutations reach the readers).
void add_default_datasets(MatrixSpec& spec);
// When the spec has no attributes: a valid header for the spec's datasets.
void add_default_attributes(MatrixSpec& spec);

// Writes the spec as a new HDF5 file (serial driver). False if HDF5 refused some
// part (e.g. a name it cannot hold); such inputs are skipped.
bool write_spec(const MatrixSpec& spec, const std::string& path);

// Creates one attribute or dataset of `obj` from an item (closes what it opened);
// false if HDF5 refused it.
bool write_item(hid_t obj, bool is_attr, const Item& it);

// A file name unique to this process, on a memory file system when there is one.
std::string scratch_path(const char* tag);

// Starts MPI and PETSc once for the fuzzing process (Lodestone's Runtime).
void start_runtime();

// Loads `path` with Matrix::load on MPI_COMM_SELF as the spec asks and, when the
// load succeeds, checks the matrix against the file's own arrays: sizes, and for
// CSR every row's columns (strictly increasing, inside [0, n)) and values (finite,
// equal). A disagreement is a bug: it aborts, and libFuzzer records the input.
void load_and_check(const MatrixSpec& spec, const std::string& path);

}  // namespace lodestone::fuzz

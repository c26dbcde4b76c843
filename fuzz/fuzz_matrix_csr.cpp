// Fuzz target: CSR (and dense) dataset validation through Matrix::load.
//
// The input is a matrix spec (matrix_spec.hpp). Its datasets (row_offsets,
// column_indices, values: types, shapes, entries) and the read chunk size are
// mutated; when it has no attributes, a valid header matching the datasets is
// added. Every input must end in a loaded matrix that equals the file's arrays
// entry for entry, or a refusal with a message; anything else is a bug.
#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <string_view>

#include "matrix_spec.hpp"

extern "C" int LLVMFuzzerInitialize(int*, char***) {
  lodestone::fuzz::start_runtime();
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  using namespace lodestone::fuzz;
  if (size > 16384) return 0;
  MatrixSpec spec = parse_spec(std::string_view(reinterpret_cast<const char*>(data), size));
  add_default_attributes(spec);
  static const std::string path = scratch_path("csr");
  if (write_spec(spec, path)) load_and_check(spec, path);
  std::filesystem::remove(path);
  return 0;
}

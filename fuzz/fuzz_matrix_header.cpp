// Fuzz target: the matrix-layout header (group attributes) through Matrix::load.
//
// The input is a matrix spec (matrix_spec.hpp). Its attributes are mutated;
// when it has no datasets, a valid tridiagonal matrix of the declared size and
// layout is added, so a header that passes validation reaches the readers.
// Every input must end in a loaded matrix that matches the file, or a refusal
// with a message; a crash, sanitizer report or oracle abort is a bug.
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
  if (size > 4096) return 0;
  MatrixSpec spec = parse_spec(std::string_view(reinterpret_cast<const char*>(data), size));
  add_default_datasets(spec);
  static const std::string path = scratch_path("header");
  if (write_spec(spec, path)) load_and_check(spec, path);
  std::filesystem::remove(path);
  return 0;
}

// SolveResult files: the public entry points over io/result_file.
#include "lodestone/result.hpp"

#include "io/result_file.hpp"
#include "support/log_stage.hpp"

namespace lodestone {

Status write_result(MPI_Comm comm, const std::string& path, const SolveResult& result,
                    const std::vector<std::string>& inputs) {
  LogStage stage("Write result");
  return io::write_result_file(comm, path, result, inputs);
}

Result<SolveResult> read_result(MPI_Comm comm, const std::string& path, std::int64_t row_begin, std::int64_t row_end) {
  return io::read_result_file(comm, path, row_begin, row_end);
}

}  // namespace lodestone

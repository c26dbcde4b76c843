// The results file layout, version 1 (docs/results-file.md): names, the header
// (attributes and shapes, cheap to read) and the collective reader and writer
// behind lodestone::write_result / read_result.
//
// Eigenvectors are written and read by row block with collective hyperslab
// selections; the small replicated arrays (eigenvalues, residuals, history)
// are written by rank 0's selection alone and read by every rank.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>
#include <vector>

#include "lodestone/result.hpp"

namespace lodestone::io::result_layout {

inline constexpr std::int64_t kFormatVersion = 1;
inline constexpr const char* kFileKindValue = "result";

// Root attributes.
inline constexpr const char* kFileKind = "file_kind";
inline constexpr const char* kFormat = "format_version";
inline constexpr const char* kConverged = "converged";
inline constexpr const char* kMethod = "method";
inline constexpr const char* kSelection = "selection";
inline constexpr const char* kTolerance = "tolerance";
inline constexpr const char* kNormEstimate = "norm_estimate";
inline constexpr const char* kMatvecs = "matvecs";
inline constexpr const char* kIterations = "iterations";
inline constexpr const char* kRanks = "ranks";
inline constexpr const char* kFingerprint = "matrix_fingerprint";
inline constexpr const char* kElapsed = "elapsed_seconds";

// Root datasets.
inline constexpr const char* kEigenvalues = "eigenvalues";
inline constexpr const char* kEigenvaluesImag = "eigenvalues_imag";
inline constexpr const char* kEigenvectors = "eigenvectors";
inline constexpr const char* kResidualNorms = "residual_norms";

// The history group and its datasets.
inline constexpr const char* kHistory = "history";
inline constexpr const char* kHistIteration = "iteration";
inline constexpr const char* kHistMatvecs = "matvecs";
inline constexpr const char* kHistSeconds = "seconds";
inline constexpr const char* kHistConverged = "converged";
inline constexpr const char* kHistEstimates = "estimates";
inline constexpr const char* kHistResiduals = "residuals";
// The most history records a results file may hold: a solve keeps its history
// within this (state/history_cap.hpp), and a reader refuses a file claiming more.
inline constexpr std::int64_t kMaxHistoryRecords = 4096;

}  // namespace lodestone::io::result_layout

namespace lodestone::io {

// Everything in a results file except the vectors and the history arrays.
struct ResultHeader {
  std::int64_t rows = 0;     // n: rows of /eigenvectors
  std::int64_t pairs = 0;    // K
  std::int64_t history = 0;  // H: history records
  std::vector<double> eigenvalues;
  std::vector<double> eigenvalues_imag;
  std::vector<double> residual_norms;
  std::int64_t converged = 0;
  std::string method;
  std::string selection;
  double tolerance = 0;
  double norm_estimate = 0;
  std::int64_t matvecs = 0;
  std::int64_t iterations = 0;
  std::int64_t ranks = 0;
  std::uint64_t matrix_fingerprint = 0;
  double elapsed_seconds = 0;
};

// The 16-hex-digit text form of a fingerprint, as stored and printed.
std::string fingerprint_text(std::uint64_t fingerprint);

// Collective. True (on every rank) if `path` is an HDF5 file whose root says
// file_kind = "result"; false for any other file, readable or not.
bool is_result_file(MPI_Comm comm, const std::string& path);

// Collective. Reads and validates the attributes, the small datasets and every
// shape, but not the eigenvectors or the history arrays.
Result<ResultHeader> read_result_header(MPI_Comm comm, const std::string& path);

// Eigenvector rows move between memory and file in pieces of at most this many
// values per rank and transfer: one MPI-IO transfer stays far below its 2 GiB
// limit, and the row-major staging buffer stays small (32 MiB).
inline constexpr std::int64_t kResultPieceEntries = std::int64_t{1} << 22;

// Collective. See lodestone::write_result / read_result. Tests pass a small
// piece_entries to exercise the piecewise transfer.
Status write_result_file(MPI_Comm comm, const std::string& path, const SolveResult& result,
                         const std::vector<std::string>& inputs, std::int64_t piece_entries = kResultPieceEntries);
Result<SolveResult> read_result_file(MPI_Comm comm, const std::string& path, std::int64_t row_begin,
                                     std::int64_t row_end, std::int64_t piece_entries = kResultPieceEntries);

}  // namespace lodestone::io

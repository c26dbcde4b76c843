// Names in the checkpoint file layout, version 1 (docs/checkpoint-file.md).
#pragma once

namespace lodestone::ckpt {

inline constexpr const char* kFileKind = "file_kind";          // root attr, "checkpoint"
inline constexpr const char* kKindValue = "checkpoint";
inline constexpr const char* kFormat = "format_version";        // root attr
inline constexpr const char* kWrittenAt = "written_at";         // root attr, UTC ISO 8601
inline constexpr const char* kWrittenBy = "written_by_ranks";   // root attr
inline constexpr const char* kWriter = "writer";                // root attr, "lodestone 0.1.0"

// Group /run: what the checkpoint belongs to.
inline constexpr const char* kRun = "/run";
inline constexpr const char* kFingerprint = "matrix_fingerprint";  // uint64 attr
inline constexpr const char* kRows = "rows";                        // int64 attr
inline constexpr const char* kOptions = "/run/options";             // one string attr per option

// Group /progress: counters.
inline constexpr const char* kProgress = "/progress";
inline constexpr const char* kIterations = "iterations";
inline constexpr const char* kMatvecs = "matvecs";
inline constexpr const char* kConverged = "converged";
inline constexpr const char* kElapsed = "elapsed_seconds";

// Group /state: the method's SolverState.
inline constexpr const char* kState = "/state";
inline constexpr const char* kMethod = "method";
inline constexpr const char* kBlocks = "/state/blocks";      // float64[columns, rows] each
inline constexpr const char* kArrays = "/state/arrays";      // float64[length] each
inline constexpr const char* kCounters = "/state/counters";  // one int64 attr per counter
inline constexpr const char* kChecksum = "checksum";         // uint64 attr on each block; on /state for the rest

// Group /history.
inline constexpr const char* kHistory = "/history";
inline constexpr const char* kHistIteration = "iteration";  // int64[H]
inline constexpr const char* kHistMatvecs = "matvecs";      // int64[H]
inline constexpr const char* kHistSeconds = "seconds";      // float64[H]
inline constexpr const char* kHistConverged = "converged";  // int64[H]
inline constexpr const char* kHistEstimates = "estimates";  // float64[H, W]
inline constexpr const char* kHistResiduals = "residuals";  // float64[H, W]

}  // namespace lodestone::ckpt

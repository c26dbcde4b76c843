// Names and limits of the matrix file layout, version 1 (README "Matrix file layout").
#pragma once

#include <cstdint>

namespace lodestone::layout {

inline constexpr std::int64_t kFormatVersion = 1;
inline constexpr const char* kDefaultGroup = "/matrix";

// Group attributes.
inline constexpr const char* kLayout = "layout";
inline constexpr const char* kRows = "rows";
inline constexpr const char* kCols = "cols";
inline constexpr const char* kSymmetric = "symmetric";
inline constexpr const char* kFormat = "format_version";

// Datasets.
inline constexpr const char* kRowOffsets = "row_offsets";
inline constexpr const char* kColumnIndices = "column_indices";
inline constexpr const char* kValues = "values";

}  // namespace lodestone::layout

// Partition-independent checksums of checkpoint contents (state/checkpoint_checksum.hpp).
#include "state/checkpoint_checksum.hpp"

#include <algorithm>
#include <cstring>
#include <limits>
#include <vector>

#include "io/fingerprint.hpp"
#include "support/collective.hpp"

namespace lodestone::ckpt {

namespace {

std::uint64_t bits_of(double v) {
  std::uint64_t b = 0;
  std::memcpy(&b, &v, sizeof b);
  return b;
}

std::uint64_t hash_text(const std::string& s) {
  std::uint64_t h = 0x84222325cbf29ce4ULL;
  for (unsigned char c : s) h = mix64(h ^ c);
  return mix64(h ^ s.size());
}

// Order-dependent running hash of a sequence of 64-bit words.
class Sequence {
 public:
  void add(std::uint64_t x) { h_ = mix64(h_ ^ mix64(x + ++n_)); }
  void add(std::int64_t x) { add(static_cast<std::uint64_t>(x)); }
  void add(double x) { add(bits_of(x)); }
  void add(const std::string& s) { add(hash_text(s)); }
  std::uint64_t value() const { return h_; }

 private:
  std::uint64_t h_ = 0x6a09e667f3bcc908ULL;
  std::uint64_t n_ = 0;
};

// The sum over one column's rows of a tile (the inner loop of block_checksum). Integer
// sums do not depend on their order, so the loop vectorizes; x86-64 builds carry
// copies for AVX-512 and AVX2 processors, picked at load time (the 64-bit multiplies
// of the mixer are one instruction with AVX-512: about ten times the speed).
#if defined(__x86_64__) && defined(__GNUC__) && !defined(__clang__)
__attribute__((target_clones("arch=x86-64-v4", "arch=x86-64-v3", "default")))
#endif
std::uint64_t column_sum(const double* col, const std::uint64_t* row_key, std::int64_t rows, std::uint64_t key) {
  std::uint64_t sum = 0;
  for (std::int64_t i = 0; i < rows; ++i) sum += mix64(key ^ row_key[i] ^ mix64(bits_of(col[i]) + 0x632be59bULL));
  return sum;
}

}  // namespace

std::uint64_t block_checksum(MPI_Comm comm, const std::string& name, const StateBlock& block, std::int64_t row_begin,
                             std::int64_t local_rows) {
  const std::uint64_t salt = hash_text(name);
  std::vector<std::uint64_t> column_key(static_cast<std::size_t>(std::max<std::int64_t>(block.columns, 0)));
  for (std::int64_t j = 0; j < block.columns; ++j)
    column_key[static_cast<std::size_t>(j)] = mix64(salt ^ mix64(static_cast<std::uint64_t>(j) + 0x9e37ULL));
  // Rows in tiles, so each row's hash is computed once for all columns.
  constexpr std::int64_t kTile = 512;
  std::uint64_t row_key[kTile];
  std::uint64_t sum = 0;
  for (std::int64_t i0 = 0; i0 < local_rows; i0 += kTile) {
    const std::int64_t rows = std::min(kTile, local_rows - i0);
    for (std::int64_t i = 0; i < rows; ++i) row_key[i] = mix64(static_cast<std::uint64_t>(row_begin + i0 + i));
    for (std::int64_t j = 0; j < block.columns; ++j) {
      const std::uint64_t cj = column_key[static_cast<std::size_t>(j)];
      const double* col = block.local.data() + j * local_rows + i0;
      sum += column_sum(col, row_key, rows, cj);
    }
  }
  std::uint64_t total = sum_all_u64(comm, sum);
  return mix64(total ^ static_cast<std::uint64_t>(block.columns) * 0x100000001b3ULL);
}

std::uint64_t small_checksum(const Checkpoint& c) {
  Sequence s;
  s.add(c.identity.matrix_fingerprint);
  s.add(c.identity.rows);
  for (const auto& [k, v] : c.identity.options) s.add(k), s.add(v);
  s.add(c.iterations), s.add(c.matvecs), s.add(c.converged), s.add(c.elapsed_seconds);
  s.add(c.state.method), s.add(c.state.rows);
  for (const auto& [k, b] : c.state.blocks) s.add(k), s.add(b.columns);
  for (const auto& [k, a] : c.state.arrays) {
    s.add(k), s.add(static_cast<std::int64_t>(a.size()));
    for (double x : a) s.add(x);
  }
  for (const auto& [k, v] : c.state.counters) s.add(k), s.add(v);
  // History rows are stored padded with NaN to the widest record.
  std::size_t width = 0;
  for (const auto& h : c.history) width = std::max({width, h.estimates.size(), h.residuals.size()});
  const double pad = std::numeric_limits<double>::quiet_NaN();
  s.add(static_cast<std::int64_t>(c.history.size()));
  for (const auto& h : c.history) {
    s.add(h.iteration), s.add(h.matvecs), s.add(h.seconds), s.add(h.converged);
    for (std::size_t j = 0; j < width; ++j) s.add(j < h.estimates.size() ? h.estimates[j] : pad);
    for (std::size_t j = 0; j < width; ++j) s.add(j < h.residuals.size() ? h.residuals[j] : pad);
  }
  return s.value();
}

}  // namespace lodestone::ckpt

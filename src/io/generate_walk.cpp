// The walk generator: a damped column-stochastic matrix of a generated directed graph.
//
// Each rank generates the out-edges of its own nodes j (its even share of the
// columns) from a hash of (seed, j), so column j, and its normalisation by the
// out-degree of j, need nothing from other ranks. The entries then travel to
// the owners of their rows (io/mm_entries.hpp) in bounded rounds.
#include <algorithm>

#include "io/generators.hpp"
#include "io/mm_entries.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"

namespace lodestone::io {

namespace {
// Keeps the walk's hash stream apart from other generators' with the same seed.
constexpr std::uint64_t kWalkSalt = 0x77616c6b00000000ULL;
// Draws whether an edge leaves its community (a stream apart from the targets').
constexpr std::uint64_t kCommunitySalt = 0x636f6d6d00000000ULL;

std::int64_t extra_edges(const WalkOptions& o, std::int64_t j) {
  const std::int64_t span = 2 * (std::max<std::int64_t>(o.degree, 1) - 1) + 1;
  const auto k = static_cast<std::int64_t>(hashed_uniform(o.seed, static_cast<std::uint64_t>(j), kWalkSalt) *
                                           static_cast<double>(span));
  return std::min(k, span - 1);
}

// Community c of C holds the nodes j with floor(j C / n) = c, i.e. j from
// ceil(c n / C) up to (not including) ceil((c + 1) n / C).
std::int64_t community_begin(const WalkOptions& o, std::int64_t c) {
  return static_cast<std::int64_t>((static_cast<__int128>(c) * o.n + o.communities - 1) / o.communities);
}

std::int64_t target(const WalkOptions& o, std::int64_t j, std::int64_t m) {
  const double u =
      hashed_uniform(o.seed, static_cast<std::uint64_t>(j), kWalkSalt + 1 + static_cast<std::uint64_t>(m));
  std::int64_t lo = 0, size = o.n;
  if (o.communities > 1) {
    const auto c = static_cast<std::int64_t>((static_cast<__int128>(j) * o.communities) / o.n);
    const double leave = o.mixing * static_cast<double>(c + 1) / static_cast<double>(o.communities);
    const double v = hashed_uniform(o.seed, static_cast<std::uint64_t>(j), kCommunitySalt + static_cast<std::uint64_t>(m));
    if (v >= leave) {
      lo = community_begin(o, c);
      size = community_begin(o, c + 1) - lo;
    }
  }
  const auto t = static_cast<std::int64_t>(u * static_cast<double>(size));
  return lo + std::min(t, size - 1);
}
}  // namespace

std::int64_t walk_out_degree(const WalkOptions& o, std::int64_t j) { return 1 + extra_edges(o, j); }

CsrRows generate_walk(MPI_Comm comm, const WalkOptions& o) {
  const int rank = comm_rank(comm), size = comm_size(comm);
  const RowRange mine = even_split(o.n, rank, size);
  EntryRouter router(comm, o.n);
  const std::int64_t round = bounded_round(comm, o.round_entries);
  // The damped mass stays in place: (1-d) on the diagonal of this rank's rows.
  for (std::int64_t i = mine.begin; i < mine.end; ++i)
    if (o.damping != 1.0) router.received().push_back({i, i, 1.0 - o.damping});
  std::int64_t j = mine.begin;
  for (;;) {
    for (; j < mine.end && router.pending() < round; ++j) {
      const std::int64_t extra = extra_edges(o, j);
      const double w = o.damping / static_cast<double>(1 + extra);
      router.add({(j + 1) % o.n, j, w});  // the ring keeps the graph strongly connected
      for (std::int64_t m = 0; m < extra; ++m) router.add({target(o, j, m), j, w});
    }
    router.exchange();
    int done = j >= mine.end ? 1 : 0, all = 0;
    MPI_Allreduce(&done, &all, 1, MPI_INT, MPI_MIN, comm);
    if (all) break;
  }
  return assemble_rows(mine, router.received());
}

}  // namespace lodestone::io

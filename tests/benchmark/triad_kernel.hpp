// The STREAM-style triad a[i] = b[i] + s * c[i], shared by bench_triad (the suite's
// bandwidth anchor) and bench_paired (the same kernel run in turn with the filter's
// step), so both measure the very same loop. Bytes per pass: 3 arrays x 8 bytes x n
// (two reads, one write; write-allocate traffic not counted, as the STREAM
// convention has it). Parallel over OpenMP threads where the program is built with
// OpenMP; one thread otherwise.
#pragma once

namespace lodestone::bench {

constexpr double kTriadBytesPerElement = 3.0 * 8.0;

inline void triad_pass(double* a, const double* b, const double* c, double s, long n) {
#ifdef _OPENMP
#pragma omp parallel for schedule(static)
#endif
  for (long i = 0; i < n; ++i) a[i] = b[i] + s * c[i];
}

}  // namespace lodestone::bench

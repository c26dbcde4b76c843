// The STREAM-style triad a[i] = b[i] + s * c[i], shared by bench_triad (the suite's
// bandwidth anchor) and bench_paired (the same kernel run in turn with the filter's
// step), so both measure the very same loop on the same kind of arrays. Bytes per pass:
// 3 arrays x 8 bytes x n (two reads, one write; write-allocate traffic not counted, as
// the STREAM convention has it). Parallel over OpenMP threads where the program is
// built with OpenMP; one thread otherwise.
#pragma once

#include <cstdlib>

namespace lodestone::bench {

class TriadArrays {
 public:
  // Three arrays of n doubles starting on cache-line (64-byte) boundaries: on the
  // heap's own 16-byte alignment the one-core triad read 9-16 % less here, its wide
  // loads and stores straddling cache lines. First touched by the threads that run
  // the passes.
  explicit TriadArrays(long n) : n_(n), a_(alloc(n)), b_(alloc(n)), c_(alloc(n)) {
#ifdef _OPENMP
#pragma omp parallel for schedule(static)
#endif
    for (long i = 0; i < n_; ++i) a_[i] = 0.0, b_[i] = 1.0, c_[i] = 2.0;
  }
  ~TriadArrays() { std::free(a_), std::free(b_), std::free(c_); }
  TriadArrays(const TriadArrays&) = delete;
  TriadArrays& operator=(const TriadArrays&) = delete;

  void pass(double s) {
    double* a = a_;
    const double* b = b_;
    const double* c = c_;
#ifdef _OPENMP
#pragma omp parallel for schedule(static)
#endif
    for (long i = 0; i < n_; ++i) a[i] = b[i] + s * c[i];
  }
  double bytes_per_pass() const { return 3.0 * 8.0 * static_cast<double>(n_); }
  // A value that depends on every pass, so that none can be left out.
  double check() const {
    double sum = 0;
    for (long i = 0; i < n_; i += 4096) sum += a_[i];
    return sum;
  }
  long elements() const { return n_; }

 private:
  // aligned_alloc wants a size that is a multiple of the alignment.
  static double* alloc(long n) {
    const std::size_t bytes = (static_cast<std::size_t>(n) * 8 + 63) / 64 * 64;
    return static_cast<double*>(std::aligned_alloc(64, bytes > 0 ? bytes : 64));
  }
  long n_;
  double *a_, *b_, *c_;
};

}  // namespace lodestone::bench

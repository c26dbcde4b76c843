// The C library's heap on transparent huge pages (include/lodestone/runtime.hpp).
//
// glibc reads its malloc settings from GLIBC_TUNABLES once, when the program starts;
// glibc.malloc.hugetlb=1 makes it ask the kernel for transparent huge pages on the
// memory it takes for the heap, so one page fault brings in 2 MiB instead of 4 KiB.
// Lodestone's matrices and blocks of vectors are hundreds of MiB per rank that are
// touched for the first time while loading and setting up; measured on the 2M-row
// walk of benchmark case (c) at 2 ranks (docs/benchmarks.md): loading 1.1-1.2 s ->
// 0.35-0.7 s, setting up 0.6-0.7 s -> 0.3 s, peak resident memory within 2 %.
// The `lodestone` launcher (src/launcher/) sets it before the command starts; this
// restart is for a start without the launcher (lodestone-core itself, or a program of
// a user's own), and costs a second loading of the libraries.
#include <unistd.h>

#include <cstdlib>
#include <string>

#include "lodestone/runtime.hpp"
#include "support/huge_page_setting.hpp"

namespace lodestone {
namespace {

// A sanitizer replaces malloc (the setting means nothing to it); under valgrind a new
// start would leave valgrind behind.
bool instrumented() {
#if defined(__SANITIZE_ADDRESS__)
  return true;
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
  return true;
#endif
#endif
  const char* preload = std::getenv("LD_PRELOAD");
  return preload != nullptr && std::string(preload).find("vgpreload") != std::string::npos;
}

}  // namespace

std::string heap_pages() {
  const char* tunables = std::getenv("GLIBC_TUNABLES");
  const std::string all = tunables != nullptr ? tunables : "";
  // glibc (2.36) takes the last glibc.malloc.hugetlb in the list: under strace, 1:0
  // makes no madvise call for the heap, 1 alone makes them.
  const std::string key = std::string(support::kHugePageKey) + "=";
  const auto at = all.rfind(key);
  if (at == std::string::npos) return "ordinary pages";
  const auto from = at + key.size();
  const std::string mode = all.substr(from, all.find(':', from) - from);
  if (mode == "1") return "transparent huge pages (GLIBC_TUNABLES=" + all + ")";
  if (mode == "2") return "huge pages reserved in hugetlbfs (GLIBC_TUNABLES=" + all + ")";
  return "ordinary pages";
}

void restart_on_huge_page_heap(char** argv) {
#if defined(__linux__) && defined(__GLIBC__)
  std::string value;
  if (instrumented() || !support::huge_page_tunables(value)) return;
  const char* before = std::getenv("GLIBC_TUNABLES");
  const std::string kept = before != nullptr ? before : "";
  if (setenv("GLIBC_TUNABLES", value.c_str(), 1) != 0) return;
  execv("/proc/self/exe", argv);
  // The start failed (no /proc, say): go on as we are, without the setting.
  if (before != nullptr) setenv("GLIBC_TUNABLES", kept.c_str(), 1);
  else unsetenv("GLIBC_TUNABLES");
#else
  (void)argv;
#endif
}

}  // namespace lodestone

// The environment setting that puts glibc's heap on transparent huge pages, decided in
// one place for the two programs that apply it: the `lodestone` launcher
// (src/launcher/) and the command itself (restart_on_huge_page_heap, runtime.hpp).
// Header only, on the C and C++ standard libraries alone, since the launcher links
// nothing else.
#pragma once

#include <cstdlib>
#include <string>

namespace lodestone::support {

// glibc's name for the setting, and our value of it.
inline constexpr const char* kHugePageKey = "glibc.malloc.hugetlb";
inline constexpr const char* kHugePageTunable = "glibc.malloc.hugetlb=1";

// The value GLIBC_TUNABLES should have for this process, or false when it should stay
// as it is: LODESTONE_LARGE_PAGES=off, or the user set glibc.malloc.hugetlb already
// (whatever the value). Other settings in GLIBC_TUNABLES are kept before ours.
inline bool huge_page_tunables(std::string& value) {
  const char* choice = std::getenv("LODESTONE_LARGE_PAGES");
  if (choice != nullptr && std::string(choice) == "off") return false;
  const char* tunables = std::getenv("GLIBC_TUNABLES");
  value = tunables != nullptr ? tunables : "";
  if (value.find(kHugePageKey) != std::string::npos) return false;
  value = value.empty() ? std::string(kHugePageTunable) : value + ":" + kHugePageTunable;
  return true;
}

}  // namespace lodestone::support

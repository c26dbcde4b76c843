// The `lodestone` command as users run it: a small program that links only the C and
// C++ standard libraries, sets glibc's heap to use transparent huge pages
// (support/huge_page_setting.hpp) and hands over, in the same process (exec), to
// `lodestone-core` in its own folder. glibc reads the setting only when a program
// starts, and the command restarting itself would load its hundred libraries twice
// (0.1 s per rank measured); here the setting costs nothing. mpirun and the batch
// scripts see one process per rank, as before.
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>

#include "support/huge_page_setting.hpp"

int main(int, char** argv) {
  std::string value;
  if (lodestone::support::huge_page_tunables(value)) setenv("GLIBC_TUNABLES", value.c_str(), 1);
  char self[4096];
  const ssize_t n = readlink("/proc/self/exe", self, sizeof self - 1);
  if (n <= 0) {
    std::fprintf(stderr, "lodestone: error: cannot find where this program is (/proc/self/exe): %s\n",
                 std::strerror(errno));
    return 1;
  }
  self[n] = '\0';
  std::string core(self);
  core = core.substr(0, core.rfind('/') + 1) + "lodestone-core";
  execv(core.c_str(), argv);
  std::fprintf(stderr, "lodestone: error: cannot start %s: %s\n", core.c_str(), std::strerror(errno));
  return 1;
}

// Fuzz target: the size and duration parsers people type options into
// (plan/units.hpp: --memory 64G, --time 02:30:00 and the like).
//
// Each input is tried as a size and as a duration. A parse must either give a
// positive value or refuse with a usage message naming the option. An accepted
// duration must survive formatting: parse(format_hms(t)) == t and
// parse(format_slurm_time(t)) == t. Anything else aborts (a bug).
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <string_view>

#include "plan/units.hpp"

using lodestone::ErrorKind;

namespace {
[[noreturn]] void fail(const char* what, std::string_view input) {
  std::fprintf(stderr, "fuzz oracle: %s (input '%.*s')\n", what, static_cast<int>(input.size()), input.data());
  std::abort();
}

template <class R>
void check_refusal(const R& r, std::string_view input) {
  if (r.status().kind() != ErrorKind::usage) fail("a refusal is not a usage error (exit 2)", input);
  if (r.status().message().find("--opt") == std::string::npos) fail("a refusal does not name the option", input);
}
}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size > 256) return 0;
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  using namespace lodestone::plan;

  auto bytes = parse_size(text, "--opt");
  if (bytes) {
    if (*bytes <= 0) fail("a size was accepted but is not positive", text);
  } else {
    check_refusal(bytes, text);
  }

  auto seconds = parse_duration(text, "--opt");
  if (!seconds) {
    check_refusal(seconds, text);
    return 0;
  }
  if (*seconds <= 0) fail("a duration was accepted but is not positive", text);
  for (const std::string& shown : {format_hms(*seconds), format_slurm_time(*seconds)}) {
    auto again = parse_duration(shown, "--opt");
    if (!again) fail("a formatted duration does not parse back", shown);
    if (*again != *seconds) fail("a formatted duration parses back to another value", shown);
  }
  return 0;
}

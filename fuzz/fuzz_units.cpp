// Fuzz target: the values people type into options: sizes and durations
// (plan/units.hpp: --memory 64G, --time 02:30:00 and the like) and the names and
// paths a job script carries (lodestone/plan.hpp: --job-name and the like).
//
// Each input is tried as a size, a duration, a job name and a path. A parse must
// either give a positive value or refuse with a usage message naming the option.
// An accepted duration must survive formatting: parse(format_hms(t)) == t and
// parse(format_slurm_time(t)) == t. An accepted name holds only letters, digits,
// '.', '_', '-' and starts with a letter; an accepted path has no control
// character and does not start with '-'; shell_quote must decode back to the
// value. Anything else aborts (a bug).
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <string_view>

#include "lodestone/plan.hpp"
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

bool letter(char c) { return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z'); }
bool name_char(char c) { return letter(c) || (c >= '0' && c <= '9') || c == '.' || c == '_' || c == '-'; }

// Reads a shell single-quoted word made by shell_quote: 'abc' and '\'' for a quote.
bool shell_unquote(const std::string& q, std::string* out) {
  out->clear();
  std::size_t i = 0;
  if (q.empty() || q[i++] != '\'') return false;
  while (i < q.size()) {
    if (q[i] != '\'') {
      *out += q[i++];
      continue;
    }
    if (i + 1 == q.size()) return true;  // the closing quote
    if (q.compare(i, 4, "'\\''") != 0) return false;
    *out += '\'';
    i += 4;
  }
  return false;
}

void check_script_values(std::string_view text) {
  const std::string value(text);
  lodestone::Status name = lodestone::check_script_name("--opt", value);
  if (name) {
    if (value.empty() || value.size() > 63 || !letter(value[0])) fail("a bad job name was accepted", text);
    for (char c : value)
      if (!name_char(c)) fail("a job name with a character outside [A-Za-z0-9._-] was accepted", text);
  } else if (name.kind() != ErrorKind::usage || name.message().find("--opt") == std::string::npos) {
    fail("a name refusal is not a usage error naming the option", text);
  }
  lodestone::Status path = lodestone::check_script_path("--opt", value);
  if (path) {
    if (value.empty() || value[0] == '-') fail("an empty path or one starting with '-' was accepted", text);
    for (char c : value)
      if (static_cast<unsigned char>(c) < 0x20 || c == 0x7f) fail("a path with a control character was accepted", text);
  } else if (path.kind() != ErrorKind::usage || path.message().find("--opt") == std::string::npos) {
    fail("a path refusal is not a usage error naming the option", text);
  }
  std::string back;
  if (!shell_unquote(lodestone::shell_quote(value), &back) || back != value)
    fail("shell_quote does not decode back to the value", text);
}
}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size > 256) return 0;
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  using namespace lodestone::plan;
  check_script_values(text);

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

// Fuzz target: the checkpoint reader's header and attribute validation.
//
// A valid checkpoint (the same small one every time, written once with
// write_checkpoint) is copied to a scratch file and edited by the input, a text of
// one edit a line ('#' starts a comment; unknown or malformed lines are ignored):
//   attr OBJ NAME TYPE VALUE...    set attribute NAME of group or dataset OBJ (replacing it)
//   delattr OBJ NAME               delete an attribute
//   dset PATH TYPE DIMS VALUE...   replace (or add) a dataset; TYPE, DIMS, VALUE as in matrix_spec.hpp
//   del PATH                       unlink a group or dataset
//   group PATH                     create a group
//   want N                         read rows [0, N) instead of all rows
// read_checkpoint (with and without the blocks) then either refuses the file with
// a message or returns a checkpoint that is consistent: sizes agree with the rows
// asked for, history records are rectangular. An input with no edit must read
// back to the written checkpoint. A crash, sanitizer report or oracle abort is a bug.
#include <hdf5.h>

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <sstream>
#include <string>
#include <string_view>

#include "lodestone/checkpoint.hpp"
#include "matrix_spec.hpp"

namespace {

using namespace lodestone;
constexpr std::int64_t kRows = 6;

[[noreturn]] void oracle_failure(const std::string& what) {
  std::fprintf(stderr, "fuzz oracle: %s\n", what.c_str());
  std::abort();
}

Checkpoint base_checkpoint() {
  Checkpoint c;
  c.identity.matrix_fingerprint = 0x8000000000000001ULL;
  c.identity.rows = kRows;
  c.identity.options = {{"pairs", "2"}, {"method", "block"}, {"tolerance", "1e-08"}};
  c.iterations = 7;
  c.matvecs = 28;
  c.converged = 1;
  c.elapsed_seconds = 0.5;
  c.state.method = "block";
  c.state.rows = kRows;
  c.state.row_begin = 0;
  c.state.row_end = kRows;
  for (auto [name, cols] : {std::pair<const char*, std::int64_t>{"basis", 3}, {"locked", 1}}) {
    StateBlock b;
    b.columns = cols;
    for (std::int64_t i = 0; i < cols * kRows; ++i) b.local.push_back(0.25 * static_cast<double>(i) - 1.0);
    c.state.blocks[name] = b;
  }
  c.state.arrays["ritz_values"] = {2.0, -1.0, 0.5};
  c.state.counters["restarts"] = 2;
  for (int k = 1; k <= 3; ++k) {
    HistoryRecord h;
    h.iteration = k;
    h.matvecs = 4 * k;
    h.seconds = 0.1 * k;
    h.converged = k / 3;
    h.estimates = {2.0, -1.0};
    h.residuals = {1e-3 / k, 1e-2};
    c.history.push_back(h);
  }
  return c;
}

const std::string& template_path() {
  static const std::string path = [] {
    std::string p = fuzz::scratch_path("checkpoint-template");
    std::filesystem::remove(p);
    Status s = write_checkpoint(MPI_COMM_SELF, p, base_checkpoint());
    if (!s) oracle_failure("cannot write the template checkpoint: " + s.message());
    return p;
  }();
  return path;
}

std::string parent_of(const std::string& path) {
  auto slash = path.find_last_of('/');
  return slash == std::string::npos || slash == 0 ? "/" : path.substr(0, slash);
}
std::string leaf_of(const std::string& path) {
  auto slash = path.find_last_of('/');
  return slash == std::string::npos ? path : path.substr(slash + 1);
}

// Opens a group or dataset by path; closes it on scope exit.
struct Object {
  hid_t id = H5I_INVALID_HID;
  Object(hid_t file, const std::string& path) {
    if (path.empty() || H5Lexists(file, path.c_str(), H5P_DEFAULT) <= 0) {
      if (path == "/") id = H5Oopen(file, "/", H5P_DEFAULT);
      return;
    }
    id = H5Oopen(file, path.c_str(), H5P_DEFAULT);
  }
  ~Object() {
    if (id >= 0) H5Oclose(id);
  }
};

// An item parsed by the matrix-spec language, from the words after the path.
bool parse_item(const std::string& kind, const std::string& name, const std::string& rest, fuzz::Item& out) {
  auto spec = fuzz::parse_spec(kind + " " + name + " " + rest + "\n");
  auto& items = kind == "attr" ? spec.attrs : spec.dsets;
  if (items.empty()) return false;
  out = items.front();
  return true;
}

// Applies the edits; returns how many took effect. `want` may be changed by the input.
int apply_edits(hid_t file, std::string_view text, std::int64_t& want) {
  int edits = 0;
  std::istringstream lines{std::string(text)};
  std::string line;
  while (std::getline(lines, line)) {
    if (auto hash = line.find('#'); hash != std::string::npos) line.resize(hash);
    std::istringstream in(line);
    std::string op, path, name;
    if (!(in >> op)) continue;
    std::string rest;
    if (op == "want") {
      std::int64_t n = 0;
      if (in >> n) want = n;
      continue;
    }
    if (!(in >> path) || path.empty() || path.size() > 200) continue;
    if (op == "attr" || op == "delattr") {
      if (!(in >> name)) continue;
      std::getline(in, rest);
      Object obj(file, path);
      if (obj.id < 0) continue;
      // Any change counts as an edit, even when the new value is then refused.
      if (H5Aexists(obj.id, name.c_str()) > 0 && H5Adelete(obj.id, name.c_str()) >= 0) ++edits;
      fuzz::Item it;
      if (op == "attr" && parse_item("attr", name, rest, it) && fuzz::write_item(obj.id, true, it)) ++edits;
    } else if (op == "dset") {
      std::getline(in, rest);
      Object parent(file, parent_of(path));
      const std::string leaf = leaf_of(path);
      if (parent.id < 0 || leaf.empty() || H5Iget_type(parent.id) != H5I_GROUP) continue;
      if (H5Lexists(parent.id, leaf.c_str(), H5P_DEFAULT) > 0 && H5Ldelete(parent.id, leaf.c_str(), H5P_DEFAULT) >= 0)
        ++edits;
      fuzz::Item it;
      if (parse_item("dset", leaf, rest, it) && fuzz::write_item(parent.id, false, it)) ++edits;
    } else if (op == "del") {
      if (path != "/" && H5Lexists(file, path.c_str(), H5P_DEFAULT) > 0 &&
          H5Ldelete(file, path.c_str(), H5P_DEFAULT) >= 0)
        ++edits;
    } else if (op == "group") {
      hid_t g = H5Gcreate2(file, path.c_str(), H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
      if (g >= 0) ++edits, H5Gclose(g);
    }
  }
  return edits;
}

void check_consistent(const Checkpoint& c, bool with_blocks, std::int64_t want) {
  if (c.state.rows != c.identity.rows) oracle_failure("accepted a checkpoint whose /state and /run rows differ");
  for (const auto& [name, b] : c.state.blocks) {
    if (b.columns < 0) oracle_failure("negative block width accepted for " + name);
    const std::int64_t expect = with_blocks ? b.columns * want : 0;
    if (static_cast<std::int64_t>(b.local.size()) != expect)
      oracle_failure("block " + name + " holds " + std::to_string(b.local.size()) + " values, expected " +
                     std::to_string(expect));
  }
  for (const auto& h : c.history)
    if (h.estimates.size() != c.history.front().estimates.size() || h.residuals.size() != h.estimates.size())
      oracle_failure("history records of different widths accepted");
}

}  // namespace

extern "C" int LLVMFuzzerInitialize(int*, char***) {
  lodestone::fuzz::start_runtime();
  template_path();
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size > 4096) return 0;
  static const std::string path = fuzz::scratch_path("checkpoint");
  std::filesystem::copy_file(template_path(), path, std::filesystem::copy_options::overwrite_existing);
  std::int64_t want = kRows;
  int edits = 0;
  {
    hid_t file = H5Fopen(path.c_str(), H5F_ACC_RDWR, H5P_DEFAULT);
    if (file < 0) oracle_failure("cannot open the copied template");
    edits = apply_edits(file, std::string_view(reinterpret_cast<const char*>(data), size), want);
    H5Fclose(file);
  }
  CheckpointReadOptions only_facts;
  only_facts.read_blocks = false;
  only_facts.allow_previous = false;
  auto facts = read_checkpoint(MPI_COMM_SELF, path, 0, 0, only_facts);
  if (facts) check_consistent(*facts, false, 0);

  CheckpointReadOptions whole;
  whole.allow_previous = false;
  auto full = read_checkpoint(MPI_COMM_SELF, path, 0, want, whole);
  if (full) {
    if (want < 0 || want > full->state.rows) oracle_failure("accepted a row range beyond the checkpoint");
    check_consistent(*full, true, want);
    Status id = check_resumable(*full, base_checkpoint().identity, path);
    (void)id;  // either verdict is fine after edits; the call must not crash
  }
  if (edits == 0 && want == kRows) {
    if (!facts) oracle_failure("the unedited checkpoint was refused: " + facts.status().message());
    if (!full) oracle_failure("the unedited checkpoint was refused: " + full.status().message());
    const Checkpoint base = base_checkpoint();
    if (full->state.blocks.at("basis").local != base.state.blocks.at("basis").local || full->matvecs != base.matvecs ||
        full->history.size() != base.history.size())
      oracle_failure("the unedited checkpoint did not read back as written");
    if (!check_resumable(*full, base.identity, path)) oracle_failure("the unedited checkpoint is not resumable");
  }
  std::filesystem::remove(path);
  return 0;
}

// The one-machine messaging choice under Open MPI (src/api/mpi_transport.hpp).
#include "api/mpi_transport.hpp"

#include <sstream>

namespace lodestone::mpi_transport {

namespace {

std::string trim(const std::string& s) {
  const auto from = s.find_first_not_of(" \t\r");
  if (from == std::string::npos) return "";
  return s.substr(from, s.find_last_not_of(" \t\r") - from + 1);
}

std::vector<std::string> split(const std::string& s, char by) {
  std::vector<std::string> parts;
  std::stringstream in(s);
  for (std::string part; std::getline(in, part, by);)
    if (!trim(part).empty()) parts.push_back(trim(part));
  return parts;
}

// A component list as Open MPI reads it: "a,b" keeps only those, "^a,b" keeps all but those.
bool excludes(const std::string& list, const std::string& component) {
  if (list.empty() || list[0] != '^') return false;
  for (const auto& name : split(list.substr(1), ','))
    if (name == component) return true;
  return false;
}

// The first reason a parameter file gives to leave the choice alone, or "".
std::string reason_in_file(const std::string& path, const std::string& text) {
  std::stringstream in(text);
  for (std::string line; std::getline(in, line);) {
    line = trim(line.substr(0, line.find('#')));
    const auto eq = line.find('=');
    if (eq == std::string::npos) continue;
    const std::string key = trim(line.substr(0, eq)), value = trim(line.substr(eq + 1));
    if (key == "pml" && (value.empty() || value[0] != '^')) return "a messaging layer is chosen in " + path;
    if (key == "pml" && excludes(value, kValue)) return "ob1 is excluded in " + path;
    if (key == "mtl" && (value.empty() || value[0] != '^')) return "a network transport is chosen in " + path;
  }
  return "";
}

}  // namespace

std::vector<std::string> parameter_files(const Environment& env, const std::string& system_folder) {
  if (const auto list = env("OMPI_MCA_mca_base_param_files")) {
    if (trim(*list) == "none") return {};
    return split(*list, ',');
  }
  std::vector<std::string> files;
  if (const auto home = env("HOME")) files.push_back(*home + "/.openmpi/mca-params.conf");
  files.push_back(system_folder + "/openmpi-mca-params.conf");
  return files;
}

std::string reason_to_leave_alone(const Environment& env,
                                  const std::vector<std::pair<std::string, std::string>>& files) {
  for (const char* chosen : {"OMPI_MCA_pml", "OMPI_MCA_mtl"})
    if (env(chosen)) return std::string(chosen) + " is set";
  for (const char* job : {"SLURM_JOB_ID", "PBS_JOBID", "LSB_JOBID", "FLUX_JOB_ID"})
    if (env(job)) return std::string("a batch job, ") + job + " is set";
  const auto size = env("OMPI_COMM_WORLD_SIZE");
  if (size) {
    // mpirun's own account of the layout: all ranks on this machine, or not.
    const auto here = env("OMPI_COMM_WORLD_LOCAL_SIZE");
    if (!here || trim(*here) != trim(*size)) return "ranks on more than one machine";
  } else if (env("PMIX_RANK") || env("PMI_RANK")) {
    return "started by a launcher that does not say where the ranks are";
  }
  for (const auto& [path, text] : files) {
    auto reason = reason_in_file(path, text);
    if (!reason.empty()) return reason;
  }
  return "";
}

}  // namespace lodestone::mpi_transport

// Whether a run confined to one machine may tell Open MPI which messaging layer to use
// before MPI starts, so that it does not spend time looking for network hardware.
//
// Started without a choice, Open MPI 4 tries each of its point-to-point layers and
// keeps the best that comes up. One of them (cm) first loads and opens every
// network-card library it was built with (PSM, PSM2, OFI); on a laptop or workstation,
// where none of that hardware exists, the search alone took 0.2 s of the 0.4 s that
// MPI_Init takes on this machine, on every rank of every command, only to end with the
// layer that was going to win anyway: ob1, which moves messages between the ranks of
// one machine through shared memory. For a run on one machine, outside any batch job,
// with no layer chosen by the user, Lodestone names ob1 itself (OMPI_MCA_pml=ob1).
// Anything else — ranks on several machines, a batch job (where the site's choice
// rules), a launcher whose layout we cannot read, a choice made in the environment or
// in Open MPI's parameter files — and Open MPI chooses as it always does.
//
// The decision is a pure function of the environment and the parameter files' text,
// so that it can be tested; runtime.cpp applies it.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace lodestone::mpi_transport {

// Reads one environment variable (std::nullopt when it is not set).
using Environment = std::function<std::optional<std::string>(const std::string& name)>;

// The value Lodestone sets, and the variable it goes in.
inline constexpr const char* kVariable = "OMPI_MCA_pml";
inline constexpr const char* kValue = "ob1";

// Open MPI's parameter files, in the order it reads them: the list in
// OMPI_MCA_mca_base_param_files if set (comma-separated, "none" for no files), else
// $HOME/.openmpi/mca-params.conf and the system file in `system_folder`.
std::vector<std::string> parameter_files(const Environment& env, const std::string& system_folder);

// Why Open MPI's own choice must stand, in a few plain words, or an empty string when
// Lodestone may set OMPI_MCA_pml=ob1. `files` holds each parameter file that exists,
// as (path, text).
std::string reason_to_leave_alone(const Environment& env,
                                  const std::vector<std::pair<std::string, std::string>>& files);

}  // namespace lodestone::mpi_transport

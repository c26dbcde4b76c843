// When Lodestone names Open MPI's messaging layer itself (a run on one machine, outside a
// batch job, no choice of the user's) and when it leaves the choice to Open MPI.
#include <gtest/gtest.h>

#include <map>

#include "api/mpi_transport.hpp"

using namespace lodestone;
using mpi_transport::parameter_files;
using mpi_transport::reason_to_leave_alone;

namespace {

using Files = std::vector<std::pair<std::string, std::string>>;

mpi_transport::Environment environment(std::map<std::string, std::string> vars) {
  return [vars](const std::string& name) -> std::optional<std::string> {
    const auto it = vars.find(name);
    if (it == vars.end()) return std::nullopt;
    return it->second;
  };
}

// Debian's own system file of Open MPI 4.1 (/etc/openmpi/openmpi-mca-params.conf on
// this machine): excludes some components, chooses none.
const char* kDebianSystemFile =
    "# This is the default system-wide MCA parameters defaults file.\n"
    "btl_base_warn_component_unused=0\n"
    "mtl = ^ofi\n"
    "btl = ^uct,openib,ofi\n"
    "pml = ^ucx\n"
    "osc = ^ucx,pt2pt\n";

}  // namespace

TEST(MpiTransport, OneMachineWithoutAChoiceGetsOb1) {
  EXPECT_EQ(reason_to_leave_alone(environment({{"HOME", "/home/a"}}), {}), "");  // no mpirun: one process
  EXPECT_EQ(reason_to_leave_alone(environment({{"OMPI_COMM_WORLD_SIZE", "4"}, {"OMPI_COMM_WORLD_LOCAL_SIZE", "4"},
                                               {"PMIX_RANK", "2"}}),
                                  {}),
            "");
  EXPECT_EQ(reason_to_leave_alone(environment({}), {{"/etc/openmpi/openmpi-mca-params.conf", kDebianSystemFile}}), "");
  // Other parameters, comments and a component list that excludes something else are no choice.
  EXPECT_EQ(reason_to_leave_alone(environment({{"OMPI_MCA_pml_base_verbose", "10"}, {"OMPI_MCA_btl", "self,vader"}}),
                                  {{"f", "# pml = cm\npml_ob1_priority = 5\npml = ^cm, ucx\n\n  mtl=^psm2 # none\n"}}),
            "");
}

TEST(MpiTransport, AChoiceInTheEnvironmentStands) {
  EXPECT_NE(reason_to_leave_alone(environment({{"OMPI_MCA_pml", "ucx"}}), {}).find("OMPI_MCA_pml"), std::string::npos);
  EXPECT_NE(reason_to_leave_alone(environment({{"OMPI_MCA_pml", "ob1"}}), {}), "");
  EXPECT_NE(reason_to_leave_alone(environment({{"OMPI_MCA_mtl", "psm2"}}), {}).find("OMPI_MCA_mtl"), std::string::npos);
}

TEST(MpiTransport, BatchJobsKeepTheSitesChoice) {
  for (const char* job : {"SLURM_JOB_ID", "PBS_JOBID", "LSB_JOBID", "FLUX_JOB_ID"}) {
    const auto reason = reason_to_leave_alone(
        environment({{job, "12345"}, {"OMPI_COMM_WORLD_SIZE", "2"}, {"OMPI_COMM_WORLD_LOCAL_SIZE", "2"}}), {});
    EXPECT_NE(reason.find("batch job"), std::string::npos) << job;
    EXPECT_NE(reason.find(job), std::string::npos) << reason;
  }
}

TEST(MpiTransport, RanksOnSeveralMachinesOrAnUnknownLayoutKeepOpenMpisChoice) {
  EXPECT_NE(reason_to_leave_alone(environment({{"OMPI_COMM_WORLD_SIZE", "8"}, {"OMPI_COMM_WORLD_LOCAL_SIZE", "4"}}), {})
                .find("more than one machine"),
            std::string::npos);
  EXPECT_NE(reason_to_leave_alone(environment({{"OMPI_COMM_WORLD_SIZE", "8"}}), {}), "");
  // A launcher other than Open MPI's own: PMIx or PMI ranks, no layout we can read.
  EXPECT_NE(reason_to_leave_alone(environment({{"PMIX_RANK", "0"}}), {}).find("launcher"), std::string::npos);
  EXPECT_NE(reason_to_leave_alone(environment({{"PMI_RANK", "0"}}), {}), "");
}

TEST(MpiTransport, AChoiceInAParameterFileStands) {
  const auto env = environment({{"OMPI_COMM_WORLD_SIZE", "2"}, {"OMPI_COMM_WORLD_LOCAL_SIZE", "2"}});
  const auto reason = reason_to_leave_alone(env, {{"/etc/openmpi/openmpi-mca-params.conf", kDebianSystemFile},
                                                  {"/home/a/.openmpi/mca-params.conf", "pml = ucx\n"}});
  EXPECT_NE(reason.find("/home/a/.openmpi/mca-params.conf"), std::string::npos) << reason;
  EXPECT_NE(reason_to_leave_alone(env, {{"f", "pml=cm"}}), "");
  EXPECT_NE(reason_to_leave_alone(env, {{"f", "  pml = ^ucx, ob1  "}}).find("ob1 is excluded"), std::string::npos);
  EXPECT_NE(reason_to_leave_alone(env, {{"f", "mtl = psm2\n"}}).find("network transport"), std::string::npos);
}

TEST(MpiTransport, ParameterFilesAreOpenMpisList) {
  EXPECT_EQ(parameter_files(environment({{"HOME", "/home/a"}}), "/etc/openmpi"),
            (std::vector<std::string>{"/home/a/.openmpi/mca-params.conf", "/etc/openmpi/openmpi-mca-params.conf"}));
  EXPECT_EQ(parameter_files(environment({}), "/opt/ompi/etc"),
            (std::vector<std::string>{"/opt/ompi/etc/openmpi-mca-params.conf"}));
  EXPECT_EQ(parameter_files(environment({{"OMPI_MCA_mca_base_param_files", "/a.conf, /b.conf"}}), "/etc/openmpi"),
            (std::vector<std::string>{"/a.conf", "/b.conf"}));
  EXPECT_TRUE(parameter_files(environment({{"OMPI_MCA_mca_base_param_files", "none"}}), "/etc/openmpi").empty());
}

// The solve options a plan passes on to its script, as command-line words, shared
// by the summary (describe.cpp) and the script (job_script.cpp).
#pragma once

#include <string>
#include <vector>

#include "lodestone/plan.hpp"

namespace lodestone::plan {

// E.g. {"--block-size=30", "--select=smallest"}; empty when none was given.
// Every word is plain (an option name with a fixed name or a number): safe in a script unquoted.
std::vector<std::string> passed_solve_options(const Plan& p);

}  // namespace lodestone::plan

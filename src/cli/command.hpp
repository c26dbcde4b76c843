// The shape every `lodestone` subcommand has: a CLI11 sub-app with its options,
// and a run function over the public API that returns a Status. main.cpp turns
// the Status into one message (printed once, by rank 0) and the exit status.
#pragma once

#include <mpi.h>

#include <CLI/CLI.hpp>
#include <functional>

#include "lodestone/status.hpp"

namespace lodestone::cli {

struct Command {
  CLI::App* app = nullptr;
  std::function<Status(MPI_Comm)> run;
};

Command make_calibrate_command(CLI::App& root);
Command make_generate_command(CLI::App& root);
Command make_inspect_command(CLI::App& root);
Command make_import_command(CLI::App& root);
Command make_plan_command(CLI::App& root);
Command make_solve_command(CLI::App& root);
Command make_verify_command(CLI::App& root);

// The check every --group option carries: "/", or "/name/name..." (no empty, "."
// or ".." parts). Refused at parse time, so on every rank alike (status 2).
CLI::Validator group_path();

// Prints on rank 0 only.
void print_once(MPI_Comm comm, const std::string& text);
void print_error_once(MPI_Comm comm, const std::string& text);

}  // namespace lodestone::cli

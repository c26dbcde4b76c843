// Stopping early on a signal, agreed by every rank at an iteration boundary.
//
// install_stop_handlers() makes SIGTERM, SIGINT, SIGUSR1 and SIGUSR2 set a
// flag (an async-signal-safe handler that only stores to a sig_atomic_t). A
// second SIGINT ends the process at once with status 130. Signals reach ranks
// at different moments, or only some ranks, so the flag alone decides nothing:
// stop_requested(comm) reduces it over all ranks, and every rank sees the same
// answer. Call it at iteration boundaries only.
#pragma once

#include <mpi.h>

namespace lodestone::state {

void install_stop_handlers();
// Puts back what was there before install_stop_handlers().
void restore_stop_handlers();
// If the handlers were installed, sets them again: the library shutdown
// (PetscFinalize, with MPI_Finalize inside) resets SIGTERM to its default, and a
// stop signal in the last moments of a finished run must not kill the process.
void reinstate_stop_handlers();

// This rank's flag: the number of the first stop signal received, or 0.
int local_stop_signal();
// Clears the flag (and the count of SIGINTs).
void clear_stop_flag();

// Collective. The largest signal number any rank received, or 0 if none did.
int stop_signal(MPI_Comm comm);
// Collective. True on every rank if any rank received a stop signal.
bool stop_requested(MPI_Comm comm);

// "SIGTERM" etc.
const char* signal_name(int sig);

}  // namespace lodestone::state

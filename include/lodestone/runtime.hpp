// Runtime: starting and stopping the libraries Lodestone runs on.
//
// Create one Runtime at the top of main(), before any other Lodestone call, and
// let it go out of scope at the end. It initialises MPI (unless the caller did)
// and PETSc, makes PETSc report errors by return value instead of printing
// stack traces, and silences HDF5's own error printing: Lodestone reports every
// failure in its own words, once, through Status. Under Open MPI, before MPI starts,
// it prefers the ROMIO implementation of MPI-IO and, for a run on one machine, names
// the messaging layer (mpi_transport_choice); a choice of the user's stands against
// both. Before it, a program may put
// the C library's heap on transparent huge pages (restart_on_huge_page_heap).
#pragma once

#include <string>

namespace lodestone {

// Call first thing in main(), before Runtime and before any thread or MPI starts.
// Unless it is set already, sets the C library's heap to use transparent huge pages
// (GLIBC_TUNABLES=glibc.malloc.hugetlb=1, which glibc reads only when a program
// starts) and starts the program again in place with the same arguments (exec: the
// same process, so mpirun sees nothing). Loading a large matrix and setting up the
// blocks then take fewer page faults (docs/benchmarks.md). Does nothing when
// LODESTONE_LARGE_PAGES=off, when the user set glibc.malloc.hugetlb (the `lodestone`
// launcher sets it before the command starts, so there the restart costs nothing),
// under a sanitizer or valgrind, or on a system without glibc; returns if the
// restart fails. The restart loads the program's libraries a second time.
void restart_on_huge_page_heap(char** argv);

// The pages this process's C heap is on, in words (for --version): "ordinary pages",
// or, as glibc.malloc.hugetlb says, transparent huge pages (1, the setting above) or
// huge pages reserved in hugetlbfs (2, which only a user sets), with the GLIBC_TUNABLES
// the process runs with.
std::string heap_pages();

// How MPI's messaging layer was chosen, in words (for --version). Under Open MPI, a
// Runtime that starts MPI for a run on one machine, outside a batch job, names Open
// MPI's shared-memory layer itself (OMPI_MCA_pml=ob1), which spares each rank Open
// MPI's search for network hardware (0.2 s at start-up on a machine without any); it
// leaves the choice to Open MPI when the ranks span machines, in a batch job, or when
// OMPI_MCA_pml or OMPI_MCA_mtl is set in the environment or in Open MPI's parameter
// files.
std::string mpi_transport_choice();

class Runtime {
 public:
  Runtime(int* argc, char*** argv);
  Runtime(const Runtime&) = delete;
  Runtime& operator=(const Runtime&) = delete;
  ~Runtime();
  bool ok() const { return ok_; }

 private:
  bool ok_ = false;
};

}  // namespace lodestone

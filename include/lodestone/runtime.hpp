// Runtime: starting and stopping the libraries Lodestone runs on.
//
// Create one Runtime at the top of main(), before any other Lodestone call, and
// let it go out of scope at the end. It initialises MPI (unless the caller did)
// and PETSc, makes PETSc report errors by return value instead of printing
// stack traces, and silences HDF5's own error printing: Lodestone reports every
// failure in its own words, once, through Status.
#pragma once

namespace lodestone {

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

// Turning PETSc error codes into Lodestone Status values.
//
// PETSc is initialised with a return-only error handler (see api/runtime.cpp),
// so a failing PETSc call prints nothing by itself; these helpers put its
// message into a Status that the caller agrees on across ranks.
#pragma once

#include <petscsys.h>

#include <string>

#include "lodestone/status.hpp"

namespace lodestone {

Status petsc_status(PetscErrorCode code, const char* what);

}  // namespace lodestone

#define LODESTONE_PETSC(call)                                                   \
  do {                                                                          \
    PetscErrorCode lodestone_petsc_e_ = (call);                                 \
    if (lodestone_petsc_e_ != 0) return ::lodestone::petsc_status(lodestone_petsc_e_, #call); \
  } while (0)

// PETSc error code to Status.
#include "support/petsc_status.hpp"

#include <fmt/format.h>

namespace lodestone {

Status petsc_status(PetscErrorCode code, const char* what) {
  const char* text = nullptr;
  PetscErrorMessage(code, &text, nullptr);
  return Status::input(fmt::format("PETSc failed in {}: {}", what, text ? text : "unknown error"));
}

}  // namespace lodestone

// LogStage: registration by name on first use, push and pop.
#include "support/log_stage.hpp"

#include <petscsys.h>

#include <map>
#include <string>

namespace lodestone {

LogStage::LogStage(const char* name) {
  PetscBool up = PETSC_FALSE;
  if (PetscInitialized(&up) != 0 || !up) return;
  static std::map<std::string, PetscLogStage> stages;
  auto it = stages.find(name);
  if (it == stages.end()) {
    PetscLogStage stage = -1;
    if (PetscLogStageRegister(name, &stage) != 0) return;
    it = stages.emplace(name, stage).first;
  }
  pushed_ = PetscLogStagePush(it->second) == 0;
}

LogStage::~LogStage() {
  if (pushed_) PetscLogStagePop();
}

}  // namespace lodestone

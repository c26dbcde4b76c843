// Named PETSc logging stages for the phases of a run (load, iterate, extract,
// write), so that `-log_view` splits its event table by phase and a profile
// shows at once where a run's time went. A stage is registered the first time
// its name is used; pushing and popping cost nothing measurable when logging
// is off.
#pragma once

namespace lodestone {

// Pushes the stage `name` for the lifetime of the object (every return path
// pops it). Names should be string literals: they are kept by pointer.
class LogStage {
 public:
  explicit LogStage(const char* name);
  ~LogStage();
  LogStage(const LogStage&) = delete;
  LogStage& operator=(const LogStage&) = delete;

 private:
  bool pushed_ = false;
};

}  // namespace lodestone

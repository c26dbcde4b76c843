// Async-signal-safe stop flag and its collective reduction (state/stop_signals.hpp).
#include "state/stop_signals.hpp"

#include <unistd.h>

#include <csignal>

namespace lodestone::state {

namespace {

volatile std::sig_atomic_t g_signal = 0;
volatile std::sig_atomic_t g_interrupts = 0;

constexpr int kSignals[] = {SIGTERM, SIGINT, SIGUSR1, SIGUSR2};
struct sigaction g_saved[4];
bool g_installed = false;

extern "C" void on_stop_signal(int sig) {
  if (sig == SIGINT && g_interrupts > 0) {
    static const char msg[] = "lodestone: second interrupt, stopping now without a checkpoint\n";
    ssize_t ignored = ::write(STDERR_FILENO, msg, sizeof msg - 1);
    (void)ignored;
    ::_exit(130);
  }
  if (sig == SIGINT) g_interrupts = g_interrupts + 1;
  if (g_signal == 0) g_signal = sig;
}

}  // namespace

namespace {
struct sigaction stop_action() {
  struct sigaction sa {};
  sa.sa_handler = on_stop_signal;
  sigemptyset(&sa.sa_mask);
  sa.sa_flags = SA_RESTART;  // system calls resume; the flag is looked at between iterations
  return sa;
}
}  // namespace

void install_stop_handlers() {
  if (g_installed) return;
  const struct sigaction sa = stop_action();
  for (int k = 0; k < 4; ++k) sigaction(kSignals[k], &sa, &g_saved[k]);
  g_installed = true;
}

void reinstate_stop_handlers() {
  if (!g_installed) return;
  const struct sigaction sa = stop_action();
  for (int k = 0; k < 4; ++k) sigaction(kSignals[k], &sa, nullptr);
}

void restore_stop_handlers() {
  if (!g_installed) return;
  for (int k = 0; k < 4; ++k) sigaction(kSignals[k], &g_saved[k], nullptr);
  g_installed = false;
}

int local_stop_signal() { return static_cast<int>(g_signal); }

void clear_stop_flag() {
  g_signal = 0;
  g_interrupts = 0;
}

int stop_signal(MPI_Comm comm) {
  int mine = local_stop_signal(), any = 0;
  MPI_Allreduce(&mine, &any, 1, MPI_INT, MPI_MAX, comm);
  return any;
}

bool stop_requested(MPI_Comm comm) { return stop_signal(comm) != 0; }

const char* signal_name(int sig) {
  switch (sig) {
    case SIGTERM: return "SIGTERM";
    case SIGINT: return "SIGINT";
    case SIGUSR1: return "SIGUSR1";
    case SIGUSR2: return "SIGUSR2";
    default: return "a signal";
  }
}

}  // namespace lodestone::state

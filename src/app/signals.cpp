#include "app/signals.hpp"

#include <csignal>
#include <initializer_list>

namespace chaosweep::app {
namespace {

volatile std::sig_atomic_t g_signal = 0;

/// Only records the signal: a second signal during a checkpoint write changes nothing.
extern "C" void on_stop_signal(int number) {
  if (g_signal == 0) g_signal = number;
}

}  // namespace

void install_stop_handlers() {
  struct sigaction action {};
  action.sa_handler = on_stop_signal;
  sigemptyset(&action.sa_mask);
  action.sa_flags = SA_RESTART;
  for (int number : {SIGTERM, SIGINT, SIGUSR1}) sigaction(number, &action, nullptr);
}

int stop_signal() { return g_signal; }

}  // namespace chaosweep::app

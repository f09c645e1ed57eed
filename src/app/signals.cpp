#include "app/signals.hpp"

#include <unistd.h>

#include <csignal>
#include <fstream>
#include <initializer_list>

namespace chaosweep::app {
namespace {

volatile std::sig_atomic_t g_signal = 0;
volatile std::sig_atomic_t g_sender = 0;  // pid of the sending process, 0 if unknown

/// Only records the first signal and its sender: a second signal during a checkpoint write
/// changes nothing.
extern "C" void on_stop_signal(int number, siginfo_t* info, void*) {
  if (g_signal != 0) return;
  g_sender = info != nullptr && info->si_code <= 0 ? static_cast<std::sig_atomic_t>(info->si_pid)
                                                   : 0;  // si_code <= 0: sent by a process
  g_signal = number;
}

std::string signal_name(int number) {
  switch (number) {
    case SIGTERM: return "SIGTERM";
    case SIGINT: return "SIGINT";
    case SIGUSR1: return "SIGUSR1";
    default: return "signal";
  }
}

/// The command name of process `pid` ("" when it cannot be read, e.g. it has exited).
std::string process_name(int pid) {
  std::ifstream in("/proc/" + std::to_string(pid) + "/comm");
  std::string name;
  std::getline(in, name);
  return name;
}

}  // namespace

void install_stop_handlers() {
  struct sigaction action {};
  action.sa_sigaction = on_stop_signal;
  sigemptyset(&action.sa_mask);
  action.sa_flags = SA_RESTART | SA_SIGINFO;
  for (int number : {SIGTERM, SIGINT, SIGUSR1}) sigaction(number, &action, nullptr);
}

int stop_signal() { return g_signal; }

std::string describe_stop_signal() {
  const int number = g_signal;
  if (number == 0) return "";
  std::string text = signal_name(number) + " (signal " + std::to_string(number) + ")";
  const int pid = g_sender;
  if (pid == static_cast<int>(getpid())) return text + " from this process";
  if (pid > 0) {
    const std::string name = process_name(pid);
    text += " from " + (name.empty() ? "process " + std::to_string(pid)
                                     : name + " (pid " + std::to_string(pid) + ")");
  }
  return text;
}

}  // namespace chaosweep::app

// Stop requests from the scheduler or the user: SIGTERM, SIGINT and SIGUSR1 set a flag that
// the run loop reads at the end of each round; the run then checkpoints and exits with 3.
//
// Under Open MPI's mpirun the ranks do not see the terminal's Ctrl-C: mpirun catches it (and a
// SIGTERM sent to mpirun), sends SIGTERM to every rank and SIGKILL about a second later, and
// forwards SIGUSR1 unchanged. So each rank records which signal it received and who sent it.
#pragma once

#include <string>

namespace chaosweep::app {

/// Installs the handlers (SA_RESTART, so interrupted system calls resume).
void install_stop_handlers();

/// The number of the first stop signal received, 0 if none.
int stop_signal();

/// The first stop signal and its sender, for the log: "SIGTERM (signal 15) from mpirun
/// (pid 4242)"; "" when none was received.
std::string describe_stop_signal();

}  // namespace chaosweep::app

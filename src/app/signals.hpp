// Stop requests from the scheduler or the user: SIGTERM, SIGINT and SIGUSR1 set a flag that
// the run loop reads at the end of each round; the run then checkpoints and exits with 3.
#pragma once

namespace chaosweep::app {

/// Installs the handlers (SA_RESTART, so interrupted system calls resume).
void install_stop_handlers();

/// The number of the first stop signal received, 0 if none.
int stop_signal();

}  // namespace chaosweep::app

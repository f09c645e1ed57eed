// Fault-injection hooks for the test suite, read from environment variables. Compiled only
// with -DCHAOSWEEP_TEST_HOOKS=ON (the default for builds from this repository; packagers may
// turn it off); without it every hook is inert.
//
//   CHAOSWEEP_TEST_ROUND_SECONDS=S     length of a round of work (default 0.5 s)
//   CHAOSWEEP_TEST_STOP=RANK:ROUND     that rank raises SIGTERM on itself after that round
//   CHAOSWEEP_TEST_THROW=RANK:ROUND    that rank fails (throws) after that round
//   CHAOSWEEP_TEST_CHECKPOINT_DELAY=S  sleep S seconds between saving the states of a
//                                      checkpoint generation and committing it
//   CHAOSWEEP_TEST_ROUND_DELAY=S       sleep S seconds after each round (a slow run, so that a
//                                      test can kill it midway)
#pragma once

namespace chaosweep::app::test_hooks {

double round_seconds(double normal);
/// Raises SIGTERM when this rank has reached the round named by CHAOSWEEP_TEST_STOP.
void maybe_stop(int rank, long round);
/// Throws chaosweep::Error when this rank has reached the round named by CHAOSWEEP_TEST_THROW.
void maybe_throw(int rank, long round);
void checkpoint_delay();
void round_delay();

}  // namespace chaosweep::app::test_hooks

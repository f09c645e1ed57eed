#include "app/test_hooks.hpp"

#include <unistd.h>

#include <csignal>
#include <cstdio>
#include <cstdlib>
#include <string>

#include "core/error.hpp"

namespace chaosweep::app::test_hooks {
namespace {

const char* hook(const char* name) {
#ifdef CHAOSWEEP_TEST_HOOKS
  return std::getenv(name);
#else
  (void)name;
  return nullptr;
#endif
}

void sleep_for(const char* name) {
  const char* value = hook(name);
  if (value) usleep(static_cast<useconds_t>(std::atof(value) * 1e6));
}

/// True when the hook `name` holds "RANK:ROUND" naming this rank and round.
bool at(const char* name, int rank, long round) {
  const char* value = hook(name);
  int hook_rank = -1;
  long hook_round = -1;
  return value && std::sscanf(value, "%d:%ld", &hook_rank, &hook_round) == 2 &&
         hook_rank == rank && hook_round == round;
}

}  // namespace

double round_seconds(double normal) {
  const char* value = hook("CHAOSWEEP_TEST_ROUND_SECONDS");
  return value ? std::atof(value) : normal;
}

void maybe_stop(int rank, long round) {
  if (at("CHAOSWEEP_TEST_STOP", rank, round)) std::raise(SIGTERM);
}

void maybe_throw(int rank, long round) {
  if (at("CHAOSWEEP_TEST_THROW", rank, round)) {
    throw Error("injected failure (CHAOSWEEP_TEST_THROW) in round " + std::to_string(round));
  }
}

void checkpoint_delay() { sleep_for("CHAOSWEEP_TEST_CHECKPOINT_DELAY"); }

void round_delay() { sleep_for("CHAOSWEEP_TEST_ROUND_DELAY"); }

}  // namespace chaosweep::app::test_hooks

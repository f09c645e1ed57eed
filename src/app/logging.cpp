#include "app/logging.hpp"

#include <spdlog/sinks/stdout_color_sinks.h>
#include <spdlog/spdlog.h>

#include <cstdio>

namespace chaosweep::app {

void setup_logging(int rank, int size, bool verbose) {
  auto logger = spdlog::stderr_color_mt("chaosweep");
  const std::string where = size > 0 ? "[rank " + std::to_string(rank) + "] " : "";
  logger->set_pattern("%Y-%m-%d %H:%M:%S %^%l%$ " + where + "%v");
  if (rank == 0) {
    logger->set_level(verbose ? spdlog::level::debug : spdlog::level::info);
  } else {
    logger->set_level(spdlog::level::warn);
  }
  spdlog::set_default_logger(logger);
}

void print_error(const std::string& message, int rank, int size) {
  if (size > 1) {
    std::fprintf(stderr, "chaosweep: error (rank %d): %s\n", rank, message.c_str());
  } else {
    std::fprintf(stderr, "chaosweep: error: %s\n", message.c_str());
  }
  std::fflush(stderr);
}

}  // namespace chaosweep::app

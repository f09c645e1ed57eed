// Error types shared by every layer. Pure: no dependencies beyond the standard library.
//
// Every failure is thrown as one of these and caught once, in app/, which prints the message
// as one line and exits with exit_code(). Messages are complete sentences without a trailing
// newline; a spec error already carries its "FILE:LINE:COL: " prefix.
#pragma once

#include <stdexcept>
#include <string>

namespace chaosweep {

/// Exit statuses of the command line (public contract, see README).
enum ExitStatus : int {
  kExitComplete = 0,
  kExitFailure = 1,
  kExitInvalid = 2,   // invalid spec or usage; nothing was created or touched
  kExitStopped = 3,   // stopped early with a valid checkpoint; resume needed
};

/// Base of every chaosweep error: a one-line message and the exit status it implies.
class Error : public std::runtime_error {
 public:
  explicit Error(const std::string& message, int exit_code = kExitFailure)
      : std::runtime_error(message), exit_code_(exit_code) {}
  int exit_code() const noexcept { return exit_code_; }

 private:
  int exit_code_;
};

/// An invalid campaign spec. The message starts with "FILE:LINE:COL: ".
class SpecError : public Error {
 public:
  explicit SpecError(const std::string& message) : Error(message, kExitInvalid) {}
};

/// Invalid use of the command line or of an input file that is not a spec (exit 2).
class UsageError : public Error {
 public:
  explicit UsageError(const std::string& message) : Error(message, kExitInvalid) {}
};

/// A failure of an external library call (HDF5, MPI, the file system), exit 1.
class IoError : public Error {
 public:
  explicit IoError(const std::string& message) : Error(message, kExitFailure) {}
};

}  // namespace chaosweep

// Errors that reach the user, and the exit codes of the command line
// (README.md: 0 done, 1 internal error, 2 bad input, 3 data do not support a fit).
#pragma once

#include <stdexcept>
#include <string>

namespace tumbletrace {

enum class ExitCode : int {
  kDone = 0,
  kInternalError = 1,
  kBadInput = 2,        // a file, key or value the user must fix
  kUnsupportedData = 3  // the inputs are well formed but the data cannot carry a fit
};

// Bad input: the message names the file, the line or key, and what was expected.
class InputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// The data do not support the requested estimate (too few markers, no free flight, ...).
class DataError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

}  // namespace tumbletrace

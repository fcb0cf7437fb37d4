// Errors that reach the user as one line and exit code 2: bad input (a run file, an archive
// file, a plugin, a command-line value). Anything else escaping to main is an internal error.
#pragma once

#include <stdexcept>
#include <string>

namespace tessera {

class InputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

}  // namespace tessera

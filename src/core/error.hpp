#pragma once
// The one exception type of the project. Thrown for bad input or a request that
// cannot be honoured; the message says what was expected and what was found, in
// lower case without a trailing period, so the command line can print it as one line.
// Numerical outcomes (no convergence, orbit not closed) are statuses in Result
// structs, not exceptions.
#include <stdexcept>
#include <string>

namespace overtone {

class Error : public std::runtime_error {
 public:
  explicit Error(const std::string& message) : std::runtime_error(message) {}
};

}  // namespace overtone

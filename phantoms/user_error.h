#pragma once
// Errors a user can cause (a bad file, a bad value). They carry a message that names the file,
// the place and what is allowed, and reach the user through the command line with exit code 2.
// Broken internal invariants use FRUGAL_CHECK (image.h) instead.

#include <stdexcept>
#include <string>

namespace frugal {

class UserError : public std::runtime_error {
 public:
  explicit UserError(const std::string& message) : std::runtime_error(message) {}
};

}  // namespace frugal

#pragma once
// Input files are checked before they are opened: opening a pipe with no writer blocks forever,
// and a folder or device opens "successfully" and then reads nothing or never ends.

#include <string>

namespace frugal {

// Throws UserError "PATH: <what is wrong>; allowed: <allowed>" unless `path` names an existing
// regular file (symbolic links are followed). `allowed` says what the reader takes, e.g. "a YAML file".
void require_regular_file(const std::string& path, const std::string& allowed);

}  // namespace frugal

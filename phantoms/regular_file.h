#pragma once
// Input files are checked before they are opened: opening a pipe with no writer blocks forever,
// and a folder or device opens "successfully" and then reads nothing or never ends.
// Output paths are checked before anything is written: frugal replaces a file by renaming a
// temporary one over it, which would silently replace a device node or a pipe.

#include <string>

namespace frugal {

// Throws UserError "PATH: <what is wrong>; allowed: <allowed>" unless `path` names an existing
// regular file (symbolic links are followed). `allowed` says what the reader takes, e.g. "a YAML file".
void require_regular_file(const std::string& path, const std::string& allowed);

enum class OutputKind { file, folder };

// Throws UserError "PATH: <what is wrong>; allowed: <what>" unless frugal may write `path`: a file
// that is absent or regular (and so is its temporary name PATH.partial), or a folder that is absent
// or a folder; no name in the path longer than the file system takes, no path longer than PATH_MAX
// (both leaving room for frugal's temporary names). `what` says what the writer makes, e.g.
// "a new or regular file for the checkpoint".
// Touches nothing: call it before creating folders or temporary files.
void require_writable_output(const std::string& path, OutputKind kind, const std::string& what);

}  // namespace frugal

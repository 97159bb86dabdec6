#pragma once
// The manifest.json that every frugal output folder holds, written last: a folder without one is
// unfinished (a killed run) or not frugal's. Readers check it before they trust the folder.

#include <nlohmann/json.hpp>
#include <string>

namespace frugal {

// The manifest of `folder`. Throws UserError "FOLDER/manifest.json: ...; allowed: ..." when it is
// missing, not a regular file, not JSON, of another kind than `kind` ("phantom_set", "label_set",
// "predictions") or of another schema version than this frugal writes. `what` names the folder
// for messages, e.g. "a phantom set (frugal phantoms)".
nlohmann::json read_folder_manifest(const std::string& folder, const std::string& kind, const std::string& what);

// For "already holds ..." messages: what the manifest.json in `folder` says the folder is
// ("a finished phantom set", "finished predictions", ...), or "a manifest.json" when it says nothing known.
std::string describe_finished_folder(const std::string& folder);

// Before a command writes into `folder`: refuses (UserError, touching nothing) a path that is not
// a folder, a folder whose manifest.json says another kind (even with --overwrite, which replaces
// only a folder of the same kind) and, without `overwrite`, a finished folder of kind `kind`.
void require_output_folder(const std::string& folder, const std::string& kind, bool overwrite);

// A fingerprint of a phantom set: 16 hex digits of the 64-bit FNV-1a hash of its truth.csv, which
// holds every subject's truth and so differs between seeds, sizes and scenarios.
std::string phantom_set_fingerprint(const std::string& folder);

}  // namespace frugal

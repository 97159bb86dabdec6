#include "phantoms/folder_manifest.h"

#include <algorithm>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iterator>

#include "frugal_version.h"
#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"

namespace frugal {

namespace fs = std::filesystem;

namespace {

std::string kind_description(const std::string& kind) {
  if (kind == "phantom_set") return "a finished phantom set";
  if (kind == "label_set") return "a finished label set";
  if (kind == "predictions") return "finished predictions";
  return "";
}

}  // namespace

nlohmann::json read_folder_manifest(const std::string& folder, const std::string& kind, const std::string& what) {
  const std::string file = (fs::path(folder) / "manifest.json").string();
  std::string readable = kind;  // "phantom_set" -> "phantom set"
  std::replace(readable.begin(), readable.end(), '_', ' ');
  std::error_code ignored;
  if (!fs::is_directory(folder, ignored)) throw UserError(folder + ": no such folder; allowed: " + what);
  if (!fs::exists(file, ignored))
    throw UserError(folder + ": no manifest.json: the set is unfinished or not a " + readable +
                    " folder (frugal writes manifest.json last); allowed: " + what);
  require_regular_file(file, "the manifest.json of " + what);
  std::ifstream stream(file, std::ios::binary);
  nlohmann::json manifest;
  try {
    manifest = nlohmann::json::parse(stream);
  } catch (const nlohmann::json::exception&) {
    throw UserError(file +
                    ": not valid JSON (cut short or damaged; the set is unfinished or not frugal's); allowed: "
                    "the manifest.json of " +
                    what);
  }
  if (!manifest.is_object() || !manifest.contains("kind") || !manifest.at("kind").is_string())
    throw UserError(file + ": has no \"kind\"; allowed: the manifest.json of " + what);
  const std::string found = manifest.at("kind").get<std::string>();
  if (found != kind) {
    const std::string described = kind_description(found);
    throw UserError(file + ": the folder holds " + (described.empty() ? "\"" + found + "\"" : described) + ", not a " +
                    readable + " folder; allowed: " + what);
  }
  const auto version = manifest.find("schema_version");
  if (version == manifest.end() || !version->is_number_integer() || version->get<long long>() != kOutputSchemaVersion)
    throw UserError(file + ": schema_version is " +
                    (version == manifest.end() ? std::string("missing") : version->dump()) +
                    "; allowed: " + std::to_string(kOutputSchemaVersion) + " (the layout this frugal reads)");
  return manifest;
}

std::string describe_finished_folder(const std::string& folder) {
  std::ifstream stream(fs::path(folder) / "manifest.json", std::ios::binary);
  try {
    const nlohmann::json manifest = nlohmann::json::parse(stream);
    if (manifest.is_object() && manifest.contains("kind") && manifest.at("kind").is_string()) {
      const std::string described = kind_description(manifest.at("kind").get<std::string>());
      if (!described.empty()) return described;
    }
  } catch (const nlohmann::json::exception&) {
  }
  return "a manifest.json";
}

void require_output_folder(const std::string& folder, const std::string& kind, bool overwrite) {
  require_writable_output(folder, OutputKind::folder, "a new folder or a folder of frugal's own");
  const std::string manifest = (fs::path(folder) / "manifest.json").string();
  std::error_code ignored;
  if (!fs::exists(manifest, ignored)) return;
  const std::string held = describe_finished_folder(folder);
  if (held != kind_description(kind))
    throw UserError(folder + ": already holds " + held + " (manifest.json), not " + kind_description(kind) +
                    "; allowed: a new folder, or --overwrite of a folder of the same kind");
  if (!overwrite)
    throw UserError(folder + ": already holds " + held + " (manifest.json); choose another folder or pass --overwrite");
}

std::string phantom_set_fingerprint(const std::string& folder) {
  const std::string file = (fs::path(folder) / "truth.csv").string();
  require_regular_file(file, "the truth.csv of a phantom set");
  std::ifstream stream(file, std::ios::binary);
  std::uint64_t hash = 14695981039346656037ULL;  // FNV-1a 64-bit offset basis and prime (Fowler, Noll, Vo)
  for (std::istreambuf_iterator<char> it(stream), end; it != end; ++it) {
    hash ^= static_cast<unsigned char>(*it);
    hash *= 1099511628211ULL;
  }
  char text[17];
  std::snprintf(text, sizeof(text), "%016llx", static_cast<unsigned long long>(hash));
  return text;
}

}  // namespace frugal

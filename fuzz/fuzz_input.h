#pragma once
// What every fuzz target shares: the input as text, and a scratch file for readers that only
// take a path. A target catches frugal::UserError (bad input, reported clearly: the expected
// outcome) and lets anything else escape, so libFuzzer records it as a crash.
#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <fstream>
#include <string>

namespace frugal::fuzz {

inline std::string as_text(const std::uint8_t* data, std::size_t size) {
  return std::string(reinterpret_cast<const char*>(data), size);
}

// A path in TMPDIR (or /tmp) private to this process, rewritten with each input.
inline std::string scratch_path(const std::string& suffix) {
  const char* folder = std::getenv("TMPDIR");
  return std::string(folder != nullptr && *folder != '\0' ? folder : "/tmp") + "/frugal-fuzz-" +
         std::to_string(::getpid()) + suffix;
}

inline std::string write_scratch(const std::uint8_t* data, std::size_t size, const std::string& suffix) {
  const std::string path = scratch_path(suffix);
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
  out.close();
  if (!out) std::abort();  // the fuzzing machine's fault, not the reader's
  return path;
}

}  // namespace frugal::fuzz

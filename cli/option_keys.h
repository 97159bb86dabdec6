#pragma once
// Which command-line option sets which key of an options struct, so that a validate() message,
// which names the key ("batch_size = 0: must be at least 1"), names the option the user typed.

#include <CLI/CLI.hpp>
#include <map>
#include <string>

namespace frugal::cli {

class OptionKeys {
 public:
  // `root`: the struct's name in a study file ("train"); messages show the full path beside the option.
  explicit OptionKeys(std::string root) : root_(std::move(root)) {}

  // add_option(flag, variable, help) with its default shown, remembered as setting `key`.
  template <class T>
  CLI::Option* add(CLI::App* command, const std::string& flag, T& variable, const std::string& key,
                   const std::string& help) {
    keys_[key] = flag;
    return command->add_option(flag, variable, help)->capture_default_str();
  }
  // For keys set another way (a flag, a name turned into an enum).
  void name(const std::string& key, const std::string& flag) { keys_[key] = flag; }
  // Keys under `prefix` that no option sets get this note ("grading bins come from --rater-file").
  void explain(const std::string& prefix, const std::string& note) { notes_[prefix] = note; }

  // "--batch-size = 0: must be at least 1 (train.batch_size)". A message whose key path begins
  // with the root (learn::train names its options "train") is read the same way; a key no option
  // sets keeps its full path, with the note of its prefix if any.
  std::string message(const std::string& validate_message) const;

 private:
  std::string root_;
  std::map<std::string, std::string> keys_;
  std::map<std::string, std::string> notes_;
};

}  // namespace frugal::cli

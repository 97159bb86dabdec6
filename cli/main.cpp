// The frugal command line: one subcommand per job, each in its own <name>_command.cpp.

#include <CLI/CLI.hpp>

#include <algorithm>
#include <cerrno>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "frugal_version.h"
#include "phantoms/allocation_tuning.h"
#include "phantoms/user_error.h"

namespace {

// Command-line mistakes are reported like every other user error ("frugal: error: ...", exit 2)
// instead of with the parser's own wording and exit codes 104..114.

// The command whose arguments were being read when parsing stopped: top level or a subcommand.
const CLI::App& deepest_command(const CLI::App& app) {
  const CLI::App* command = &app;
  for (std::vector<CLI::App*> parsed = command->get_subcommands(); !parsed.empty(); parsed = command->get_subcommands())
    command = parsed.back();
  return *command;
}

std::string command_name(const CLI::App& app, const CLI::App& command) {
  std::string name;
  for (const CLI::App* part = &command; part != nullptr && part != &app; part = part->get_parent())
    name = " " + part->get_name() + name;
  return "frugal" + name;
}

std::string command_list(const CLI::App& app) {
  std::string list;
  for (const CLI::App* command : app.get_subcommands([](const CLI::App*) { return true; }))
    list += (list.empty() ? "" : ", ") + command->get_name();
  return list;
}

// What follows the stock parser text `prefix` in `message`, or "" when it does not start with it.
std::string after(const std::string& message, const std::string& prefix) {
  return message.compare(0, prefix.size(), prefix) == 0 ? message.substr(prefix.size()) : std::string();
}

// What an option of `command` takes, from its parser type ("INT", "UINT", "FLOAT"); "" when unknown.
std::string allowed_value(const CLI::App& command, const std::string& name) {
  const CLI::Option* option = command.get_option_no_throw(name);
  const std::string type = option == nullptr ? std::string() : option->get_type_name();
  if (type.rfind("INT", 0) == 0) return "a whole number such as 10";
  if (type.rfind("UINT", 0) == 0) return "a whole number from 0, such as 10";
  if (type.rfind("FLOAT", 0) == 0) return "a number such as 0.5";
  return "";
}

// "--count: 'abc' is not a whole number; allowed: ..." from "Could not convert: --count = abc".
std::string conversion_message(const CLI::App& command, const std::string& message) {
  const std::string rest = after(message, "Could not convert: ");
  const auto equals = rest.find(" = ");
  if (equals == std::string::npos) return message;
  const std::string name = rest.substr(0, equals);
  const std::string value = rest.substr(equals + 3);
  const std::string allowed = allowed_value(command, name);
  const bool digits = !value.empty() && value.find_first_not_of("+-0123456789") == std::string::npos;
  std::string problem = "is not an allowed value";
  if (allowed.rfind("a whole", 0) == 0) problem = digits ? "is out of range" : "is not a whole number";
  if (allowed.rfind("a number", 0) == 0) problem = "is not a number";
  return name + ": '" + value + "' " + problem + (allowed.empty() ? "" : "; allowed: " + allowed);
}

// `first_argument` is argv[1] (or ""): when no command was recognised, it is what was given instead.
std::string parse_error_message(const CLI::App& app, const CLI::ParseError& error, const std::string& first_argument) {
  const CLI::App& command = deepest_command(app);
  const bool top = &command == &app;
  const std::string message = error.what();
  std::string text = message;
  switch (static_cast<CLI::ExitCodes>(error.get_exit_code())) {
    case CLI::ExitCodes::ConversionError:
      text = conversion_message(command, message);
      break;
    case CLI::ExitCodes::RequiredError:
      if (top)
        text = (first_argument.empty() ? "no command given" : "'" + first_argument + "' is not a frugal command") +
               "; allowed: " + command_list(app);
      break;
    case CLI::ExitCodes::ExtrasError: {
      std::string extras = after(message, "The following argument was not expected: ");
      if (extras.empty()) extras = after(message, "The following arguments were not expected: ");
      if (extras.empty()) break;
      // The parser lists the extras last first; put them back in command-line order, each quoted.
      std::vector<std::string> words;
      for (std::size_t start = 0, end = 0; start <= extras.size(); start = end + 1) {
        end = std::min(extras.find(' ', start), extras.size());
        words.insert(words.begin(), extras.substr(start, end - start));
      }
      std::string listed;
      for (const std::string& word : words) listed += (listed.empty() ? "'" : ", '") + word + "'";
      text = top ? listed + " is not a frugal command or option; allowed: " + command_list(app) + ", --help, --version"
                 : "unexpected argument" + std::string(words.size() > 1 ? "s " : " ") + listed +
                       "; allowed: the arguments and options " + command_name(app, command) + " lists";
      break;
    }
    case CLI::ExitCodes::ArgumentMismatch: {
      // "--count: 1 required INT missing" when the value after an option is absent.
      const auto colon = message.find(": ");
      if (colon == std::string::npos || message.find(" missing") == std::string::npos) break;
      const std::string name = message.substr(0, colon);
      const std::string allowed = allowed_value(command, name);
      text = name + " needs a value after it" + (allowed.empty() ? "" : "; allowed: " + allowed);
      break;
    }
    default:
      break;
  }
  return text + " (see " + command_name(app, command) + " --help)";
}

// Seeds are 64-bit unsigned, and the parser would wrap "-1" and saturate 2^64 to 2^64 - 1.
std::string check_seed(std::string& text) {
  errno = 0;
  const bool digits = !text.empty() && text.size() <= 20 && text.find_first_not_of("0123456789") == std::string::npos;
  if (digits) {
    (void)std::strtoull(text.c_str(), nullptr, 10);
    if (errno != ERANGE) return "";
  }
  return "'" + text + "' is not a seed; allowed: a whole number from 0 to 18446744073709551615";
}

}  // namespace

int main(int argc, char** argv) {
  frugal::keep_freed_image_memory();
  CLI::App app{"frugal: plan expert-annotation budgets on synthetic phantoms with exact truth.\n"
               "Results describe synthetic phantoms; they do not validate a method for clinical use."};
  app.set_version_flag("--version", std::string("frugal ") + frugal::kVersion);
  app.require_subcommand(1);
  frugal::cli::add_phantoms_command(app);
  frugal::cli::add_labels_command(app);
  frugal::cli::add_agree_command(app);
  frugal::cli::add_calibrate_command(app);
  frugal::cli::add_train_command(app);
  frugal::cli::add_predict_command(app);
  frugal::cli::add_score_command(app);
  frugal::cli::add_run_command(app);
  frugal::cli::add_merge_command(app);
  frugal::cli::add_export_command(app);
  frugal::cli::add_plan_command(app);
  frugal::cli::add_report_command(app);
  frugal::cli::add_demo_command(app);
  frugal::cli::add_validate_command(app);
  // Every command's --seed, here once rather than in each command file.
  for (CLI::App* command : app.get_subcommands([](CLI::App*) { return true; }))
    if (CLI::Option* seed = command->get_option_no_throw("--seed"); seed != nullptr)
      seed->check(CLI::Validator(check_seed, ""));
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& error) {
    if (error.get_exit_code() == 0) return app.exit(error);  // --help and --version
    std::fprintf(stderr, "frugal: error: %s\n", parse_error_message(app, error, argc > 1 ? argv[1] : "").c_str());
    return 2;
  } catch (const frugal::UserError& error) {
    std::fprintf(stderr, "frugal: error: %s\n", error.what());
    return 2;
  } catch (const frugal::cli::ChecksFailed& failure) {
    std::fprintf(stderr, "frugal: %s\n", failure.what());
    return 3;
  } catch (const std::exception& error) {
    std::fprintf(stderr, "frugal: error: %s\n", error.what());
    return 1;
  }
  // A summary that never reached standard output (a full disk behind a redirection) is not success.
  if (std::fflush(stdout) != 0 || std::ferror(stdout) != 0) {
    std::fprintf(stderr, "frugal: error: standard output: writing failed (the disk is full or the file too large)\n");
    return 2;
  }
  return 0;
}

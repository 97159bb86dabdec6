// frugal validate: runs the canonical studies of experiments/validate and prints, per claim, the
// effect's mean over repeats, its interval, the threshold and pass or fail. Exit status 3 when a
// check fails, so a script can tell "the testbed is off" from bad input (2).

#include <CLI/CLI.hpp>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "cli/progress_bar.h"
#include "experiments/validate/validation.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::cli {
namespace {

struct ValidateArguments {
  bool quick = false;
  std::vector<int> phenomena;
  int threads = 2;
  std::uint64_t seed = 1;
  std::string json;
  std::string store;
};

std::string signed_number(double value, int decimals) {
  if (!std::isfinite(value)) return "NA";
  char text[32];
  std::snprintf(text, sizeof text, "%+.*f", decimals, value);
  return text;
}

std::string format_table(const validation::ValidationReport& report) {
  std::ostringstream out;
  const int percent = static_cast<int>(std::lround(report.options.confidence * 100.0));
  char line[256];
  std::snprintf(line, sizeof line, "%-6s %9s  %-22s %10s  %s\n", "check", "effect",
                (std::to_string(percent) + "% interval").c_str(), "threshold", "result");
  out << line;
  for (const validation::CheckResult& check : report.checks) {
    const std::string interval = "[" + signed_number(check.lower, 3) + ", " + signed_number(check.upper, 3) + "]";
    std::snprintf(line, sizeof line, "%-6s %9s  %-22s %10s  %s\n", check.id.c_str(),
                  signed_number(check.mean, 3).c_str(), interval.c_str(),
                  (">= " + signed_number(check.threshold, 3)).c_str(), check.passed ? "pass" : "FAIL");
    out << line;
  }
  out << "\n";
  for (const validation::CheckResult& check : report.checks) {
    out << check.id << "  " << check.claim << "\n";
    out << "    effect: " << check.effect << "\n";
    out << "    per repeat:";
    for (double effect : check.effects) out << " " << signed_number(effect, 3);
    out << "\n";
    // Phenomena with two checks share their numbers; print them once, under the last.
    const bool last_of_phenomenon = &check == &report.checks.back() || (&check + 1)->phenomenon != check.phenomenon;
    if (last_of_phenomenon && !check.parts.empty()) {
      out << "    means:";
      for (std::size_t p = 0; p < check.parts.size(); ++p) {
        char part[160];
        std::snprintf(part, sizeof part, "%s %s %.3f", p == 0 ? "" : ",", check.parts[p].first.c_str(),
                      check.parts[p].second);
        out << part;
      }
      out << "\n";
    }
    out << "    basis: " << check.basis << "\n";
  }
  return out.str();
}

nlohmann::json to_json(const validation::ValidationReport& report) {
  const auto number = [](double value) { return std::isfinite(value) ? nlohmann::json(value) : nlohmann::json(); };
  nlohmann::json checks = nlohmann::json::array();
  for (const validation::CheckResult& check : report.checks) {
    nlohmann::json effects = nlohmann::json::array();
    for (double effect : check.effects) effects.push_back(number(effect));
    nlohmann::json parts = nlohmann::json::object();
    for (const auto& [name, value] : check.parts) parts[name] = number(value);
    checks.push_back({{"phenomenon", check.phenomenon},
                      {"id", check.id},
                      {"claim", check.claim},
                      {"effect", check.effect},
                      {"basis", check.basis},
                      {"threshold", check.threshold},
                      {"effects", effects},
                      {"mean", number(check.mean)},
                      {"lower", number(check.lower)},
                      {"upper", number(check.upper)},
                      {"passed", check.passed},
                      {"parts", parts}});
  }
  return {{"size", validation::to_string(report.options.size)},
          {"seed", report.options.seed},
          {"threads", report.options.threads},
          {"confidence", report.options.confidence},
          {"repeats", report.repeats},
          {"seconds", report.seconds},
          {"cells_resumed", report.cells_resumed},
          {"passed", report.passed()},
          {"checks", checks}};
}

void validate(const ValidateArguments& arguments) {
  validation::ValidationOptions options;
  options.size = arguments.quick ? validation::ValidationSize::quick : validation::ValidationSize::full;
  options.phenomena = arguments.phenomena;
  options.threads = arguments.threads;
  options.seed = arguments.seed;
  options.store_path = arguments.store;
  if (const std::string problem = options.validate(); !problem.empty())
    throw UserError("--" + problem);  // every key is the option of the same name
  std::printf("frugal validate (%s): canonical studies on synthetic phantoms, effects on held-out subjects against "
              "the exact truth.\nChecks of the testbed only; they do not validate any method for clinical use.\n\n",
              validation::to_string(options.size).c_str());
  std::fflush(stdout);
  ProgressBar bar("validate", options.phenomena.empty() ? 8 : static_cast<long long>(options.phenomena.size()));
  int started = 0, last_phenomenon = 0;
  const validation::ValidationReport report = validation::run_validation(options, [&](const validation::ValidationProgress& p) {
    if (p.phenomenon != last_phenomenon) ++started, last_phenomenon = p.phenomenon;
    bar.update(started - 1, "phenomenon " + std::to_string(p.phenomenon) + ", repeat " + std::to_string(p.repeat) + "/" +
                                std::to_string(p.repeats) + ": " + p.what);
  });
  bar.finish();
  std::fputs(format_table(report).c_str(), stdout);
  const int failed = static_cast<int>(
      std::count_if(report.checks.begin(), report.checks.end(), [](const auto& check) { return !check.passed; }));
  std::printf("\n%d of %zu checks passed in %.0f s (%d repeats, seed %llu, %d threads).\n",
              static_cast<int>(report.checks.size()) - failed, report.checks.size(), report.seconds, report.repeats,
              static_cast<unsigned long long>(options.seed), options.threads);
  if (!options.store_path.empty())
    std::printf("Cells kept in %s (%d were there before this run; rerun the same command to resume).\n",
                options.store_path.c_str(), report.cells_resumed);
  if (!arguments.json.empty()) {
    WholeFile file(arguments.json);
    file.write(to_json(report).dump(2) + "\n");
    file.commit();
  }
  std::fflush(stdout);  // the table before the failure's line on standard error
  if (failed > 0) {
    std::string ids;
    for (const validation::CheckResult& check : report.checks)
      if (!check.passed) ids += (ids.empty() ? "" : ", ") + check.id;
    throw ChecksFailed("the testbed did not reproduce check" + std::string(failed > 1 ? "s " : " ") + ids);
  }
}

}  // namespace

void add_validate_command(CLI::App& app) {
  auto arguments = std::make_shared<ValidateArguments>();
  CLI::App* command = app.add_subcommand(
      "validate", "Check that the testbed reproduces eight settled facts of weak- and noisy-label learning "
                  "(docs/validate.md); exit status 3 when one fails.");
  command->add_flag("--quick", arguments->quick, "48x48 images and 5 repeats (minutes) instead of the full run");
  command->add_option("--phenomenon", arguments->phenomena, "Run only these phenomena (1 to 8); repeat the option");
  command->add_option("--threads", arguments->threads, "Torch threads per cell")->capture_default_str();
  command->add_option("--seed", arguments->seed, "Seed of every phantom and rater")->capture_default_str();
  command->add_option("--json", arguments->json, "Also write the results as JSON to this file");
  command->add_option("--store", arguments->store,
                      "Keep every finished cell in this results store; a rerun with the same store (same size, seed "
                      "and threads) resumes where a killed run stopped");
  command->callback([arguments] { validate(*arguments); });
}

}  // namespace frugal::cli

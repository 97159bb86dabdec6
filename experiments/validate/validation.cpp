#include "experiments/validate/validation.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <sstream>

#include "experiments/measure/mean_interval.h"
#include "experiments/validate/cell_archive.h"
#include "experiments/validate/phenomena.h"
#include "phantoms/user_error.h"

namespace frugal::validation {

std::string to_string(ValidationSize size) { return size == ValidationSize::full ? "full" : "quick"; }

ValidationSize validation_size_from_string(const std::string& name) {
  if (name == "quick") return ValidationSize::quick;
  if (name == "full") return ValidationSize::full;
  throw UserError("validation size \"" + name + "\": allowed quick, full");
}

std::string ValidationOptions::validate() const {
  std::ostringstream message;
  if (threads < 1 || threads > 256) {
    message << "threads = " << threads << ": allowed 1 to 256";
  } else if (!(confidence > 0.0 && confidence < 1.0)) {
    message << "confidence = " << confidence << ": allowed strictly between 0 and 1";
  } else {
    const int count = static_cast<int>(canonical_phenomena().size());
    for (int number : phenomena)
      if (number < 1 || number > count) {
        message << "phenomenon = " << number << ": allowed 1 to " << count;
        break;
      }
  }
  return message.str();
}

bool ValidationReport::passed() const {
  return !checks.empty() && std::all_of(checks.begin(), checks.end(), [](const CheckResult& c) { return c.passed; });
}

ValidationReport run_validation(const ValidationOptions& options,
                                const std::function<void(const ValidationProgress&)>& progress) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  const auto start = std::chrono::steady_clock::now();
  ValidationReport report;
  report.options = options;
  const ValidationSizes sizes = sizes_for(options.size);
  report.repeats = sizes.repeats;
  study::CohortCache cache;
  CellArchive archive = options.store_path.empty() ? CellArchive() : CellArchive(options.store_path, options);
  report.cells_resumed = archive.resumed();
  for (const Phenomenon& phenomenon : canonical_phenomena()) {
    if (!options.phenomena.empty() &&
        std::find(options.phenomena.begin(), options.phenomena.end(), phenomenon.number) == options.phenomena.end())
      continue;
    std::vector<CheckResult> checks;
    for (const CheckDefinition& definition : phenomenon.checks) {
      CheckResult check;
      check.phenomenon = phenomenon.number;
      check.id = definition.id;
      check.claim = definition.claim;
      check.effect = definition.effect;
      check.basis = definition.basis;
      check.threshold = definition.threshold;
      checks.push_back(check);
    }
    std::vector<std::pair<std::string, double>> part_sums;
    for (int repeat = 0; repeat < sizes.repeats; ++repeat) {
      CellContext context;
      context.sizes = sizes;
      context.seed = options.seed;
      context.threads = options.threads;
      context.cache = &cache;
      context.archive = &archive;
      context.progress = [&](const std::string& what) {
        if (progress) progress({phenomenon.number, repeat + 1, sizes.repeats, what});
      };
      const RepeatOutcome outcome = phenomenon.measure(context, repeat);
      FRUGAL_CHECK(outcome.effects.size() == checks.size());
      for (std::size_t c = 0; c < checks.size(); ++c) checks[c].effects.push_back(outcome.effects[c]);
      if (part_sums.empty()) part_sums = std::vector<std::pair<std::string, double>>(outcome.parts.size());
      for (std::size_t p = 0; p < outcome.parts.size(); ++p) {
        part_sums[p].first = outcome.parts[p].first;
        part_sums[p].second += outcome.parts[p].second / sizes.repeats;
      }
    }
    // Subjects are a function of (scenario, seed, index): the next phenomenon's scenarios differ.
    cache.clear();
    for (CheckResult& check : checks) {
      measure::mean_interval(check.effects, options.confidence, check.mean, check.lower, check.upper);
      check.passed = std::isfinite(check.mean) && check.mean >= check.threshold && check.lower > 0.0;
      check.parts = part_sums;
      report.checks.push_back(check);
    }
  }
  report.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return report;
}

}  // namespace frugal::validation

// `frugal agree`: agreement statistics on a user's own ratings table (a pilot study, a rescan
// series), so that the numbers a study file asks for (ICC, weighted kappa, limits of agreement)
// can be measured with the same code frugal uses on its phantoms.

#include <CLI/CLI.hpp>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <iostream>
#include <memory>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "experiments/measure/bland_altman.h"
#include "experiments/measure/correlation.h"
#include "experiments/measure/icc.h"
#include "experiments/measure/kappa.h"
#include "experiments/measure/ratings_table.h"
#include "experiments/measure/repeatability.h"
#include "frugal_version.h"
#include "phantoms/image.h"
#include "phantoms/user_error.h"

namespace frugal::cli {
namespace {

using nlohmann::json;
namespace measure = frugal::measure;
using measure::in_quotes;

struct AgreeOptions {
  std::string table_path;
  std::string statistic;
  std::string weights = "none";
  std::string categories;  // comma-separated, in order; empty = from the data
  double confidence = 0.95;
  double limit_multiplier = 1.96;
  bool json_output = false;
  bool weights_given = false;
  bool limit_multiplier_given = false;
};

// What one statistic hands back: machine-readable fields and the human table.
struct Report {
  json result;
  std::string text;
};

std::string number(double value, int decimals = 4) {
  if (std::isnan(value)) return "n/a";
  if (std::isinf(value)) return value > 0 ? "inf" : "-inf";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, value);
  return buffer;
}

std::string p_value(double value) { return value < 1e-4 ? "<0.0001" : number(value, 4); }

std::string interval(double lower, double upper, int decimals = 4) {
  return "[" + number(lower, decimals) + ", " + number(upper, decimals) + "]";
}

std::string percent(double confidence) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%g%%", confidence * 100.0);
  return buffer;
}

std::string pad(const std::string& text, std::size_t width) {
  return text.size() >= width ? text + " " : text + std::string(width - text.size(), ' ');
}

std::string rater_list(const measure::RatingsTable& table) {
  std::string names;
  for (std::size_t r = 0; r < table.raters.size(); ++r) names += (r ? ", " : "") + in_quotes(table.raters[r]);
  return names;
}

std::string table_summary(const measure::RatingsTable& table) {
  return table.source + ": " + to_string(table.layout) + " layout, " + std::to_string(table.subjects.size()) +
         " subjects x " + std::to_string(table.raters.size()) + " raters (" + rater_list(table) + ")";
}

void require_two_raters(const measure::RatingsTable& table, const std::string& what) {
  if (table.raters.size() == 2) return;
  throw UserError(table.source + ": " + what + " compares exactly 2 raters but the table has " +
                  std::to_string(table.raters.size()) + " (" + rater_list(table) +
                  "); allowed: a table with 2 rater columns (or 2 rater names in the long layout)" +
                  (what == "Cohen's kappa" ? "; for several raters use --stat fleiss" : ""));
}

std::vector<double> parse_categories(const std::string& text) {
  std::vector<double> categories;
  std::stringstream stream(text);
  std::string item;
  while (std::getline(stream, item, ',')) {
    item.erase(0, item.find_first_not_of(" \t"));
    item.erase(item.find_last_not_of(" \t") + 1);
    double value = 0.0;
    const auto [stop, error] = std::from_chars(item.data(), item.data() + item.size(), value);
    if (item.empty() || error != std::errc() || stop != item.data() + item.size() || !std::isfinite(value)) {
      throw UserError("--categories: " + in_quotes(item) +
                      " is not a number; allowed: comma-separated numbers in order, such as 0,1,2,3");
    }
    if (std::find(categories.begin(), categories.end(), value) != categories.end()) {
      throw UserError("--categories: " + item + " appears twice; allowed: each category once, in order");
    }
    categories.push_back(value);
  }
  if (categories.size() < 2) {
    throw UserError("--categories: " + in_quotes(text) + " names fewer than 2 categories; allowed: at "
                    "least 2 comma-separated numbers in order, such as 0,1,2,3");
  }
  return categories;
}

// The category list: given by the user, or all integers from the lowest to the highest rating
// (so that an unused middle grade still sets the weight spacing), or the distinct ratings.
std::vector<double> resolve_categories(const AgreeOptions& options, const measure::RatingsTable& table,
                                       std::string& origin) {
  if (!options.categories.empty()) {
    origin = "given with --categories";
    const std::vector<double> categories = parse_categories(options.categories);
    for (int s = 0; s < static_cast<int>(table.subjects.size()); ++s) {
      for (int r = 0; r < static_cast<int>(table.raters.size()); ++r) {
        if (measure::category_index(categories, table.ratings(s, r)) < 0) {
          throw UserError(table.where(s, r) + ": rating " + number(table.ratings(s, r), 6) +
                          " is not one of --categories " + options.categories +
                          "; allowed: one of the listed categories");
        }
      }
    }
    return categories;
  }
  const std::set<double> distinct(table.ratings.data(), table.ratings.data() + table.ratings.size());
  const bool integers = std::all_of(distinct.begin(), distinct.end(),
                                    [](double value) { return value == std::round(value); });
  const double low = *distinct.begin();
  const double high = *distinct.rbegin();
  if (integers && high - low <= 1000.0) {
    origin = "every integer from the lowest to the highest rating; set --categories to include unused end grades";
    std::vector<double> categories;
    for (double value = low; value <= high; value += 1.0) categories.push_back(value);
    return categories;
  }
  origin = "the distinct ratings in the table; set --categories to fix the full list";
  return {distinct.begin(), distinct.end()};
}

// A category exactly as the double it is: the shortest of %.15g, %.16g and %.17g that reads back
// the same value (17 significant digits always do), so 2000000 prints as 2000000, not 2e+06.
std::string exact_number(double value) {
  char buffer[32];
  for (int digits = 15; digits <= 17; ++digits) {
    std::snprintf(buffer, sizeof buffer, "%.*g", digits, value);
    double read_back = 0.0;
    std::from_chars(buffer, buffer + std::strlen(buffer), read_back);
    if (read_back == value) break;
  }
  return buffer;
}

std::string category_text(const std::vector<double>& categories) {
  std::string text;
  for (std::size_t i = 0; i < categories.size(); ++i) text += (i ? "," : "") + exact_number(categories[i]);
  return text;
}

// NaN (an undefined estimate) as JSON null, which is what json::dump writes for it anyway; said
// here so the output does not rest on that.
json number_or_null(double value) { return std::isnan(value) ? json() : json(value); }

// The --weights names, from the one name table of the measure part.
constexpr std::array<measure::KappaWeights, 3> kAllKappaWeights{
    measure::KappaWeights::none, measure::KappaWeights::linear, measure::KappaWeights::quadratic};

std::string kappa_weight_names() {
  std::string names;
  for (const measure::KappaWeights weights : kAllKappaWeights) {
    names += (names.empty() ? "" : ", ") + to_string(weights);
  }
  return names;
}

measure::KappaWeights kappa_weights(const std::string& name) {
  for (const measure::KappaWeights weights : kAllKappaWeights) {
    if (to_string(weights) == name) return weights;
  }
  throw UserError("--weights " + in_quotes(name) + " is not a weighting; allowed: " + kappa_weight_names());
}

Report run_icc(const measure::RatingsTable& table, const AgreeOptions& options) {
  measure::IccOptions icc_options;
  icc_options.confidence = options.confidence;
  const measure::IccResult result = measure::intraclass_correlation(table.ratings, icc_options);
  const measure::IccAnova& a = result.anova;
  Report report;
  report.result["anova"] = {{"between_subjects_mean_square", a.between_subjects},
                            {"within_subjects_mean_square", a.within_subjects},
                            {"between_raters_mean_square", a.between_raters},
                            {"residual_mean_square", a.residual}};
  std::ostringstream text;
  text << "Intraclass correlation, " << table_summary(table) << "\n"
       << "Mean squares: subjects " << number(a.between_subjects) << ", within subjects "
       << number(a.within_subjects) << ", raters " << number(a.between_raters) << ", residual "
       << number(a.residual) << "\n\n"
       << pad("Shrout-Fleiss", 15) << pad("McGraw-Wong", 13) << pad("model", 54) << pad("ICC", 9)
       << pad(percent(options.confidence) + " interval", 20) << pad("F", 10) << pad("df1", 6) << pad("df2", 6)
       << "p\n";
  json forms = json::array();
  bool undefined_form = false;
  for (const measure::IccEstimate& e : result.estimates) {
    undefined_form = undefined_form || std::isnan(e.value);
    forms.push_back({{"shrout_fleiss", measure::shrout_fleiss_name(e.form)},
                     {"mcgraw_wong", measure::mcgraw_wong_name(e.form)},
                     {"model", measure::icc_description(e.form)},
                     {"icc", number_or_null(e.value)},
                     {"lower", number_or_null(e.lower)},
                     {"upper", number_or_null(e.upper)},
                     {"f", e.f_statistic},
                     {"df1", e.df1},
                     {"df2", e.df2},
                     {"p_value", e.p_value}});
    text << pad(measure::shrout_fleiss_name(e.form), 15) << pad(measure::mcgraw_wong_name(e.form), 13)
         << pad(measure::icc_description(e.form), 54) << pad(number(e.value), 9)
         << pad(interval(e.lower, e.upper), 20) << pad(number(e.f_statistic, 3), 10)
         << pad(number(e.df1, 0), 6) << pad(number(e.df2, 0), 6) << p_value(e.p_value) << "\n";
  }
  report.result["forms"] = forms;
  if (undefined_form) {
    text << "\nn/a: the denominator of this form's formula is zero or negative for this table, so the\n"
            "form is undefined.\n";
  }
  text << "\nIntervals from the F distribution (Shrout & Fleiss 1979; McGraw & Wong 1996); the\n"
          "absolute-agreement forms use Satterthwaite's approximate degrees of freedom.\n";
  report.text = text.str();
  return report;
}

Report run_kappa(const measure::RatingsTable& table, const AgreeOptions& options) {
  require_two_raters(table, "Cohen's kappa");
  std::string origin;
  const std::vector<double> categories = resolve_categories(options, table, origin);
  measure::CohenKappaOptions kappa_options;
  kappa_options.confidence = options.confidence;
  kappa_options.weights = kappa_weights(options.weights);
  const measure::CohenKappaResult result =
      measure::cohen_kappa(table.rater_column(0), table.rater_column(1), categories, kappa_options);
  Report report;
  report.result = {{"weights", options.weights},
                   {"categories", categories},
                   {"categories_from", options.categories.empty() ? "data" : "option"},
                   {"kappa", result.kappa},
                   {"lower", result.lower},
                   {"upper", result.upper},
                   {"standard_error", result.standard_error},
                   {"null_standard_error", result.null_standard_error},
                   {"z", result.z},
                   {"p_value", result.p_value},
                   {"observed_agreement", result.observed_agreement},
                   {"expected_agreement", result.expected_agreement}};
  json confusion = json::array();
  for (Eigen::Index i = 0; i < result.confusion.rows(); ++i) {
    json row = json::array();
    for (Eigen::Index j = 0; j < result.confusion.cols(); ++j) row.push_back(std::lround(result.confusion(i, j)));
    confusion.push_back(row);
  }
  report.result["confusion"] = confusion;

  std::ostringstream text;
  text << "Cohen's kappa, " << table_summary(table) << "\n"
       << "weights: " << options.weights
       << (options.weights == "none" ? "" : " (by position in the category list)") << "\n"
       << "categories: " << category_text(categories) << " (" << origin << ")\n\n"
       << pad("kappa", 28) << number(result.kappa) << "\n"
       << pad(percent(options.confidence) + " interval", 28) << interval(result.lower, result.upper) << "\n"
       << pad("standard error", 28) << number(result.standard_error) << "\n"
       << pad("observed agreement", 28) << number(result.observed_agreement) << "\n"
       << pad("chance agreement", 28) << number(result.expected_agreement) << "\n"
       << pad("test of kappa = 0", 28) << "z = " << number(result.z, 3) << ", p = " << p_value(result.p_value)
       << "\n\nCounts (rows " << in_quotes(table.raters[0]) << ", columns " << in_quotes(table.raters[1]) << "):\n"
       << pad("", 10);
  for (const double category : categories) text << pad(category_text({category}), 8);
  text << "\n";
  for (Eigen::Index i = 0; i < result.confusion.rows(); ++i) {
    text << pad(category_text({categories[static_cast<std::size_t>(i)]}), 10);
    for (Eigen::Index j = 0; j < result.confusion.cols(); ++j) {
      text << pad(std::to_string(std::lround(result.confusion(i, j))), 8);
    }
    text << "\n";
  }
  text << "\nKappa after Cohen (1960, 1968); standard errors and the normal interval after\n"
          "Fleiss, Cohen & Everitt (1969).\n";
  report.text = text.str();
  return report;
}

Report run_fleiss(const measure::RatingsTable& table, const AgreeOptions& options) {
  std::string origin;
  const std::vector<double> categories = resolve_categories(options, table, origin);
  const measure::FleissKappaResult result = measure::fleiss_kappa(table.ratings, categories);
  Report report;
  report.result = {{"categories", categories},
                   {"categories_from", options.categories.empty() ? "data" : "option"},
                   {"kappa", result.kappa},
                   {"null_standard_error", result.null_standard_error},
                   {"z", result.z},
                   {"p_value", result.p_value},
                   {"observed_agreement", result.observed_agreement},
                   {"expected_agreement", result.expected_agreement},
                   {"category_proportions", result.category_proportions}};
  json category_kappas = json::array();
  for (const double kappa : result.category_kappas) category_kappas.push_back(std::isnan(kappa) ? json() : json(kappa));
  report.result["category_kappas"] = category_kappas;

  std::ostringstream text;
  text << "Fleiss' kappa, " << table_summary(table) << "\n"
       << "categories: " << category_text(categories) << " (" << origin << ")\n\n"
       << pad("kappa", 30) << number(result.kappa) << "\n"
       << pad("observed agreement", 30) << number(result.observed_agreement) << "\n"
       << pad("chance agreement", 30) << number(result.expected_agreement) << "\n"
       << pad("standard error if kappa = 0", 30) << number(result.null_standard_error) << "\n"
       << pad("test of kappa = 0", 30) << "z = " << number(result.z, 3) << ", p = " << p_value(result.p_value)
       << "\n\n"
       << pad("category", 10) << pad("proportion", 12) << "kappa\n";
  for (std::size_t j = 0; j < categories.size(); ++j) {
    text << pad(category_text({categories[j]}), 10) << pad(number(result.category_proportions[j]), 12)
         << number(result.category_kappas[j]) << "\n";
  }
  text << "\nKappa after Fleiss (1971); the standard error holds only under kappa = 0\n"
          "(Fleiss, Nee & Landis 1979), so no interval is given.\n";
  report.text = text.str();
  return report;
}

Report run_bland_altman(const measure::RatingsTable& table, const AgreeOptions& options) {
  require_two_raters(table, "Bland-Altman analysis");
  measure::BlandAltmanOptions ba_options;
  ba_options.confidence = options.confidence;
  ba_options.limit_multiplier = options.limit_multiplier;
  const measure::BlandAltmanResult result =
      measure::bland_altman(table.rater_column(0), table.rater_column(1), ba_options);
  Report report;
  report.result = {
      {"difference", table.raters[0] + " - " + table.raters[1]},
      {"bias", result.bias},
      {"bias_lower", result.bias_interval.lower},
      {"bias_upper", result.bias_interval.upper},
      {"difference_sd", result.difference_sd},
      {"limit_multiplier", options.limit_multiplier},
      {"lower_limit", result.lower_limit},
      {"lower_limit_lower", result.lower_limit_interval.lower},
      {"lower_limit_upper", result.lower_limit_interval.upper},
      {"upper_limit", result.upper_limit},
      {"upper_limit_lower", result.upper_limit_interval.lower},
      {"upper_limit_upper", result.upper_limit_interval.upper},
      {"mean_of_means", result.mean_of_means}};
  const std::string sd = number(options.limit_multiplier, 2) + " SD";
  std::ostringstream text;
  text << "Bland-Altman agreement, " << table_summary(table) << "\n"
       << "differences: " << in_quotes(table.raters[0]) << " - " << in_quotes(table.raters[1]) << "\n\n"
       << pad("", 34) << pad("estimate", 12) << percent(options.confidence) << " interval\n"
       << pad("bias (mean difference)", 34) << pad(number(result.bias), 12)
       << interval(result.bias_interval.lower, result.bias_interval.upper) << "\n"
       << pad("SD of differences", 34) << number(result.difference_sd) << "\n"
       << pad("lower limit (bias - " + sd + ")", 34) << pad(number(result.lower_limit), 12)
       << interval(result.lower_limit_interval.lower, result.lower_limit_interval.upper) << "\n"
       << pad("upper limit (bias + " + sd + ")", 34) << pad(number(result.upper_limit), 12)
       << interval(result.upper_limit_interval.lower, result.upper_limit_interval.upper) << "\n"
       << "\nBland & Altman (1986, 1999); intervals use t on n-1 df with standard errors\n"
          "SD/sqrt(n) for the bias and sqrt(3 SD^2/n) for each limit.\n";
  report.text = text.str();
  return report;
}

Report run_repeatability(const measure::RatingsTable& table, const AgreeOptions& options) {
  measure::RepeatabilityOptions repeat_options;
  repeat_options.confidence = options.confidence;
  const measure::RepeatabilityResult result = measure::repeatability(table.ratings, repeat_options);
  Report report;
  report.result = {{"replicates", result.replicates},
                   {"within_subject_sd", result.within_subject_sd},
                   {"within_subject_sd_lower", result.within_subject_sd_lower},
                   {"within_subject_sd_upper", result.within_subject_sd_upper},
                   {"repeatability_coefficient", result.repeatability_coefficient},
                   {"repeatability_coefficient_lower", result.repeatability_coefficient_lower},
                   {"repeatability_coefficient_upper", result.repeatability_coefficient_upper},
                   {"degrees_of_freedom", result.degrees_of_freedom},
                   {"factor", measure::repeatability_factor()}};
  std::ostringstream text;
  text << "Repeatability, " << table_summary(table) << "\n"
       << "each rater column is one replicate measurement of the subject\n\n"
       << pad("", 38) << pad("estimate", 12) << percent(options.confidence) << " interval\n"
       << pad("within-subject SD s_w", 38) << pad(number(result.within_subject_sd), 12)
       << interval(result.within_subject_sd_lower, result.within_subject_sd_upper) << "\n"
       << pad("repeatability coefficient 2.77 s_w", 38) << pad(number(result.repeatability_coefficient), 12)
       << interval(result.repeatability_coefficient_lower, result.repeatability_coefficient_upper) << "\n";
  if (result.replicates == 2) {
    report.result["paired_difference_coefficient"] = result.paired_difference_coefficient;
    text << pad("2 x SD of paired differences", 38) << number(result.paired_difference_coefficient) << "\n";
  }
  text << "\nBland & Altman (BMJ 1996): 95% of differences between two measurements of one\n"
          "subject are expected below 1.96 sqrt(2) s_w; interval from chi-squared on "
       << number(result.degrees_of_freedom, 0) << " df.\n";
  report.text = text.str();
  return report;
}

Report run_correlation(const measure::RatingsTable& table, const AgreeOptions& options) {
  require_two_raters(table, "correlation");
  Report report;
  std::ostringstream text;
  text << "Correlation, " << table_summary(table) << "\n\n"
       << pad("", 12) << pad("r", 10) << pad(percent(options.confidence) + " interval", 20) << "p\n";
  for (const measure::CorrelationKind kind : {measure::CorrelationKind::pearson, measure::CorrelationKind::spearman}) {
    measure::CorrelationOptions correlation_options;
    correlation_options.kind = kind;
    correlation_options.confidence = options.confidence;
    const measure::CorrelationResult result =
        measure::correlation(table.rater_column(0), table.rater_column(1), correlation_options);
    report.result[to_string(kind)] = {{"r", result.coefficient},
                                      {"lower", result.lower},
                                      {"upper", result.upper},
                                      {"p_value", result.p_value}};
    text << pad(kind == measure::CorrelationKind::pearson ? "Pearson" : "Spearman", 12)
         << pad(number(result.coefficient), 10) << pad(interval(result.lower, result.upper), 20)
         << p_value(result.p_value) << "\n";
  }
  text << "\nFisher-z intervals (Spearman with variance 1.06/(n-3)); t-test p-values. Correlation\n"
          "measures association, not agreement: report ICC or Bland-Altman limits as well.\n";
  report.text = text.str();
  return report;
}

// Every statistic `frugal agree` offers, by its --stat name: the one place that maps a name to
// the code that computes it.
struct Statistic {
  const char* name;
  Report (*run)(const measure::RatingsTable& table, const AgreeOptions& options);
};
constexpr std::array<Statistic, 6> kStatistics{{{"icc", run_icc},
                                                {"kappa", run_kappa},
                                                {"fleiss", run_fleiss},
                                                {"bland-altman", run_bland_altman},
                                                {"repeatability", run_repeatability},
                                                {"correlation", run_correlation}}};

std::string statistic_names() {
  std::string names;
  for (const Statistic& statistic : kStatistics) names += (names.empty() ? "" : ", ") + std::string(statistic.name);
  return names;
}

const Statistic& find_statistic(const std::string& name) {
  for (const Statistic& statistic : kStatistics) {
    if (name == statistic.name) return statistic;
  }
  throw UserError("--stat " + in_quotes(name) + " is not a statistic; allowed: " + statistic_names());
}

void run_agree(const AgreeOptions& options) {
  const Statistic& statistic = find_statistic(options.statistic);
  if (!(options.confidence > 0.0 && options.confidence < 1.0)) {
    throw UserError("--confidence " + number(options.confidence, 4) + " is out of range; allowed: a level "
                    "strictly between 0 and 1, such as 0.95");
  }
  const bool categorical = options.statistic == "kappa" || options.statistic == "fleiss";
  if (options.weights_given && options.statistic != "kappa") {
    throw UserError("--weights applies to --stat kappa only; Fleiss' kappa is unweighted");
  }
  kappa_weights(options.weights);  // an unknown name fails before the table is read
  if (!options.categories.empty() && !categorical) {
    throw UserError("--categories applies to --stat kappa and --stat fleiss only");
  }
  if (options.limit_multiplier_given && options.statistic != "bland-altman") {
    throw UserError("--limit-multiplier applies to --stat bland-altman only");
  }
  const measure::RatingsTable table = measure::read_ratings_table(options.table_path);
  const Report report = statistic.run(table, options);
  FRUGAL_CHECK(!report.text.empty() && report.result.is_object());  // every runner fills both

  if (options.json_output) {
    json document = {{"tool", "frugal"},
                     {"version", frugal::kVersion},
                     {"schema_version", frugal::kOutputSchemaVersion},
                     {"command", "agree"},
                     {"statistic", options.statistic},
                     {"confidence", options.confidence},
                     {"table",
                      {{"file", table.source},
                       {"layout", to_string(table.layout)},
                       {"subjects", table.subjects.size()},
                       {"raters", table.raters}}},
                     {"result", report.result}};
    std::cout << document.dump(2) << "\n";
  } else {
    std::cout << report.text;
  }
}

}  // namespace

void add_agree_command(CLI::App& app) {
  auto options = std::make_shared<AgreeOptions>();
  CLI::App* agree = app.add_subcommand(
      "agree",
      "Agreement statistics on your own ratings table (for example a pilot study or a rescan "
      "series): ICC, Cohen's or Fleiss' kappa, Bland-Altman limits, repeatability, correlation.");
  agree->footer(
      "TABLE layouts (CSV, detected from the header):\n"
      "  wide: subject,readerA,readerB,...   one row per subject, one column per rater\n"
      "  long: subject,rater,value           one row per rating\n"
      "Every subject needs a rating from every rater. For repeatability the columns are\n"
      "replicate measurements. Bland-Altman, correlation and kappa need exactly 2 raters.\n"
      "\n"
      "Examples:\n"
      "  frugal agree pilot_counts.csv --stat icc\n"
      "  frugal agree grades.csv --stat kappa --weights quadratic --categories 0,1,2,3\n"
      "  frugal agree grades_long.csv --stat fleiss --json > fleiss.json\n"
      "\n"
      "Exit codes: 0 success, 2 a problem with the table or options (the message names the\n"
      "file, line and column).");
  agree->add_option("table", options->table_path, "Ratings table (CSV, wide or long layout)")->required();
  // Names are checked by run_agree against kStatistics and the weights table (a UserError, exit 2).
  agree->add_option("--stat", options->statistic, "Statistic to compute: " + statistic_names())->required();
  agree->add_option("--weights", options->weights,
                    "Cohen's kappa weights: " + kappa_weight_names() +
                        " (linear after Cicchetti-Allison, quadratic after Fleiss-Cohen)")
      ->capture_default_str();
  agree->add_option("--categories", options->categories,
                    "Full ordered category list for kappa and fleiss, e.g. 0,1,2,3 (default: every "
                    "integer from the lowest to the highest rating)");
  agree->add_option("--confidence", options->confidence, "Level of the confidence intervals")
      ->capture_default_str();
  agree->add_option("--limit-multiplier", options->limit_multiplier,
                    "Bland-Altman limits are bias +- this many SD (1.96; the 1986 paper used 2)")
      ->capture_default_str();
  agree->add_flag("--json", options->json_output,
                  "Print JSON (with tool and schema version) instead of a table");
  agree->callback([options, agree]() {
    options->weights_given = agree->count("--weights") > 0;
    options->limit_multiplier_given = agree->count("--limit-multiplier") > 0;
    run_agree(*options);
  });
}

}  // namespace frugal::cli

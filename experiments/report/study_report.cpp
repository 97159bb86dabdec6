#include "experiments/report/study_report.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <limits>
#include <nlohmann/json.hpp>
#include <set>

#include "experiments/figures/figure.h"
#include "experiments/figures/image_panel.h"
#include "experiments/measure/bland_altman.h"
#include "experiments/plan/cautions.h"
#include "experiments/plan/plan_json.h"
#include "experiments/plan/study_checks.h"
#include "experiments/report/html_report.h"
#include "experiments/report/report_document.h"
#include "experiments/store/results_store.h"
#include "experiments/study/study_summary.h"
#include "frugal_version.h"
#include "phantoms/csv_table.h"
#include "phantoms/regular_file.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::report {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string fixed(double value, int digits) {
  if (std::isinf(value)) return "no bound";
  if (!std::isfinite(value)) return "n/a";
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%.*f", digits, value);
  return buffer;
}

std::string hours(double value) { return std::isfinite(value) && value < 10.0 ? fixed(value, 1) : fixed(value, 0); }

std::string interval_text(double lower, double upper) {
  if (std::isinf(upper)) return "at least " + hours(lower) + " h, no upper bound";
  return hours(lower) + " to " + hours(upper) + " h";
}

// Figure file stems are [a-z0-9-]+.
std::string stem(const std::string& text) {
  std::string out;
  for (char c : text) {
    const char lower = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    if ((lower >= 'a' && lower <= 'z') || (lower >= '0' && lower <= '9')) out += lower;
    else if (!out.empty() && out.back() != '-') out += '-';
  }
  while (!out.empty() && out.back() == '-') out.pop_back();
  return out.empty() ? "x" : out;
}

std::string metric_label(const plan::Target& target) { return target.quantity + " " + target.metric; }

// The metric as the user reads it, from the curve's error (1 − error for agreements).
double metric_of(const plan::Target& target, double error) { return target.at_least ? 1.0 - error : error; }

// Hours on a log axis: a cell that spent none (a free rater in a foreign store) cannot be placed;
// NaN leaves the point out (the curve's fit names the problem).
double log_axis_hours(double value) { return value > 0.0 ? value : kNaN; }

std::vector<double> hour_grid(double low, double high) {
  std::vector<double> grid;
  const int steps = 60;
  for (int i = 0; i <= steps; ++i) grid.push_back(low * std::pow(high / low, static_cast<double>(i) / steps));
  return grid;
}

struct Figures {
  std::string folder;
  std::vector<FigureRef> refs;
  std::vector<std::string> files;
  void add(const figures::Figure& figure, const std::string& title, const std::string& caption) {
    const figures::FigureFiles written = figures::draw(figure, folder);
    refs.push_back({title, caption, written.svg, written.png, written.csv});
    for (const std::string& file : {written.svg, written.png, written.pdf, written.csv}) files.push_back(file);
  }
};

// One arm's curve for one target: every repeat's value, the mean per budget with its interval,
// the fitted curve with its bootstrap band, the target and the hours needed.
figures::Figure learning_curve_figure(const plan::ArmHours& arm, std::size_t k, const plan::Target& target,
                                      const plan::PlanOptions& options) {
  const plan::LearningCurve& curve = arm.curves[k];
  figures::Figure figure;
  figure.name = "learning-curve-" + stem(arm.plan + "-" + arm.strategy) + (k ? "-" + std::to_string(k + 1) : "");
  figure.title = arm.plan + " / " + arm.strategy;
  figure.x_label = "annotator-hours (h, log scale)";
  figure.y_label = metric_label(target) + " on held-out phantoms";
  figure.log_x = true;
  figure.caption = "each repeat's value; mean per budget with its t-interval; fitted a*h^-b + c and its bootstrap band";
  figures::Series each{"each repeat", figures::SeriesStyle::points, {}, {}, {}, {}, 0};
  for (const plan::CurvePoint& p : curve.points) {
    each.x.push_back(log_axis_hours(p.hours));
    each.y.push_back(p.value);
  }
  figures::Series means{"mean over repeats", figures::SeriesStyle::error_bars, {}, {}, {}, {}, 1};
  for (const plan::BudgetMean& mean : curve.budgets) {
    means.x.push_back(log_axis_hours(mean.hours));
    means.y.push_back(metric_of(target, mean.error));
    const double a = metric_of(target, mean.lower);
    const double b = metric_of(target, mean.upper);
    means.low.push_back(std::isfinite(a) ? std::min(a, b) : means.y.back());
    means.high.push_back(std::isfinite(b) ? std::max(a, b) : means.y.back());
  }
  if (curve.problem.empty() && !curve.points.empty()) {
    double high = curve.max_hours;
    if (std::isfinite(arm.hours) && arm.hours > high) high = std::min(arm.hours * 1.2, 8.0 * curve.max_hours);
    double low = curve.min_hours;
    if (std::isfinite(arm.hours) && arm.hours > 0.0 && arm.hours < low) low = arm.hours * 0.8;
    const std::vector<double> grid = hour_grid(low, high);
    figures::Series band{std::to_string(static_cast<int>(std::round(100 * options.confidence))) + "% bootstrap band",
                         figures::SeriesStyle::band, grid, {}, {}, {}, 2};
    figures::Series fitted{"fitted curve", figures::SeriesStyle::line, grid, {}, {}, {}, 5};
    for (double h : grid) {
      fitted.y.push_back(metric_of(target, curve.fit.curve(h)));
      std::vector<double> at;
      for (const plan::PowerLaw& draw : arm.draw_curves[k]) at.push_back(metric_of(target, draw(h)));
      double a = kNaN;
      double b = kNaN;
      plan::percentile_interval(at, options.confidence, a, b);
      band.y.push_back(fitted.y.back());
      band.low.push_back(std::min(a, b));
      band.high.push_back(std::max(a, b));
    }
    figure.series.push_back(band);
    figure.series.push_back(fitted);
    if (std::isfinite(arm.hours) && arm.hours > 0.0)
      figure.lines.push_back({false, arm.hours, "needed: " + hours(arm.hours) + " h"});
  }
  figure.series.push_back(each);
  figure.series.push_back(means);
  figure.lines.push_back({true, target.value, "target " + target.text});
  return figure;
}

// Every plan on one axis of annotator-hours: measured means and fitted curves; strategies without
// labels as horizontal lines.
figures::Figure cost_error_figure(const plan::PlanAnswer& answer, std::size_t k) {
  const plan::Target& target = answer.targets[k];
  figures::Figure figure;
  figure.name = "cost-error" + (k ? "-" + std::to_string(k + 1) : std::string());
  figure.title = "What each plan recovers for the hours it costs";
  figure.x_label = "annotator-hours (h, log scale)";
  figure.y_label = metric_label(target) + " on held-out phantoms";
  figure.log_x = true;
  figure.caption = "mean over repeats with t-interval per budget; lines are the fitted curves";
  int colour = 0;
  for (const plan::ArmHours& arm : answer.arms) {
    const std::string name = arm.plan + " / " + arm.strategy;
    if (!arm.labelled) {
      if (std::isfinite(arm.classical_means[k]))
        figure.lines.push_back({true, arm.classical_means[k], name + " (no labels)"});
      continue;
    }
    const plan::LearningCurve& curve = arm.curves[k];
    figures::Series means{name, figures::SeriesStyle::error_bars, {}, {}, {}, {}, colour};
    for (const plan::BudgetMean& mean : curve.budgets) {
      means.x.push_back(log_axis_hours(mean.hours));
      means.y.push_back(metric_of(target, mean.error));
      const double a = metric_of(target, mean.lower);
      const double b = metric_of(target, mean.upper);
      means.low.push_back(std::isfinite(a) ? std::min(a, b) : means.y.back());
      means.high.push_back(std::isfinite(b) ? std::max(a, b) : means.y.back());
    }
    figure.series.push_back(means);
    if (curve.problem.empty() && !curve.points.empty()) {
      figures::Series fitted{"", figures::SeriesStyle::line, hour_grid(curve.min_hours, curve.max_hours), {}, {}, {}, colour};
      for (double h : fitted.x) fitted.y.push_back(metric_of(target, curve.fit.curve(h)));
      figure.series.push_back(fitted);
    }
    ++colour;
  }
  figure.lines.push_back({true, target.value, "target " + target.text});
  return figure;
}

// Predictions of one arm at its largest budget on the test set, pooled over repeats (each repeat
// has its own test subjects).
void largest_budget_predictions(const std::vector<store::CellRecord>& cells, const plan::ArmHours& arm,
                                const std::string& quantity, std::vector<double>& truth, std::vector<double>& predicted,
                                double& budget) {
  budget = -1.0;
  for (const store::CellRecord& cell : cells)
    if (cell.status == "done" && cell.plan == arm.plan && cell.strategy == arm.strategy) budget = std::max(budget, cell.budget);
  for (const store::CellRecord& cell : cells) {
    if (cell.status != "done" || cell.plan != arm.plan || cell.strategy != arm.strategy || cell.budget != budget) continue;
    for (const store::SubjectPrediction& p : cell.predictions)
      if (p.test_set == "test" && p.quantity == quantity && std::isfinite(p.predicted) && std::isfinite(p.truth)) {
        truth.push_back(p.truth);
        predicted.push_back(p.predicted);
      }
  }
}

void agreement_figures(const std::vector<store::CellRecord>& cells, const plan::ArmHours& arm,
                       const plan::Target& target, Figures& out, std::vector<std::string>& paragraphs) {
  std::vector<double> truth;
  std::vector<double> predicted;
  double budget = 0.0;
  largest_budget_predictions(cells, arm, target.quantity, truth, predicted, budget);
  if (truth.size() < 3) {
    paragraphs.push_back("The store holds too few " + target.quantity + " predictions of " + arm.plan + " / " +
                         arm.strategy + " for agreement figures.");
    return;
  }
  const std::string name = arm.plan + " / " + arm.strategy;
  const std::string at = budget > 0.0 ? " at " + format_number(budget) + " h budget" : "";
  figures::Figure scatter;
  scatter.name = "estimate-vs-truth";
  scatter.title = name + at;
  scatter.x_label = "true " + target.quantity + " (exact, from the phantom)";
  scatter.y_label = "estimated " + target.quantity;
  scatter.caption = "every held-out subject of every repeat; the line is estimate = truth";
  scatter.series.push_back({"subjects", figures::SeriesStyle::points, truth, predicted, {}, {}, 0});
  const auto [low, high] = std::minmax_element(truth.begin(), truth.end());
  const double top = std::max(*high, *std::max_element(predicted.begin(), predicted.end()));
  const double bottom = std::min(*low, *std::min_element(predicted.begin(), predicted.end()));
  scatter.series.push_back({"estimate = truth", figures::SeriesStyle::dashed_line, {bottom, top}, {bottom, top}, {}, {}, 5});
  out.add(scatter, "Estimate against truth: " + name + at,
          "Each point is one held-out phantom (all repeats pooled). Points on the dashed line are exact.");

  const measure::BlandAltmanResult ba = measure::bland_altman(predicted, truth);
  figures::Figure bland;
  bland.name = "bland-altman";
  bland.title = name + at;
  bland.x_label = "mean of estimate and truth (" + target.quantity + ")";
  bland.y_label = "estimate - truth (" + target.quantity + ")";
  bland.caption = "Bland-Altman: bias and 95% limits of agreement (bias +- 1.96 SD)";
  figures::Series points{"subjects", figures::SeriesStyle::points, {}, {}, {}, {}, 0};
  for (std::size_t i = 0; i < truth.size(); ++i) {
    points.x.push_back((predicted[i] + truth[i]) / 2.0);
    points.y.push_back(predicted[i] - truth[i]);
  }
  bland.series.push_back(points);
  bland.lines.push_back({true, 0.0, "no difference"});
  bland.lines.push_back({true, ba.bias, "bias " + fixed(ba.bias, 2)});
  bland.lines.push_back({true, ba.lower_limit, "lower limit " + fixed(ba.lower_limit, 2)});
  bland.lines.push_back({true, ba.upper_limit, "upper limit " + fixed(ba.upper_limit, 2)});
  out.add(bland, "Bland-Altman plot: " + name + at,
          "Bias " + fixed(ba.bias, 3) + " (95% CI " + fixed(ba.bias_interval.lower, 3) + " to " +
              fixed(ba.bias_interval.upper, 3) + "), limits of agreement " + fixed(ba.lower_limit, 3) + " to " +
              fixed(ba.upper_limit, 3) + ", " + std::to_string(ba.subjects) + " subjects (Bland & Altman 1986).");
}

// One panel per plan and strategy at its largest budget, first repeat: a held-out subject, its exact
// lesion mask and the prediction, then the first label the cell bought.
void example_panels(const std::vector<store::CellRecord>& cells, const plan::PlanAnswer& answer,
                    const std::string& folder, std::vector<FigureRef>& refs, std::vector<std::string>& files) {
  static const std::vector<std::string> order = {"test_image", "test_truth", "prediction", "label_image", "label"};
  for (const plan::ArmHours& arm : answer.arms) {
    const store::CellRecord* chosen = nullptr;
    for (const store::CellRecord& cell : cells) {
      if (cell.status != "done" || cell.plan != arm.plan || cell.strategy != arm.strategy || cell.example_maps.empty())
        continue;
      if (!chosen || cell.budget > chosen->budget || (cell.budget == chosen->budget && cell.repeat < chosen->repeat))
        chosen = &cell;
    }
    if (!chosen) continue;
    std::vector<const store::ExampleMap*> shown;
    for (const std::string& role : order)
      for (const store::ExampleMap& map : chosen->example_maps)
        if (map.role == role) shown.push_back(&map);
    std::vector<figures::Tile> tiles;
    for (const store::ExampleMap* map : shown)
      tiles.push_back({map->caption, map->width, map->height, map->pixels,
                       map->scale == "probability" ? figures::Tile::Scale::probability : figures::Tile::Scale::grey_auto});
    const std::string path = (fs::path(folder) / ("example-" + stem(arm.plan + "-" + arm.strategy) + ".png")).string();
    figures::write_panel_png(tiles, path);
    files.push_back(path);
    // The panel's numbers beside it, one row per pixel, as every other figure has its CSV.
    const std::string csv = (fs::path(path).replace_extension(".csv")).string();
    WholeFile table(csv);
    table.write(std::string("# frugal ") + kVersion + ", example panel of cell " + chosen->key + "\n");
    table.write("tile,role,subject,caption,scale,x,y,value\n");
    for (std::size_t t = 0; t < shown.size(); ++t) {
      const store::ExampleMap& map = *shown[t];
      const std::string prefix = std::to_string(t) + "," + map.role + "," + std::to_string(map.subject) + "," +
                                 csv_field(map.caption) + "," + map.scale + ",";
      for (int y = 0; y < map.height; ++y)
        for (int x = 0; x < map.width; ++x)
          table.write(prefix + std::to_string(x) + "," + std::to_string(y) + "," +
                      exact_decimal(map.pixels[static_cast<std::size_t>(y * map.width + x)]) + "\n");
    }
    table.commit();
    files.push_back(csv);
    const std::string budget = arm.labelled ? ", " + format_number(chosen->budget) + " " + chosen->budget_unit + " budget" : "";
    refs.push_back({"Example: " + arm.plan + " / " + arm.strategy + budget,
                    "Repeat " + std::to_string(chosen->repeat) + ": the first held-out phantom with a lesion on its "
                    "slice, its exact lesion mask and the model's map" +
                        std::string(arm.labelled ? ", then the first label the cell bought, on its own training image" : "") +
                        ". Probabilities in the cividis colour map (0 to 1); images and other maps in grey, stretched "
                        "from their 1st to 99th percentile. Every pixel's value is in figures/" +
                        fs::path(path).stem().string() + ".csv.",
                    "", path, ""});
  }
}

Table hours_table(const plan::PlanAnswer& answer) {
  const std::string percent = std::to_string(static_cast<int>(std::round(100 * answer.options.confidence)));
  Table table{"Annotator-hours needed until every target holds", {"plan / strategy", "hours needed", percent + "% interval",
              "where", "measured hours", "reason"}, {}, {false, true, true, false, true, false}};
  for (const plan::ArmHours& arm : answer.arms) {
    const bool has = arm.reach != plan::Reach::not_fitted && arm.reach != plan::Reach::unreachable;
    std::string where = to_string(arm.reach);
    if (arm.reach == plan::Reach::extrapolated) where += " (" + fixed(arm.extrapolation, 1) + "x the largest)";
    table.rows.push_back({arm.plan + " / " + arm.strategy, has ? hours(arm.hours) : "-",
                          has ? interval_text(arm.lower, arm.upper) : "-", where,
                          arm.labelled ? hours(arm.min_hours) + " to " + hours(arm.max_hours) : "no labels",
                          arm.problem.empty() ? arm.note : arm.problem});
  }
  return table;
}

Table measured_table(const std::vector<store::CellRecord>& cells, const plan::Target& target) {
  const study::StudySummary summary = study::summarise(cells, target.test_set, target.quantity, target.metric);
  Table table{metric_label(target) + " per budget (mean over repeats, 95% t-interval)",
              {"plan / strategy", "budget", "hours spent", "labels", metric_label(target), "interval", "repeats"},
              {},
              {false, true, true, true, true, true, true}};
  for (const study::ArmBudget& row : summary.rows)
    table.rows.push_back({row.plan + " / " + row.strategy, row.budget > 0 ? format_number(row.budget) : "none",
                          fixed(row.mean_hours, 1), fixed(row.mean_labels, 0), fixed(row.mean, 3),
                          fixed(row.lower, 3) + " to " + fixed(row.upper, 3), std::to_string(row.repeats)});
  return table;
}

// What each plan's labels cost under its rater's cost model: the keys of the plan's label kind.
Table cost_table(const json& study) {
  Table table{"Label plans, raters and the cost model of each label kind", {"plan", "label kind", "rater panel",
              "raters per image", "cost model (annotator seconds)", "strategies"}, {}, {false, false, false, true, false, false}};
  for (const json& plan : study.at("plans")) {
    std::string strategies;
    for (const json& s : plan.value("strategies", json::array())) strategies += (strategies.empty() ? "" : ", ") + s.get<std::string>();
    if (plan.contains("strong")) {
      table.rows.push_back({plan.at("name").get<std::string>(), "mixed", "-", "-",
                            format_number(100.0 * plan.at("strong_share").get<double>()) + "% of the budget on " +
                                plan.at("strong").get<std::string>() + ", the rest on " + plan.at("weak").get<std::string>(),
                            strategies});
      continue;
    }
    const std::string kind = plan.value("kind", std::string("none"));
    if (kind == "none") {
      table.rows.push_back({plan.at("name").get<std::string>(), "none", "-", "-", "no labels bought", strategies});
      continue;
    }
    std::string costs;
    for (const auto& [key, value] : plan.at("rater").at("cost").items())
      if (key.rfind(kind + "_", 0) == 0) costs += (costs.empty() ? "" : "; ") + key + " = " + format_number(value.get<double>());
    table.rows.push_back({plan.at("name").get<std::string>(), kind, plan.at("rater").value("name", std::string()),
                          std::to_string(plan.value("raters_per_image", 1)), costs, strategies});
  }
  return table;
}

std::vector<std::string> settings_paragraphs(const json& study, const store::StudyRecord& record, int repeats_done) {
  const json& cohort = study.at("cohort");
  const json& scenario = study.at("scenario");
  std::string budgets;
  for (const json& b : study.at("budgets")) budgets += (budgets.empty() ? "" : ", ") + format_number(b.get<double>());
  return {
      "Study \"" + record.name + "\" (study hash " + record.study_hash.substr(0, 12) + "). Scenario \"" +
          scenario.value("name", std::string()) + "\" of the " + scenario.value("family", std::string()) +
          " family; study seed " + std::to_string(study.value("seed", 0ULL)) + ".",
      "Each repeat draws its own pool of " + std::to_string(cohort.value("pool", 0)) +
          " training phantoms that labels can be bought for, and its own " + std::to_string(cohort.value("test", 0)) +
          " held-out test phantoms with exact truth, never trained on or used for model selection" +
          (cohort.value("test_rescans", 0) > 0 ? "; " + std::to_string(cohort.value("test_rescans", 0)) + " rescans of each test phantom" : "") +
          (cohort.value("decorrelated_test", false) ? "; a second test set with the confounder decorrelated" : "") + ".",
      "Budgets: " + budgets + " " + study.value("budget_unit", std::string("hours")) + "; " +
          std::to_string(study.value("repeats", 0)) + " repeats (" + std::to_string(repeats_done) +
          " finished in this store); " + std::to_string(study.value("training_images", 0)) +
          " training images through the optimiser per cell. A larger budget buys what a smaller one bought and more "
          "(one fixed purchase order per repeat).",
  };
}

}  // namespace

StudyReportFiles write_study_report(const std::string& store_path, const std::vector<plan::Target>& targets,
                                    const plan::PlanOptions& options, const std::string& folder) {
  require_writable_output(folder, OutputKind::folder, "a new or existing folder for the report");
  const store::ResultsStore results = store::ResultsStore::open_existing(store_path);
  const store::StudyRecord record = results.study();
  const std::vector<store::CellRecord> cells = results.cells();
  const plan::PlanAnswer answer = plan::answer_plan(cells, targets, options);
  std::vector<plan::ShortcutRow> shortcut;
  std::vector<plan::RepeatabilityRow> repeatability;
  std::set<std::string> quantities;
  for (const plan::Target& target : targets) {
    for (const plan::ShortcutRow& row : plan::shortcut_summary(cells, target, options.confidence)) shortcut.push_back(row);
    if (quantities.insert(target.quantity).second)
      for (const plan::RepeatabilityRow& row : plan::repeatability_summary(cells, target.quantity, options.confidence))
        repeatability.push_back(row);
  }
  std::set<int> repeats;
  for (const store::CellRecord& cell : cells)
    if (cell.status == "done") repeats.insert(cell.repeat);
  json study;
  try {
    study = json::parse(record.resolved_yaml);
  } catch (const json::exception&) {
    throw UserError(store_path + ": the stored study is not the JSON frugal writes; allowed: a store written by frugal run");
  }

  std::error_code ignored;
  fs::create_directories(fs::path(folder) / "figures", ignored);
  StudyReportFiles files;
  files.html = (fs::path(folder) / "report.html").string();
  files.json = (fs::path(folder) / "plan.json").string();
  Figures figures{(fs::path(folder) / "figures").string(), {}, {}};

  ReportDocument document;
  document.title = "Which labels, how many annotator-hours: " + record.name;
  document.answer = answer.sentence;
  for (const plan::ArmHours& arm : answer.arms) {
    std::string line = arm.plan + " / " + arm.strategy + ": ";
    if (arm.reach == plan::Reach::not_fitted || arm.reach == plan::Reach::unreachable) line += arm.problem;
    else if (arm.reach == plan::Reach::no_labels) line += "meets the target without labels";
    else line += hours(arm.hours) + " h (" + interval_text(arm.lower, arm.upper) + "), " + to_string(arm.reach) +
                 (arm.note.empty() ? "" : ": " + arm.note);
    document.answer_details.push_back(line);
  }
  document.cautions = plan::cautions();

  Section question{"question", "The question and the study", {}, {}, {}};
  try {
    question.paragraphs = settings_paragraphs(study, record, static_cast<int>(repeats.size()));
    question.tables.push_back(cost_table(study));
  } catch (const json::exception& error) {
    throw UserError(store_path + ": the stored study is not one frugal run wrote (" + error.what() +
                    "); allowed: a store written by frugal run");
  }
  std::string target_list;
  for (const plan::Target& t : targets) target_list += (target_list.empty() ? "" : " and ") + t.text;
  question.paragraphs.insert(question.paragraphs.begin(),
                             "Which label plan reaches " + target_list + " on held-out phantoms for the fewest annotator-hours?");
  document.sections.push_back(question);

  Section hours_section{"answer", "Hours needed", {}, {}, {hours_table(answer)}};
  hours_section.paragraphs.push_back(
      "Per plan and strategy, the inverse power law err(h) = a·h^(−b) + c (Mukherjee et al. 2003; Figueroa et al. "
      "2012) is fitted to every repeat's value against the annotator-hours the cell spent, weighting points by "
      "hours (Figueroa et al. 2012); for agreements the shortfall 1 − metric is fitted. Intervals come from " +
      std::to_string(options.draws) + " bootstrap resamples of whole repeats, each refitted (expanded percentile, "
      "Hesterberg 2015); every plan is resampled with the same repeats, so differences are paired.");
  if (answer.has_difference)
    hours_section.paragraphs.push_back(answer.difference.dearer + " needs " + hours(answer.difference.mean) +
                                       " h more than " + answer.difference.cheaper + " (" +
                                       interval_text(answer.difference.lower, answer.difference.upper) + ")" +
                                       (answer.difference.supported ? "." : "; the interval includes 0."));
  for (const plan::MixedSplit& split : answer.mixed)
    hours_section.paragraphs.push_back("Mixed " + split.strong + " + " + split.weak + " with " + split.strategy + ": " +
                                       (split.best_plan.empty() ? "no measured split reaches the targets."
                                                                : "the best measured split spends " +
                                                                      format_number(100 * split.best_share) +
                                                                      "% of the budget on strong labels (" + split.best_plan + ")."));
  document.sections.push_back(hours_section);

  Section curves{"curves", "Learning curves", {}, {}, {}};
  for (std::size_t k = 0; k < targets.size(); ++k) {
    figures.add(cost_error_figure(answer, k), "Cost and error of every plan: " + targets[k].text,
                "Mean over repeats with its t-interval at each budget, on one axis of annotator-hours; fitted curves "
                "where the data support one; strategies without labels as horizontal lines.");
    for (const plan::ArmHours& arm : answer.arms)
      if (arm.labelled)
        figures.add(learning_curve_figure(arm, k, targets[k], options), "Learning curve: " + arm.plan + " / " + arm.strategy,
                    arm.curves[k].problem.empty()
                        ? "Fit a = " + format_number(arm.curves[k].fit.curve.a) + ", b = " + format_number(arm.curves[k].fit.curve.b) +
                              ", c = " + format_number(arm.curves[k].fit.curve.c) +
                              (arm.curves[k].fit.floor_held_at_zero ? " (floor held at 0)" : "") + "."
                        : "No curve fitted: " + arm.curves[k].problem + ".");
  }
  curves.figures = figures.refs;
  figures.refs.clear();
  document.sections.push_back(curves);

  Section agreement{"agreement", "Agreement with the truth", {}, {}, {}};
  const plan::ArmHours* recommended = answer.cheapest >= 0 ? &answer.arms[static_cast<std::size_t>(answer.cheapest)] : nullptr;
  if (!recommended && !answer.arms.empty()) recommended = &answer.arms.front();
  if (recommended) {
    agreement.paragraphs.push_back("For " + std::string(answer.cheapest >= 0 ? "the recommended plan, " : "") +
                                   recommended->plan + " / " + recommended->strategy +
                                   ", at its largest budget: every held-out subject's estimate against its exact truth.");
    agreement_figures(cells, *recommended, targets.front(), figures, agreement.paragraphs);
  }
  agreement.figures = figures.refs;
  figures.refs.clear();
  for (const plan::Target& target : targets) agreement.tables.push_back(measured_table(cells, target));
  document.sections.push_back(agreement);

  Section examples{"examples", "What the images, labels and predictions look like", {}, {}, {}};
  example_panels(cells, answer, figures.folder, examples.figures, figures.files);
  if (examples.figures.empty())
    examples.paragraphs.push_back("The store holds no example pictures.");
  document.sections.push_back(examples);

  Section checks{"checks", "Shortcut and repeatability", {}, {}, {}};
  if (shortcut.empty())
    checks.paragraphs.push_back("The study had no test set with the confounder decorrelated, so it cannot say whether a "
                                "method learned the confounder instead of the quantity.");
  else {
    Table table{"Error on the decorrelated test set minus the ordinary one (> 0: the method leans on the confounder)",
                {"plan / strategy", "budget", "metric", "correlated", "decorrelated", "difference", "95% interval"}, {},
                {false, true, false, true, true, true, true}};
    for (const plan::ShortcutRow& row : shortcut)
      table.rows.push_back({row.plan + " / " + row.strategy, format_number(row.budget), row.quantity + " " + row.metric,
                            fixed(row.correlated, 3), fixed(row.decorrelated, 3), fixed(row.difference, 3),
                            fixed(row.lower, 3) + " to " + fixed(row.upper, 3)});
    checks.tables.push_back(table);
  }
  if (repeatability.empty())
    checks.paragraphs.push_back("The study had no rescans, so it cannot report repeatability.");
  else {
    Table table{"Repeatability coefficient on rescans (the truth's is 0)", {"plan / strategy", "budget", "quantity",
                "repeatability coefficient", "95% interval", "repeats"}, {}, {false, true, false, true, true, true}};
    for (const plan::RepeatabilityRow& row : repeatability)
      table.rows.push_back({row.plan + " / " + row.strategy, format_number(row.budget), row.quantity, fixed(row.coefficient, 3),
                            fixed(row.lower, 3) + " to " + fixed(row.upper, 3), std::to_string(row.repeats)});
    checks.tables.push_back(table);
  }
  document.sections.push_back(checks);

  Section extrapolated{"extrapolation", "What was extrapolated", {}, {}, {}};
  for (const plan::ArmHours& arm : answer.arms) {
    if (arm.reach == plan::Reach::extrapolated)
      extrapolated.paragraphs.push_back(arm.plan + " / " + arm.strategy + ": " + hours(arm.hours) + " h is " +
                                        fixed(arm.extrapolation, 1) + "x the largest hours measured (" + hours(arm.max_hours) +
                                        " h); the study did not measure that far.");
    if (arm.reach == plan::Reach::below)
      extrapolated.paragraphs.push_back(arm.plan + " / " + arm.strategy + ": the target is already met at the smallest "
                                        "budget measured; " + hours(arm.hours) + " h is read off the curve below " +
                                        hours(arm.min_hours) + " h.");
  }
  if (extrapolated.paragraphs.empty())
    extrapolated.paragraphs.push_back("Nothing: every hours figure above lies inside the measured budgets, or no curve was fitted.");
  document.sections.push_back(extrapolated);

  Section assumptions{"assumptions", "Rater and cost assumptions", {}, {}, {}};
  assumptions.paragraphs.push_back(
      "Every label is priced by its rater panel's cost model (the table under \"The question and the study\"), in "
      "annotator seconds per image, lesion, click or millimetre of boundary. These costs and the rater noise are the "
      "study's assumptions: the rater files state where their numbers come from. The hours above are only as good as "
      "these prices; measure your own raters' times on a few images before relying on them.");
  document.sections.push_back(assumptions);
  document.generated_by = std::string("frugal ") + kVersion + ", store " + store_path + ", study hash " +
                          record.study_hash.substr(0, 12) + ", bootstrap seed " + std::to_string(options.seed);

  WholeFile plan_json(files.json);
  plan_json.write(plan::to_json(answer, shortcut, repeatability).dump(2) + "\n");
  plan_json.commit();
  write_html_report(document, files.html);
  files.figures = figures.files;
  return files;
}

}  // namespace frugal::report

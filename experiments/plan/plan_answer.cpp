#include "experiments/plan/plan_answer.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>
#include <set>
#include <tuple>

#include "experiments/measure/distributions.h"
#include "phantoms/image.h"  // FRUGAL_CHECK
#include "phantoms/random.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"

namespace frugal::plan {
namespace {

// Three significant digits for messages.
std::string short_number(double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.3g", value);
  return buffer;
}

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInfinity = std::numeric_limits<double>::infinity();
// A fit that fails on more than this share of the resamples gives no interval worth quoting.
constexpr double kMaxFailedDraws = 0.2;
// The floor c counts as not identified when its interval is wider than this share of the
// smallest measured error (common practice, no source: a floor that uncertain moves any
// extrapolated answer by more than the curve's own measured fall).
constexpr double kUnidentifiedFloor = 0.5;

struct ArmCells {
  std::string plan;
  std::string strategy;
  bool labelled = true;
  bool mixed = false;
  std::string strong;
  std::string weak;
  double share = 0.0;
  std::vector<const store::CellRecord*> cells;
};

double metric_value(const store::CellRecord& cell, const Target& target) {
  for (const store::MetricRow& row : cell.metrics)
    if (row.test_set == target.test_set && row.quantity == target.quantity && row.metric == target.metric)
      return row.value;
  return kNaN;
}

std::vector<ArmCells> arms_of(const std::vector<store::CellRecord>& cells) {
  std::map<std::pair<std::string, std::string>, ArmCells> arms;
  for (const store::CellRecord& cell : cells) {
    if (cell.status != "done") continue;
    ArmCells& arm = arms[{cell.plan, cell.strategy}];
    if (arm.cells.empty()) {
      arm.plan = cell.plan;
      arm.strategy = cell.strategy;
      const nlohmann::json plan = nlohmann::json::parse(cell.spec_json).at("plan");
      arm.labelled = plan.value("kind", std::string()) != "none";
      arm.mixed = plan.contains("strong");
      if (arm.mixed) {
        arm.strong = plan.at("strong").get<std::string>();
        arm.weak = plan.at("weak").get<std::string>();
        arm.share = plan.at("strong_share").get<double>();
      }
    }
    arm.cells.push_back(&cell);
  }
  std::vector<ArmCells> out;
  for (auto& [key, arm] : arms) out.push_back(std::move(arm));
  return out;
}

// Each target must name something the store measured; say what it holds otherwise.
void require_measured(const std::vector<store::CellRecord>& cells, const Target& target) {
  std::set<std::string> held;
  for (const store::CellRecord& cell : cells)
    for (const store::MetricRow& row : cell.metrics) {
      if (row.test_set == target.test_set && row.quantity == target.quantity && row.metric == target.metric) return;
      if (row.test_set == target.test_set && (is_error_metric(row.metric) || is_agreement_metric(row.metric)))
        held.insert(row.quantity + "." + row.metric);
    }
  std::string list;
  for (const std::string& name : held) list += (list.empty() ? "" : ", ") + name;
  throw UserError("target \"" + target.text + "\": the store holds no " + target.quantity + "." + target.metric +
                  " on the " + target.test_set + " test set; it holds: " + (list.empty() ? "nothing" : list));
}

// A budget beyond the pool buys what a smaller one bought and reuses its result: such a cell is
// the same measurement again, not another point of the curve, so only the smallest budget counts.
bool repeats_a_smaller_budget(const ArmCells& arm, const store::CellRecord& cell) {
  for (const store::CellRecord* other : arm.cells)
    if (other->repeat == cell.repeat && other->budget < cell.budget && other->labels_bought == cell.labels_bought)
      return true;
  return false;
}

std::vector<CurvePoint> points_of(const ArmCells& arm, const Target& target) {
  std::vector<CurvePoint> points;
  for (const store::CellRecord* cell : arm.cells) {
    if (repeats_a_smaller_budget(arm, *cell)) continue;
    const double value = metric_value(*cell, target);
    if (std::isfinite(value)) points.push_back({cell->repeat, cell->budget, cell->hours_spent, value, target.error_of(value)});
  }
  return points;
}

// Whole repeats drawn with replacement, the same draws for every arm (paired).
std::vector<std::vector<int>> repeat_resamples(const std::vector<int>& repeats, const PlanOptions& options) {
  RandomStream random(mix64(options.seed ^ 0x706c616e626f6f74ULL));  // "planboot"
  std::vector<std::vector<int>> draws(static_cast<std::size_t>(options.draws));
  const auto last = static_cast<std::int64_t>(repeats.size()) - 1;
  for (std::vector<int>& draw : draws)
    for (std::size_t i = 0; i < repeats.size(); ++i)
      draw.push_back(repeats[static_cast<std::size_t>(random.uniform_int(0, last))]);
  return draws;
}

double mean_over(const std::vector<CurvePoint>& points, const std::vector<int>& repeats) {
  double sum = 0.0;
  int n = 0;
  for (int repeat : repeats)
    for (const CurvePoint& p : points)
      if (p.repeat == repeat) {
        sum += p.value;
        ++n;
      }
  return n > 0 ? sum / n : kNaN;
}

void answer_classical(const ArmCells& arm, const std::vector<Target>& targets,
                      const std::vector<std::vector<int>>& resamples, ArmHours& out) {
  std::vector<std::vector<CurvePoint>> points;
  bool met = true;
  for (const Target& target : targets) {
    points.push_back(points_of(arm, target));
    std::vector<int> all;
    for (const CurvePoint& p : points.back()) all.push_back(p.repeat);
    const double mean = mean_over(points.back(), all);
    out.classical_means.push_back(mean);
    if (!std::isfinite(mean)) {
      out.reach = Reach::not_fitted;
      out.problem = target.text + ": no finished cell measured it";
      return;
    }
    if (!target.met_by(mean) && met) {
      met = false;
      out.problem = target.text + ": " + arm.strategy + " learns from no labels and gives " + short_number(mean);
    }
  }
  out.reach = met ? Reach::no_labels : Reach::unreachable;
  out.hours = met ? 0.0 : kInfinity;
  for (const std::vector<int>& draw : resamples) {
    bool draw_met = true;
    for (std::size_t k = 0; k < targets.size(); ++k) {
      const double mean = mean_over(points[k], draw);
      draw_met = draw_met && std::isfinite(mean) && targets[k].met_by(mean);
    }
    out.draw_hours.push_back(draw_met ? 0.0 : kInfinity);
    ++out.draws;
    if (!draw_met) ++out.draws_unreachable;
  }
}

// A curve that cannot be fitted still answers a target that every repeat's mean already meets at
// the smallest budget: that budget's hours are enough (an upper bound on the hours needed).
bool met_at_smallest_budget(const std::vector<Target>& targets, const std::vector<std::vector<int>>& resamples,
                            ArmHours& out) {
  double hours = 0.0;
  for (std::size_t k = 0; k < targets.size(); ++k) {
    const LearningCurve& curve = out.curves[k];
    if (curve.budgets.empty() || !(curve.budgets.front().error <= targets[k].error_target())) return false;
    hours = std::max(hours, curve.budgets.front().hours);
  }
  out.note = "no curve fitted (" + out.problem + "), but every target is already met at the smallest budget measured";
  out.problem.clear();
  out.reach = Reach::below;
  out.hours = hours;
  for (const std::vector<int>& draw : resamples) {
    bool met = true;
    for (std::size_t k = 0; k < targets.size() && met; ++k) {
      std::vector<CurvePoint> smallest;
      for (const CurvePoint& p : out.curves[k].points)
        if (p.budget == out.curves[k].budgets.front().budget) smallest.push_back(p);
      const double mean = mean_over(smallest, draw);
      met = std::isfinite(mean) && targets[k].met_by(mean);
    }
    out.draw_hours.push_back(met ? hours : kInfinity);
    ++out.draws;
    if (!met) ++out.draws_unreachable;
  }
  return true;
}

void answer_labelled(const ArmCells& arm, const std::vector<Target>& targets, const PlanOptions& options,
                     const std::vector<std::vector<int>>& resamples, ArmHours& out) {
  out.hours = 0.0;
  bool first = true;
  for (const Target& target : targets) {
    out.curves.push_back(fit_learning_curve(points_of(arm, target), options.confidence, options.weighted));
    const LearningCurve& curve = out.curves.back();
    if (!curve.problem.empty() && out.problem.empty()) out.problem = target.text + ": " + curve.problem;
    if (!curve.points.empty()) {
      out.min_hours = first ? curve.min_hours : std::min(out.min_hours, curve.min_hours);
      out.max_hours = first ? curve.max_hours : std::max(out.max_hours, curve.max_hours);
      first = false;
    }
  }
  if (!out.problem.empty()) {
    if (met_at_smallest_budget(targets, resamples, out)) return;
    out.reach = Reach::not_fitted;
    out.hours = kNaN;
    return;
  }
  for (std::size_t k = 0; k < targets.size(); ++k) {
    const double needed = out.curves[k].fit.curve.hours_to_reach(targets[k].error_target());
    if (!std::isfinite(needed) && out.problem.empty())
      out.problem = targets[k].text + ": the fitted floor of the error, " + short_number(out.curves[k].fit.curve.c) +
                    ", lies above the target " + short_number(targets[k].error_target()) +
                    (targets[k].at_least ? " (as 1 − " + targets[k].metric + ")" : "");
    out.hours = std::max(out.hours, needed);
  }
  int failed = 0;
  std::vector<std::vector<double>> floors(targets.size());  // c per curve and draw
  out.draw_curves.assign(targets.size(), {});
  // A few repeats allow few distinct draws (3 repeats: 27 sequences among 2,000 draws), and a
  // refit depends on nothing else, so each sequence is fitted once: the same numbers, much sooner.
  std::vector<std::map<std::vector<int>, PowerLawFit>> fitted(targets.size());
  for (const std::vector<int>& draw : resamples) {
    double hours = 0.0;
    for (std::size_t k = 0; k < targets.size(); ++k) {
      auto known = fitted[k].find(draw);
      if (known == fitted[k].end())
        known = fitted[k].emplace(draw, refit(out.curves[k].points, draw, options.weighted)).first;
      const PowerLawFit& fit = known->second;
      if (!fit.converged || !(fit.curve.a > 0.0) || !(fit.curve.b > 0.0)) {
        hours = kNaN;
        break;
      }
      floors[k].push_back(fit.curve.c);
      out.draw_curves[k].push_back(fit.curve);
      hours = std::max(hours, fit.curve.hours_to_reach(targets[k].error_target()));
    }
    out.draw_hours.push_back(hours);
    if (std::isnan(hours)) {
      ++failed;
      continue;
    }
    ++out.draws;
    if (std::isinf(hours)) ++out.draws_unreachable;
  }
  if (!resamples.empty() && failed > kMaxFailedDraws * static_cast<double>(resamples.size())) {
    out.reach = Reach::not_fitted;
    out.problem = "the curve cannot be refitted on " + format_number(100.0 * failed / resamples.size()) +
                  "% of the bootstrap resamples of the repeats";
    out.hours = kNaN;
    return;
  }
  if (std::isinf(out.hours)) {
    out.reach = Reach::unreachable;
  } else if (out.hours > out.max_hours) {
    out.reach = Reach::extrapolated;
    out.extrapolation = out.hours / out.max_hours;
    // Beyond the measured hours the answer hangs on the floor c; when the resamples put it
    // anywhere between 0 and most of the smallest measured error, the budgets cannot tell.
    for (std::size_t k = 0; k < targets.size(); ++k) {
      double low = kNaN;
      double high = kNaN;
      percentile_interval(floors[k], options.confidence, low, high);
      double smallest_error = kInfinity;
      for (const BudgetMean& mean : out.curves[k].budgets) smallest_error = std::min(smallest_error, mean.error);
      if (high - low > kUnidentifiedFloor * smallest_error) {
        out.reach = Reach::not_fitted;
        out.problem = targets[k].text + ": needs extrapolation to " + short_number(out.hours) +
                      " h, but the error floor c is not identified by the budgets measured (resamples put it "
                      "anywhere from " + short_number(low) + " to " + short_number(high) + ")";
        out.hours = kNaN;
        return;
      }
    }
  } else if (out.hours < out.min_hours) {
    out.reach = Reach::below;
  } else {
    out.reach = Reach::measured;
  }
}

bool reachable(const ArmHours& arm) {
  return arm.reach == Reach::measured || arm.reach == Reach::extrapolated || arm.reach == Reach::below ||
         arm.reach == Reach::no_labels;
}

std::string name_of(const ArmHours& arm) { return arm.plan + " / " + arm.strategy; }

std::string hours_text(double hours) {
  if (std::isinf(hours)) return "no bound";
  if (hours < 10.0) return format_number(std::round(hours * 10.0) / 10.0) + " h";
  return format_number(std::round(hours)) + " h";
}

std::string interval_text(double lower, double upper) {
  if (std::isinf(lower) && std::isinf(upper)) return "no bound either way";
  if (std::isinf(upper)) return "at least " + hours_text(lower) + ", no upper bound";
  if (std::isinf(lower)) return "at most " + hours_text(upper) + ", no lower bound";
  return hours_text(lower).substr(0, hours_text(lower).size() - 2) + " to " + hours_text(upper);
}

std::string targets_text(const std::vector<Target>& targets) {
  std::string text;
  for (std::size_t k = 0; k < targets.size(); ++k)
    text += (k == 0 ? "" : (k + 1 == targets.size() ? " and " : ", ")) + targets[k].text;
  return text;
}

std::string sentence_of(const PlanAnswer& answer) {
  const std::string goal = "To reach " + targets_text(answer.targets) + " on held-out phantoms";
  if (answer.cheapest < 0)
    return goal + ", no plan the study measured is enough: see the reason given for each plan.";
  const ArmHours& best = answer.arms[static_cast<std::size_t>(answer.cheapest)];
  std::string text = goal + ", the cheapest plan is " + name_of(best);
  const int percent = static_cast<int>(std::round(100.0 * answer.options.confidence));
  if (best.reach == Reach::no_labels) {
    text += ", which needs no labels";
  } else {
    text += " with about " + hours_text(best.hours) + " of annotation (" + std::to_string(percent) + "% interval " +
            interval_text(best.lower, best.upper) + ")";
    if (best.reach == Reach::extrapolated)
      text += ", extrapolated " + format_number(std::round(best.extrapolation * 10.0) / 10.0) +
              "× beyond the largest budget measured";
    if (best.reach == Reach::below) text += ", already met at the smallest budget measured";
  }
  if (answer.has_difference) {
    const HoursDifference& d = answer.difference;
    text += "; " + d.dearer + " needs " + hours_text(d.mean) + " more (" + interval_text(d.lower, d.upper) + ")";
    if (!d.supported) text += ", a difference the study cannot tell from zero";
  }
  return text + ".";
}

}  // namespace

std::string to_string(Reach reach) {
  switch (reach) {
    case Reach::measured: return "measured";
    case Reach::extrapolated: return "extrapolated";
    case Reach::below: return "below the smallest budget";
    case Reach::no_labels: return "no labels needed";
    case Reach::unreachable: return "unreachable";
    case Reach::not_fitted: return "not fitted";
  }
  return "";
}

void percentile_interval(std::vector<double> values, double confidence, double& lower, double& upper) {
  values.erase(std::remove_if(values.begin(), values.end(), [](double v) { return std::isnan(v); }), values.end());
  lower = upper = kNaN;
  if (values.empty()) return;
  std::sort(values.begin(), values.end());
  const auto at = [&](double p) {
    const double position = p * static_cast<double>(values.size() - 1);
    const auto below = static_cast<std::size_t>(std::floor(position));
    const std::size_t above = std::min(below + 1, values.size() - 1);
    if (std::isinf(values[above]) || std::isinf(values[below])) return values[std::isinf(values[below]) ? below : above];
    return values[below] + (position - static_cast<double>(below)) * (values[above] - values[below]);
  };
  lower = at((1.0 - confidence) / 2.0);
  upper = at((1.0 + confidence) / 2.0);
}

double expanded_percentile_level(double confidence, int units) {
  FRUGAL_CHECK(units >= 2);
  const double n = units;
  const double z = std::sqrt(n / (n - 1.0)) * measure::student_t_quantile(0.5 + confidence / 2.0, n - 1.0);
  return 2.0 * measure::normal_cdf(z) - 1.0;
}

PlanAnswer answer_plan(const std::vector<store::CellRecord>& cells, const std::vector<Target>& targets,
                       const PlanOptions& options) {
  FRUGAL_CHECK(!targets.empty() && options.draws >= 0 && options.confidence > 0.0 && options.confidence < 1.0);
  for (const Target& target : targets) require_measured(cells, target);
  PlanAnswer answer;
  answer.targets = targets;
  answer.options = options;

  std::set<int> repeat_set;
  for (const store::CellRecord& cell : cells)
    if (cell.status == "done") repeat_set.insert(cell.repeat);
  const std::vector<int> repeats(repeat_set.begin(), repeat_set.end());
  const std::vector<std::vector<int>> resamples = repeats.size() >= 2 ? repeat_resamples(repeats, options)
                                                                      : std::vector<std::vector<int>>{};

  const double level = repeats.size() >= 2 ? expanded_percentile_level(options.confidence, static_cast<int>(repeats.size()))
                                           : options.confidence;
  const std::vector<ArmCells> arm_cells = arms_of(cells);
  for (const ArmCells& arm : arm_cells) {
    ArmHours out;
    out.plan = arm.plan;
    out.strategy = arm.strategy;
    out.labelled = arm.labelled;
    if (arm.labelled)
      answer_labelled(arm, targets, options, resamples, out);
    else
      answer_classical(arm, targets, resamples, out);
    percentile_interval(out.draw_hours, level, out.lower, out.upper);
    answer.arms.push_back(std::move(out));
  }
  std::stable_sort(answer.arms.begin(), answer.arms.end(), [](const ArmHours& a, const ArmHours& b) {
    if (reachable(a) != reachable(b)) return reachable(a);
    return reachable(a) && a.hours < b.hours;
  });
  if (!answer.arms.empty() && reachable(answer.arms.front())) answer.cheapest = 0;
  if (answer.arms.size() >= 2 && reachable(answer.arms[0]) && reachable(answer.arms[1]) && !resamples.empty()) {
    const ArmHours& cheaper = answer.arms[0];
    const ArmHours& dearer = answer.arms[1];
    HoursDifference& d = answer.difference;
    d.cheaper = name_of(cheaper);
    d.dearer = name_of(dearer);
    d.mean = dearer.hours - cheaper.hours;
    std::vector<double> differences;
    for (std::size_t i = 0; i < resamples.size(); ++i) {
      const double difference = dearer.draw_hours[i] - cheaper.draw_hours[i];  // NaN when either failed or both never
      differences.push_back(difference);
      if (!std::isnan(difference)) ++d.draws;
    }
    percentile_interval(differences, level, d.lower, d.upper);
    d.supported = d.lower > 0.0 || d.upper < 0.0;
    answer.has_difference = d.draws > 0;
  }

  std::map<std::tuple<std::string, std::string, std::string>, MixedSplit> splits;
  for (const ArmCells& arm : arm_cells) {
    if (!arm.mixed) continue;
    MixedSplit& split = splits[{arm.strong, arm.weak, arm.strategy}];
    split.strong = arm.strong;
    split.weak = arm.weak;
    split.strategy = arm.strategy;
    for (const ArmHours& hours : answer.arms)
      if (hours.plan == arm.plan && hours.strategy == arm.strategy) {
        split.plans.push_back(arm.plan);
        split.shares.push_back(arm.share);
        split.hours.push_back(reachable(hours) ? hours.hours : kInfinity);
      }
  }
  for (auto& [key, split] : splits) {
    const auto best = std::min_element(split.hours.begin(), split.hours.end());
    if (best != split.hours.end() && std::isfinite(*best)) {
      const auto index = static_cast<std::size_t>(best - split.hours.begin());
      split.best_plan = split.plans[index];
      split.best_share = split.shares[index];
    }
  }
  for (auto& [key, split] : splits) answer.mixed.push_back(std::move(split));
  answer.sentence = sentence_of(answer);
  return answer;
}

}  // namespace frugal::plan

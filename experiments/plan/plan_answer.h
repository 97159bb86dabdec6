#pragma once
// The answer to a study's question: for each label plan and strategy, the annotator-hours needed
// until every target holds, with a bootstrap interval over repeats (resample whole repeats, refit
// every curve); whether that lies inside the measured hours or is extrapolated, and how far; the
// cheapest arm, and the paired difference in hours between the cheapest two (each bootstrap draw
// resamples the same repeats for both, which share test subjects and purchase orders).

#include <cstdint>
#include <string>
#include <vector>

#include "experiments/plan/learning_curve.h"
#include "experiments/plan/target.h"
#include "experiments/store/results_store.h"

namespace frugal::plan {

struct PlanOptions {
  int draws = 2000;            // bootstrap draws
  std::uint64_t seed = 1;      // of the resampling
  double confidence = 0.95;    // of every interval
  bool weighted = true;        // Figueroa et al. (2012)'s weights; false = unweighted control
};

enum class Reach {
  measured,      // inside the hours the study measured
  extrapolated,  // beyond the largest budget measured
  below,         // already met at the smallest budget; the hours are read below the measured range
  no_labels,     // a classical strategy that meets every target without labels
  unreachable,   // the fitted floor or the classical strategy's value misses a target
  not_fitted,    // a curve the data cannot support (see problem)
};
std::string to_string(Reach reach);

struct ArmHours {
  std::string plan;
  std::string strategy;
  bool labelled = true;              // false for a classical strategy (kind none)
  std::vector<LearningCurve> curves;  // one per target, in target order
  std::vector<double> classical_means;  // classical arms: each target's metric, mean over repeats
  Reach reach = Reach::not_fitted;
  std::string problem;  // why there are no hours (not_fitted) or which target is out of reach
  // Set when no curve could be fitted but every target is already met at the smallest budget
  // measured: the hours are then that budget's, an upper bound (reach "below").
  std::string note;
  double hours = 0.0;   // needed so that every target holds; +inf when unreachable
  double lower = 0.0;   // bootstrap percentile interval; +inf upper when some draws never reach
  double upper = 0.0;
  double extrapolation = 1.0;  // hours / largest hours measured, when extrapolated
  int draws = 0;               // bootstrap draws that could be refitted
  int draws_unreachable = 0;   // of those, draws in which a target was never reached
  std::vector<double> draw_hours;  // per bootstrap draw (NaN when it could not be refitted)
  std::vector<std::vector<PowerLaw>> draw_curves;  // per target: the refitted curve of each draw that converged
  double min_hours = 0.0;      // measured range over the targets' curves
  double max_hours = 0.0;
};

struct HoursDifference {
  std::string cheaper;  // "plan / strategy"
  std::string dearer;
  double mean = 0.0;  // dearer − cheaper, from the point estimates
  double lower = 0.0;
  double upper = 0.0;
  int draws = 0;
  bool supported = false;  // the interval excludes 0
};

// Mixed plans of the same strong and weak plans, trained with the same strategy: the share of the
// budget spent on strong labels that needs the fewest hours, among the shares the study measured.
struct MixedSplit {
  std::string strong;
  std::string weak;
  std::string strategy;
  std::vector<std::string> plans;  // the mixed plans compared
  std::vector<double> shares;
  std::vector<double> hours;       // per plan, as in its ArmHours
  std::string best_plan;           // empty when none reaches the targets
  double best_share = 0.0;
};

struct PlanAnswer {
  std::vector<Target> targets;
  PlanOptions options;
  std::vector<ArmHours> arms;  // reachable arms by hours, then the rest in study order
  int cheapest = -1;           // index into arms, −1 when no arm reaches every target
  bool has_difference = false;
  HoursDifference difference;  // between arms[cheapest] and the next reachable arm
  std::vector<MixedSplit> mixed;
  std::string sentence;        // the recommendation in one sentence
};

// Throws UserError when the store holds no metric of a target (naming what it holds).
PlanAnswer answer_plan(const std::vector<store::CellRecord>& cells, const std::vector<Target>& targets,
                       const PlanOptions& options = {});

// The `confidence` percentile interval of `values` (+inf allowed; NaN ignored), by linear
// interpolation between order statistics (Hyndman & Fan 1996, definition 7).
void percentile_interval(std::vector<double> values, double confidence, double& lower, double& upper);

// The percentile level that widens a bootstrap over `units` resampled units to make up for the
// percentile interval's narrowness with few units: the expanded percentile interval (Hesterberg
// 2015, Am Stat 69:371), z = √(n/(n−1))·t_{(1+c)/2, n−1}, level 2Φ(z) − 1.
double expanded_percentile_level(double confidence, int units);

}  // namespace frugal::plan

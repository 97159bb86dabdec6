#include "cli/study_table.h"

#include <cmath>
#include <cstdio>

#include "experiments/study/study_summary.h"
#include "phantoms/text_format.h"

namespace frugal::cli {
namespace {

std::string fixed(double value, int digits) {
  if (!std::isfinite(value)) return "n/a";
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%.*f", digits, value);
  return buffer;
}

std::string pad(const std::string& text, std::size_t width, bool right = false) {
  if (text.size() >= width) return text + " ";
  const std::string fill(width - text.size(), ' ');
  return right ? fill + text : text + fill;
}

}  // namespace

std::string format_study_table(const std::vector<store::CellRecord>& cells, const std::string& quantity,
                               const std::string& metric, bool lower_is_better) {
  const study::StudySummary summary = study::summarise(cells, "test", quantity, metric);
  const study::StudySummary icc = study::summarise(cells, "test", quantity, "icc_a1");
  const std::string name = quantity + " " + metric;
  std::string out = pad("plan / strategy", 34) + pad("budget", 10, true) + pad("hours", 8, true) + pad("labels", 8, true) +
                    "  " + pad(name + " [95% CI]", 26) + pad("ICC(A,1)", 9, true) + pad("repeats", 8, true) + "\n";
  for (std::size_t i = 0; i < summary.rows.size(); ++i) {
    const study::ArmBudget& row = summary.rows[i];
    const std::string budget = row.budget <= 0.0 ? "none" : format_number(row.budget) + (row.budget_unit == "hours" ? " h" : "");
    std::string repeats = std::to_string(row.repeats);
    if (row.failed > 0) repeats += " (" + std::to_string(row.failed) + " failed)";
    out += pad(row.plan + " / " + row.strategy, 34) + pad(budget, 10, true) + pad(fixed(row.mean_hours, 1), 8, true) +
           pad(fixed(row.mean_labels, 0), 8, true) + "  " +
           pad(fixed(row.mean, 3) + " [" + fixed(row.lower, 3) + ", " + fixed(row.upper, 3) + "]", 26) +
           pad(fixed(icc.rows[i].mean, 3), 9, true) + pad(repeats, 8, true) + "\n";
  }
  if (!summary.differences.empty()) {
    out += "\npaired differences in " + name + " (first - second, same test subjects per repeat):\n";
    for (const study::PairedDifference& d : summary.differences) {
      std::string verdict = "interval includes 0: no difference shown";
      if (d.pairs < 2) verdict = "fewer than 2 paired repeats: no interval";
      else if (d.supported)
        verdict = ((d.mean < 0.0) == lower_is_better ? d.first : d.second) + " is better";
      const std::string unit = summary.rows.front().budget_unit == "hours" ? " h" : " labels";
      out += "  " + pad(format_number(d.budget) + unit, 7) + pad(d.first + " - " + d.second, 58) +
             pad(fixed(d.mean, 3) + " [" + fixed(d.lower, 3) + ", " + fixed(d.upper, 3) + "]", 26) + verdict + "\n";
    }
  }
  return out;
}

}  // namespace frugal::cli

#pragma once
// The cautions every answer of frugal carries: what results on phantoms can and
// cannot support. The plan command, the demo and the report print the same words.

#include <string>
#include <vector>

namespace frugal::plan {

inline const std::vector<std::string>& cautions() {
  static const std::vector<std::string> text = {
      "These results describe synthetic phantoms and simulated raters, not patients.",
      "They guide the design of a labelling plan and the choice of a method; they do not validate a method "
      "for clinical use.",
      "They do not replace a pilot study on real data, the study's ethics approval, local regulations, or "
      "qualified clinical judgement.",
      "Hours needed outside the measured budgets are extrapolations of a fitted curve; the further out, the "
      "less they are worth.",
  };
  return text;
}

}  // namespace frugal::plan

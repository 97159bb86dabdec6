#include "experiments/plan/target.h"

#include <cmath>
#include <cstdlib>

#include "phantoms/user_error.h"

namespace frugal::plan {
namespace {

const std::vector<std::string> kErrors = {"mae", "rmse"};
const std::vector<std::string> kAgreements = {"icc_a1", "pearson", "spearman", "weighted_kappa", "dice_pooled",
                                              "dice_mean", "recall", "precision", "f1", "auc"};
const std::vector<std::string> kTestSets = {"test", "decorrelated"};

bool contains(const std::vector<std::string>& names, const std::string& name) {
  for (const std::string& n : names)
    if (n == name) return true;
  return false;
}

std::string joined(const std::vector<std::string>& names) {
  std::string text;
  for (const std::string& n : names) text += (text.empty() ? "" : ", ") + n;
  return text;
}

}  // namespace

bool is_error_metric(const std::string& metric) { return contains(kErrors, metric); }
bool is_agreement_metric(const std::string& metric) { return contains(kAgreements, metric); }

Target parse_target(const std::string& text, const std::string& where) {
  const std::string form = "; allowed: [TEST_SET:]QUANTITY.METRIC<=VALUE for errors (" + joined(kErrors) +
                           ") or >=VALUE for agreements (" + joined(kAgreements) + "), e.g. count.mae<=0.8";
  const auto fail = [&](const std::string& what) { throw UserError(where + " \"" + text + "\": " + what + form); };
  Target target;
  target.text = text;
  std::string rest = text;
  if (const auto colon = rest.find(':'); colon != std::string::npos) {
    target.test_set = rest.substr(0, colon);
    rest = rest.substr(colon + 1);
    if (!contains(kTestSets, target.test_set))
      fail("unknown test set \"" + target.test_set + "\" (test sets: " + joined(kTestSets) + ")");
  }
  const auto at_most = rest.find("<=");
  const auto at_least = rest.find(">=");
  if ((at_most == std::string::npos) == (at_least == std::string::npos)) fail("needs exactly one of <= or >=");
  target.at_least = at_least != std::string::npos;
  const auto op = target.at_least ? at_least : at_most;
  const std::string name = rest.substr(0, op);
  const std::string number = rest.substr(op + 2);
  const auto dot = name.rfind('.');
  if (dot == std::string::npos || dot == 0 || dot + 1 == name.size()) fail("needs QUANTITY.METRIC before the comparison");
  target.quantity = name.substr(0, dot);
  target.metric = name.substr(dot + 1);
  if (!is_error_metric(target.metric) && !is_agreement_metric(target.metric))
    fail("unknown metric \"" + target.metric + "\"");
  if (is_error_metric(target.metric) && target.at_least)
    fail(target.metric + " is an error, which a plan must keep at or below a value: use <=");
  if (is_agreement_metric(target.metric) && !target.at_least)
    fail(target.metric + " is an agreement, which a plan must reach at least: use >=");
  char* end = nullptr;
  target.value = std::strtod(number.c_str(), &end);
  if (number.empty() || end != number.c_str() + number.size() || !std::isfinite(target.value))
    fail("\"" + number + "\" is not a finite number");
  if (is_error_metric(target.metric) && !(target.value > 0.0)) fail("an error target must be above 0");
  if (is_agreement_metric(target.metric) && !(target.value > -1.0 && target.value < 1.0))
    fail("an agreement target must lie strictly between -1 and 1");
  return target;
}

}  // namespace frugal::plan

#include "experiments/measure/bland_altman.h"

#include <gtest/gtest.h>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

// Bland & Altman (1986) Lancet i:307-310, peak expiratory flow (l/min), first reading on the
// Wright and the Mini Wright meter for 17 subjects (as transcribed in the blandr R package).
const std::vector<double> kWrightFirst{494, 395, 516, 434, 476, 557, 413, 442, 650,
                                       433, 417, 656, 267, 478, 178, 423, 427};
const std::vector<double> kMiniWrightFirst{512, 430, 520, 428, 500, 600, 364, 380, 658,
                                           445, 432, 626, 260, 477, 259, 350, 451};

TEST(BlandAltman, PeakFlowExample1999Convention) {
  const BlandAltmanResult result = bland_altman(kWrightFirst, kMiniWrightFirst);
  // numpy on the data [C]; the paper prints -2.1 and 38.8.
  EXPECT_NEAR(result.bias, -2.1176470588235294, 1e-10);
  EXPECT_NEAR(result.difference_sd, 38.76512987360738, 1e-10);
  EXPECT_NEAR(result.lower_limit, -78.097301611094, 1e-9);
  EXPECT_NEAR(result.upper_limit, 73.86200749344692, 1e-9);
  // t interval on 16 df, SE sqrt(3 s^2/n) for the limits (Bland & Altman 1986), evaluated with
  // scipy.stats.t.ppf [C].
  EXPECT_NEAR(result.bias_interval.lower, -22.048837696642877, 1e-7);
  EXPECT_NEAR(result.bias_interval.upper, 17.81354357899582, 1e-7);
  EXPECT_NEAR(result.lower_limit_interval.lower, -112.61913645113825, 1e-7);
  EXPECT_NEAR(result.lower_limit_interval.upper, -43.57546677104975, 1e-7);
  EXPECT_NEAR(result.upper_limit_interval.lower, 39.340172653402675, 1e-7);
  EXPECT_NEAR(result.upper_limit_interval.upper, 108.38384233349117, 1e-7);
}

TEST(BlandAltman, PeakFlowExamplePublishedLimits) {
  BlandAltmanOptions options;
  options.limit_multiplier = 2.0;  // the 1986 paper's d +- 2s
  const BlandAltmanResult result = bland_altman(kWrightFirst, kMiniWrightFirst, options);
  // Published -79.7 to 75.5 l/min (from memory), computed from the rounded -2.1 and 38.8, so
  // compared within 0.1.
  EXPECT_NEAR(result.lower_limit, -79.7, 0.1);
  EXPECT_NEAR(result.upper_limit, 75.5, 0.1);
}

TEST(BlandAltman, RejectsBadInput) {
  EXPECT_THROW(bland_altman({1, 2}, {1, 2}), UserError);
  EXPECT_THROW(bland_altman({1, 2, 3}, {1, 2}), UserError);
  BlandAltmanOptions options;
  options.limit_multiplier = -1.0;
  EXPECT_FALSE(options.validate().empty());
}

}  // namespace
}  // namespace frugal::measure

#pragma once
// A 2-D chart (points, lines, bands, error bars, reference lines) drawn with PLplot's cairo
// driver as SVG, PNG and PDF, with a CSV of exactly the plotted numbers beside it.

#include <string>
#include <vector>

namespace frugal::figures {

enum class SeriesStyle { points, line, dashed_line, band, error_bars };

struct Series {
  std::string label;              // legend entry; "" = not in the legend
  SeriesStyle style = SeriesStyle::points;
  std::vector<double> x, y;       // same length; NaN points are skipped (written to the CSV as empty)
  std::vector<double> low, high;  // band / error_bars only: same length as x
  int colour = -1;                // palette index 0..7; -1 = next in order
};

struct ReferenceLine {
  bool horizontal = true;
  double at = 0.0;
  std::string label;
};

struct Figure {
  std::string name;  // file stem, [a-z0-9-]+
  std::string title;
  std::string x_label, y_label;  // with units
  bool log_x = false;            // log10 x axis (all x > 0 required)
  std::vector<Series> series;
  std::vector<ReferenceLine> lines;
  std::string caption;  // written into the CSV's header comment
};

struct FigureFiles {
  std::string svg, png, pdf, csv;
};

// Writes <folder>/<name>.svg, .png, .pdf and .csv (folder created when absent); each under a
// temporary name, renamed into place. Throws frugal::UserError naming the file on failure.
FigureFiles draw(const Figure& figure, const std::string& folder);

}  // namespace frugal::figures

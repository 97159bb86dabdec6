#pragma once
// A 2-D chart (points, lines, bands, error bars, reference lines) drawn with PLplot's cairo
// driver as SVG, PNG and PDF, with a CSV of exactly the plotted numbers beside it.
// Colours are Okabe & Ito's (2008) colour-blind-safe palette; each palette index also has its
// own marker and line style, so the figure still reads in greyscale.

#include <string>
#include <vector>

namespace frugal::figures {

enum class SeriesStyle { points, line, dashed_line, band, error_bars };

struct Series {
  std::string label;  // legend entry; "" = not in the legend
  SeriesStyle style = SeriesStyle::points;
  std::vector<double> x, y;       // same length; NaN points are skipped (and written to the CSV as empty)
  std::vector<double> low, high;  // band / error_bars only: same length as x
  int colour = -1;                // palette index (0..7, larger ones wrap); -1 = the next one in order
};

struct ReferenceLine {
  bool horizontal = true;  // horizontal: y = at; vertical: x = at
  double at = 0.0;         // a non-finite value is not drawn (and written to the CSV as empty)
  std::string label;
};

struct Figure {
  std::string name;  // file stem, [a-z0-9-]+ (FRUGAL_CHECK otherwise — callers build it)
  std::string title;
  std::string x_label, y_label;  // callers include units, e.g. "annotator-hours (h)"
  bool log_x = false;            // log10 x axis (all x > 0 required, vertical lines too)
  std::vector<Series> series;
  std::vector<ReferenceLine> lines;
  std::string caption;  // one line, written into the CSV header comment only
};

struct FigureFiles {
  std::string svg, png, pdf, csv;
};

// PNG (and SVG) page size in pixels.
constexpr int figure_width_pixels = 720;
constexpr int figure_height_pixels = 480;

// Writes <folder>/<name>.svg, .png, .pdf and .csv (folder created if absent). All three drawings
// are made in memory first; each file is then written under a temporary name and renamed into
// place, so a killed run never leaves a half-written figure. Throws frugal::UserError naming the
// file (or folder) when it cannot be written, or when PLplot reports an error. Thread-safe (one
// figure at a time: PLplot keeps global state).
FigureFiles draw(const Figure& figure, const std::string& folder);

}  // namespace frugal::figures

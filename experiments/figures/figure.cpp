#include "experiments/figures/figure.h"

#include <plstream.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <limits>
#include <mutex>

#include "phantoms/image.h"  // FRUGAL_CHECK
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::figures {
namespace {

namespace fs = std::filesystem;

// Okabe & Ito (2008)'s colour-blind-safe palette; each index also has its own marker and line
// style, so a figure printed in grey still tells its series apart.
struct Rgb {
  int r, g, b;
};
constexpr Rgb kPalette[8] = {{0, 0, 0},     {230, 159, 0},  {86, 180, 233}, {0, 158, 115},
                             {240, 228, 66}, {0, 114, 178}, {213, 94, 0},   {204, 121, 167}};
const char* const kMarkers[8] = {"●", "■", "▲", "◆", "○", "□", "△", "◇"};
constexpr int kLineStyles[8] = {1, 2, 3, 4, 5, 6, 7, 8};
constexpr int kFirstColour = 2;  // cmap0 slots: 0 background, 1 axes, 2..9 palette, 10..17 tints
constexpr int kTint = 10;
constexpr int kGrey = 18;

std::mutex plplot_mutex;  // PLplot keeps global state: one figure at a time

bool finite(double v) { return std::isfinite(v); }

struct Extent {
  double x0 = std::numeric_limits<double>::infinity(), x1 = -std::numeric_limits<double>::infinity();
  double y0 = std::numeric_limits<double>::infinity(), y1 = -std::numeric_limits<double>::infinity();
  void x(double v) {
    if (finite(v)) x0 = std::min(x0, v), x1 = std::max(x1, v);
  }
  void y(double v) {
    if (finite(v)) y0 = std::min(y0, v), y1 = std::max(y1, v);
  }
};

Extent extent_of(const Figure& figure) {
  Extent e;
  for (const Series& s : figure.series)
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      if (!finite(s.x[i]) || !finite(s.y[i])) continue;
      e.x(figure.log_x ? std::log10(s.x[i]) : s.x[i]);
      e.y(s.y[i]);
      if (!s.low.empty()) e.y(s.low[i]), e.y(s.high[i]);
    }
  for (const ReferenceLine& line : figure.lines)
    if (line.horizontal) e.y(line.at);
    else e.x(figure.log_x ? std::log10(line.at) : line.at);
  if (!finite(e.x0)) e.x0 = 0.0, e.x1 = 1.0;
  if (!finite(e.y0)) e.y0 = 0.0, e.y1 = 1.0;
  const auto widen = [](double& a, double& b) {
    const double span = b > a ? b - a : std::max(std::abs(a), 1.0);
    a -= 0.06 * span;
    b += 0.06 * span;
  };
  widen(e.x0, e.x1);
  widen(e.y0, e.y1);
  return e;
}

std::vector<int> colours_of(const Figure& figure) {
  std::vector<int> colours;
  int next = 0;
  for (const Series& s : figure.series) colours.push_back(s.colour >= 0 ? s.colour % 8 : next++ % 8);
  return colours;
}

// Continuous runs of finite points, so a NaN breaks a line instead of joining across it.
std::vector<std::pair<std::size_t, std::size_t>> runs(const Series& s) {
  std::vector<std::pair<std::size_t, std::size_t>> out;
  std::size_t i = 0;
  while (i < s.x.size()) {
    while (i < s.x.size() && !(finite(s.x[i]) && finite(s.y[i]))) ++i;
    const std::size_t start = i;
    while (i < s.x.size() && finite(s.x[i]) && finite(s.y[i]) && (s.low.empty() || (finite(s.low[i]) && finite(s.high[i]))))
      ++i;
    if (i > start) out.emplace_back(start, i);
    if (i == start) ++i;
  }
  return out;
}

void plot(const Figure& figure, const std::string& device, const std::string& file) {
  const Extent e = extent_of(figure);
  const std::vector<int> colours = colours_of(figure);
  plstream pls;
  pls.sdev(device.c_str());
  pls.sfnam(file.c_str());
  pls.spage(0, 0, 800, 520, 0, 0);
  pls.scmap0n(kGrey + 1);
  pls.scol0(0, 255, 255, 255);
  pls.scol0(1, 0, 0, 0);
  for (int i = 0; i < 8; ++i) {
    const Rgb c = kPalette[i];
    pls.scol0(kFirstColour + i, c.r, c.g, c.b);
    pls.scol0(kTint + i, 255 - (255 - c.r) / 4, 255 - (255 - c.g) / 4, 255 - (255 - c.b) / 4);
  }
  pls.scol0(kGrey, 90, 90, 90);
  pls.init();
  pls.schr(0.0, 0.9);
  pls.col0(1);
  pls.env(e.x0, e.x1, e.y0, e.y1, 0, figure.log_x ? 10 : 0);
  pls.lab(figure.x_label.c_str(), figure.y_label.c_str(), figure.title.c_str());
  const auto x_of = [&](double x) { return figure.log_x ? std::log10(x) : x; };

  for (std::size_t k = 0; k < figure.series.size(); ++k) {  // bands first, behind everything
    const Series& s = figure.series[k];
    if (s.style != SeriesStyle::band) continue;
    for (const auto& [a, b] : runs(s)) {
      std::vector<double> px;
      std::vector<double> py;
      for (std::size_t i = a; i < b; ++i) px.push_back(x_of(s.x[i])), py.push_back(s.high[i]);
      for (std::size_t i = b; i-- > a;) px.push_back(x_of(s.x[i])), py.push_back(s.low[i]);
      pls.col0(kTint + colours[k]);
      pls.fill(static_cast<PLINT>(px.size()), px.data(), py.data());
    }
  }
  for (const ReferenceLine& line : figure.lines) {
    pls.col0(kGrey);
    pls.lsty(2);
    double lx[2];
    double ly[2];
    if (line.horizontal) lx[0] = e.x0, lx[1] = e.x1, ly[0] = ly[1] = line.at;
    else lx[0] = lx[1] = x_of(line.at), ly[0] = e.y0, ly[1] = e.y1;
    pls.line(2, lx, ly);
    pls.lsty(1);
    if (line.horizontal)
      pls.ptex(e.x0 + 0.02 * (e.x1 - e.x0), line.at + 0.012 * (e.y1 - e.y0), 1.0, 0.0, 0.0, line.label.c_str());
    else
      pls.ptex(x_of(line.at) + 0.01 * (e.x1 - e.x0), e.y0 + 0.04 * (e.y1 - e.y0), 0.0, 1.0, 0.0, line.label.c_str());
  }
  for (std::size_t k = 0; k < figure.series.size(); ++k) {
    const Series& s = figure.series[k];
    const int c = colours[k];
    pls.col0(kFirstColour + c);
    pls.width(2.0);
    for (const auto& [a, b] : runs(s)) {
      std::vector<double> px;
      std::vector<double> py;
      std::vector<double> lo;
      std::vector<double> hi;
      for (std::size_t i = a; i < b; ++i) {
        px.push_back(x_of(s.x[i]));
        py.push_back(s.y[i]);
        if (!s.low.empty()) lo.push_back(s.low[i]), hi.push_back(s.high[i]);
      }
      const auto n = static_cast<PLINT>(px.size());
      switch (s.style) {
        case SeriesStyle::line:
        case SeriesStyle::band:
          pls.lsty(s.style == SeriesStyle::band ? 1 : kLineStyles[c]);
          if (s.style == SeriesStyle::line) pls.line(n, px.data(), py.data());
          break;
        case SeriesStyle::dashed_line:
          pls.lsty(2);
          pls.line(n, px.data(), py.data());
          break;
        case SeriesStyle::points:
          pls.string(n, px.data(), py.data(), kMarkers[c]);
          break;
        case SeriesStyle::error_bars:
          pls.lsty(1);
          pls.erry(n, px.data(), lo.data(), hi.data());
          pls.string(n, px.data(), py.data(), kMarkers[c]);
          break;
      }
      pls.lsty(1);
    }
    pls.width(1.0);
  }
  // Legend: one row per labelled series, with its marker or line style and colour.
  std::vector<PLINT> options;
  std::vector<const char*> texts;
  std::vector<PLINT> text_colours;
  std::vector<PLINT> line_colours;
  std::vector<PLINT> line_styles;
  std::vector<PLFLT> line_widths;
  std::vector<PLINT> symbol_colours;
  std::vector<PLFLT> symbol_scales;
  std::vector<PLINT> symbol_numbers;
  std::vector<const char*> symbols;
  std::vector<PLINT> box_colours;
  std::vector<PLINT> box_patterns;
  std::vector<PLFLT> box_scales;
  std::vector<PLFLT> box_widths;
  for (std::size_t k = 0; k < figure.series.size(); ++k) {
    const Series& s = figure.series[k];
    if (s.label.empty()) continue;
    const int c = colours[k];
    PLINT option = PL_LEGEND_NONE;
    if (s.style == SeriesStyle::points || s.style == SeriesStyle::error_bars) option = PL_LEGEND_SYMBOL;
    else if (s.style == SeriesStyle::band) option = PL_LEGEND_COLOR_BOX;
    else option = PL_LEGEND_LINE;
    options.push_back(option);
    texts.push_back(s.label.c_str());
    text_colours.push_back(1);
    line_colours.push_back(kFirstColour + c);
    line_styles.push_back(s.style == SeriesStyle::dashed_line ? 2 : kLineStyles[c]);
    line_widths.push_back(2.0);
    symbol_colours.push_back(kFirstColour + c);
    symbol_scales.push_back(1.0);
    symbol_numbers.push_back(1);
    symbols.push_back(kMarkers[c]);
    box_colours.push_back(kTint + c);
    box_patterns.push_back(0);
    box_scales.push_back(0.8);
    box_widths.push_back(1.0);
  }
  if (!options.empty()) {
    PLFLT width = 0.0;
    PLFLT height = 0.0;
    pls.legend(&width, &height, PL_LEGEND_BACKGROUND | PL_LEGEND_BOUNDING_BOX, PL_POSITION_RIGHT | PL_POSITION_TOP,
               0.02, 0.02, 0.08, 0, 1, 1, 0, 0, static_cast<PLINT>(options.size()), options.data(), 1.0, 0.8, 2.0, 0.0,
               text_colours.data(), texts.data(), box_colours.data(), box_patterns.data(), box_scales.data(),
               box_widths.data(), line_colours.data(), line_styles.data(), line_widths.data(), symbol_colours.data(),
               symbol_scales.data(), symbol_numbers.data(), symbols.data());
  }
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

std::string csv_number(double v) { return std::isfinite(v) ? exact_decimal(v) : ""; }

const char* style_name(SeriesStyle style) {
  switch (style) {
    case SeriesStyle::points: return "points";
    case SeriesStyle::line: return "line";
    case SeriesStyle::dashed_line: return "dashed_line";
    case SeriesStyle::band: return "band";
    case SeriesStyle::error_bars: return "error_bars";
  }
  return "";
}

void write_csv(const Figure& figure, const std::string& path) {
  std::string text = "# title: " + figure.title + "\n# caption: " + figure.caption + "\n# x: " + figure.x_label +
                     "\n# y: " + figure.y_label + "\nseries,style,x,y,low,high\n";
  for (const Series& s : figure.series)
    for (std::size_t i = 0; i < s.x.size(); ++i)
      text += csv_field(s.label) + "," + style_name(s.style) + "," + csv_number(s.x[i]) + "," + csv_number(s.y[i]) + "," +
              (s.low.empty() ? "" : csv_number(s.low[i])) + "," + (s.high.empty() ? "" : csv_number(s.high[i])) + "\n";
  for (const ReferenceLine& line : figure.lines)
    text += csv_field(line.label) + (line.horizontal ? ",horizontal_line,," + csv_number(line.at) + ",,\n"
                                                     : ",vertical_line," + csv_number(line.at) + ",,,\n");
  WholeFile file(path);
  file.write(text);
  file.commit();
}

}  // namespace

FigureFiles draw(const Figure& figure, const std::string& folder) {
  FRUGAL_CHECK(!figure.name.empty() && figure.name.find_first_not_of("abcdefghijklmnopqrstuvwxyz0123456789-") == std::string::npos);
  for (const Series& s : figure.series) {
    FRUGAL_CHECK(s.y.size() == s.x.size());
    const bool ranged = s.style == SeriesStyle::band || s.style == SeriesStyle::error_bars;
    FRUGAL_CHECK(ranged ? s.low.size() == s.x.size() && s.high.size() == s.x.size() : s.low.empty() && s.high.empty());
    if (figure.log_x)
      for (double x : s.x) FRUGAL_CHECK(!(x <= 0.0));
  }
  std::error_code error;
  fs::create_directories(folder, error);
  if (!fs::is_directory(folder, error))
    throw UserError(folder + ": cannot create the folder for figures; allowed: a new or existing folder");
  const fs::path base = fs::path(folder) / figure.name;
  FigureFiles files{base.string() + ".svg", base.string() + ".png", base.string() + ".pdf", base.string() + ".csv"};
  const std::lock_guard<std::mutex> lock(plplot_mutex);
  for (const auto& [device, path] : {std::pair<std::string, std::string>{"svgcairo", files.svg}, {"pngcairo", files.png},
                                     {"pdfcairo", files.pdf}}) {
    const std::string temporary = path + ".partial";
    plot(figure, device, temporary);  // the stream is closed (file flushed) when plot returns
    if (!fs::is_regular_file(temporary, error) || fs::file_size(temporary, error) == 0) {
      fs::remove(temporary, error);
      throw UserError(path + ": PLplot (" + device + ") wrote no figure; allowed: a writable folder");
    }
    fs::rename(temporary, path, error);
    if (error) {
      fs::remove(temporary, error);
      throw UserError(path + ": cannot move the figure into place: " + error.message());
    }
  }
  write_csv(figure, files.csv);
  return files;
}

}  // namespace frugal::figures

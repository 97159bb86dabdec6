#include "experiments/figures/figure.h"

#include <plplot.h>
#include <plstream.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <limits>
#include <mutex>
#include <system_error>

#include "phantoms/image.h"  // FRUGAL_CHECK
#include "phantoms/regular_file.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::figures {
namespace {

namespace fs = std::filesystem;

// Okabe & Ito (2008)'s colour-blind-safe palette: black, orange, sky blue, bluish green, yellow,
// blue, vermillion, reddish purple. Each index also has its own marker and PLplot line style
// (plstyl's presets 1..8), so a figure printed in grey still tells its series apart.
struct Rgb {
  int r, g, b;
};
constexpr Rgb kPalette[8] = {{0, 0, 0},      {230, 159, 0}, {86, 180, 233}, {0, 158, 115},
                             {240, 228, 66}, {0, 114, 178}, {213, 94, 0},   {204, 121, 167}};
const char* const kMarkers[8] = {"●", "■", "▲", "◆", "○", "□", "△", "◇"};
constexpr PLINT kLineStyles[8] = {1, 2, 3, 4, 5, 6, 7, 8};
constexpr PLINT kDashed = 2;

// Colour map 0 slots: PLplot's slot 0 is the background (black by default), 1 the axes.
constexpr PLINT kBackground = 0;
constexpr PLINT kInk = 1;
constexpr PLINT kFirstColour = 2;  // 2..9: the palette
constexpr PLINT kTint = 10;        // 10..17: the palette lightened, for bands
constexpr PLINT kReferenceGrey = 18;
constexpr PLINT kGridGrey = 19;
constexpr PLINT kSlots = 20;

std::mutex plplot_mutex;  // PLplot keeps global state (current stream, handlers): one figure at a time

bool finite(double v) { return std::isfinite(v); }

// PLplot's fatal errors call exit() unless the handler does not return: it throws this instead.
struct PlplotExit {
  std::string message;
};
int throw_instead_of_exit(const char* message) { throw PlplotExit{message ? message : ""}; }

class ExitHandler {  // installed for one draw, under plplot_mutex
 public:
  ExitHandler() { plsexit(throw_instead_of_exit); }
  ~ExitHandler() { plsexit(nullptr); }
  ExitHandler(const ExitHandler&) = delete;
  ExitHandler& operator=(const ExitHandler&) = delete;
};

// PLplot reads '#' as the start of an escape sequence; a label is shown as written.
std::string plot_text(const std::string& text) {
  std::string out;
  for (char c : text) {
    if (c == '#')
      out += "##";
    else
      out += c == '\n' || c == '\r' ? ' ' : c;
  }
  return out;
}

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

// Everything one drawing needs, worked out once for the three devices.
struct Layout {
  Extent window;  // x in log10 units on a log axis
  std::vector<int> colours;
  PLINT legend_position = PL_POSITION_RIGHT | PL_POSITION_TOP;
  std::vector<double> log_ticks;  // labelled x values on a log axis
};

double x_of(const Figure& figure, double x) { return figure.log_x ? std::log10(x) : x; }

bool plotted(const Series& s, std::size_t i) {
  return finite(s.x[i]) && finite(s.y[i]) && (s.low.empty() || (finite(s.low[i]) && finite(s.high[i])));
}

// Data extent (points, bands, error bars, reference lines) with a 6% margin on each side.
Extent window_of(const Figure& figure) {
  Extent e;
  for (const Series& s : figure.series)
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      if (!plotted(s, i)) continue;
      e.x(x_of(figure, s.x[i]));
      e.y(s.y[i]);
      if (!s.low.empty()) e.y(s.low[i]), e.y(s.high[i]);
    }
  for (const ReferenceLine& line : figure.lines)
    if (line.horizontal)
      e.y(line.at);
    else
      e.x(x_of(figure, line.at));
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

// Labelled values on a log axis: the coarsest of 1, 1-2-5, 1-2-3-5-7 and 1..9 per decade that
// gives at least three labels, thinned to at most eight.
std::vector<double> log_ticks_of(double lo10, double hi10) {
  static const std::vector<std::vector<double>> mantissas = {
      {1}, {1, 2, 5}, {1, 2, 3, 5, 7}, {1, 2, 3, 4, 5, 6, 7, 8, 9}};
  std::vector<double> ticks;
  for (const std::vector<double>& set : mantissas) {
    ticks.clear();
    for (int decade = static_cast<int>(std::floor(lo10)); decade <= static_cast<int>(std::ceil(hi10)); ++decade)
      for (double m : set) {
        const double v = m * std::pow(10.0, decade);
        if (std::log10(v) >= lo10 && std::log10(v) <= hi10) ticks.push_back(v);
      }
    if (ticks.size() >= 3) break;
  }
  if (ticks.size() > 8) {
    const std::size_t step = (ticks.size() + 7) / 8;
    std::vector<double> thinned;
    for (std::size_t i = 0; i < ticks.size(); i += step) thinned.push_back(ticks[i]);
    ticks = thinned;
  }
  return ticks;
}

// The legend goes into the corner of the plot that covers the fewest plotted points.
PLINT legend_corner(const Figure& figure, const Extent& w, std::size_t rows) {
  const double box_w = 0.42;
  const double box_h = std::min(0.9, 0.075 * static_cast<double>(rows) + 0.05);
  const PLINT corners[4] = {PL_POSITION_RIGHT | PL_POSITION_TOP, PL_POSITION_LEFT | PL_POSITION_TOP,
                            PL_POSITION_RIGHT | PL_POSITION_BOTTOM, PL_POSITION_LEFT | PL_POSITION_BOTTOM};
  std::size_t counts[4] = {0, 0, 0, 0};
  const auto count = [&](double x, double y) {
    const double u = (x_of(figure, x) - w.x0) / (w.x1 - w.x0);
    const double v = (y - w.y0) / (w.y1 - w.y0);
    counts[0] += u > 1 - box_w && v > 1 - box_h;
    counts[1] += u < box_w && v > 1 - box_h;
    counts[2] += u > 1 - box_w && v < box_h;
    counts[3] += u < box_w && v < box_h;
  };
  for (const Series& s : figure.series)
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      if (!plotted(s, i)) continue;
      count(s.x[i], s.y[i]);
      if (!s.low.empty()) count(s.x[i], s.low[i]), count(s.x[i], s.high[i]);
    }
  return corners[std::min_element(counts, counts + 4) - counts];
}

Layout layout_of(const Figure& figure) {
  Layout layout;
  layout.window = window_of(figure);
  int next = 0;
  std::size_t rows = 0;
  for (const Series& s : figure.series) {
    layout.colours.push_back(s.colour >= 0 ? s.colour % 8 : next++ % 8);
    rows += !s.label.empty();
  }
  layout.legend_position = legend_corner(figure, layout.window, rows);
  if (figure.log_x) layout.log_ticks = log_ticks_of(layout.window.x0, layout.window.x1);
  return layout;
}

// Continuous runs of plotted points, so a NaN breaks a line instead of joining across it.
std::vector<std::pair<std::size_t, std::size_t>> runs(const Series& s) {
  std::vector<std::pair<std::size_t, std::size_t>> out;
  std::size_t i = 0;
  while (i < s.x.size()) {
    if (!plotted(s, i)) {
      ++i;
      continue;
    }
    const std::size_t start = i;
    while (i < s.x.size() && plotted(s, i)) ++i;
    out.emplace_back(start, i);
  }
  return out;
}

void set_colours(plstream& pls) {
  pls.scmap0n(kSlots);
  pls.scol0(kBackground, 255, 255, 255);
  pls.scol0(kInk, 0, 0, 0);
  for (int i = 0; i < 8; ++i) {
    const Rgb c = kPalette[i];
    pls.scol0(kFirstColour + i, c.r, c.g, c.b);
    // Three quarters of the way to white: light enough that lines and points stay visible on it.
    pls.scol0(kTint + i, 255 - (255 - c.r) / 4, 255 - (255 - c.g) / 4, 255 - (255 - c.b) / 4);
  }
  pls.scol0(kReferenceGrey, 80, 80, 80);
  pls.scol0(kGridGrey, 225, 225, 225);
}

void draw_axes(plstream& pls, const Figure& figure, const Layout& layout) {
  const Extent& w = layout.window;
  pls.adv(0);
  pls.vsta();
  pls.wind(w.x0, w.x1, w.y0, w.y1);
  pls.col0(kGridGrey);
  pls.width(1.0);
  pls.box(figure.log_x ? "" : "g", 0.0, 0, "g", 0.0, 0);
  for (double v : layout.log_ticks) pls.join(std::log10(v), w.y0, std::log10(v), w.y1);
  pls.col0(kInk);
  pls.box(figure.log_x ? "bclst" : "bcnst", 0.0, 0, "bcnst", 0.0, 0);
  for (double v : layout.log_ticks) {  // log axes label 1-2-5 values, not only whole decades
    char text[32];
    std::snprintf(text, sizeof(text), "%g", v);
    const double at = (std::log10(v) - w.x0) / (w.x1 - w.x0);
    pls.mtex("b", 1.6, at, 0.5, text);
    const double tick = 0.015 * (w.y1 - w.y0);
    pls.join(std::log10(v), w.y0, std::log10(v), w.y0 + tick);
    pls.join(std::log10(v), w.y1, std::log10(v), w.y1 - tick);
  }
  pls.lab(plot_text(figure.x_label).c_str(), plot_text(figure.y_label).c_str(), plot_text(figure.title).c_str());
}

void draw_bands(plstream& pls, const Figure& figure, const Layout& layout) {
  for (std::size_t k = 0; k < figure.series.size(); ++k) {
    const Series& s = figure.series[k];
    if (s.style != SeriesStyle::band) continue;
    pls.col0(kTint + layout.colours[k]);
    for (const auto& [a, b] : runs(s)) {
      std::vector<PLFLT> px;
      std::vector<PLFLT> py;
      for (std::size_t i = a; i < b; ++i) px.push_back(x_of(figure, s.x[i])), py.push_back(s.high[i]);
      for (std::size_t i = b; i-- > a;) px.push_back(x_of(figure, s.x[i])), py.push_back(s.low[i]);
      pls.fill(static_cast<PLINT>(px.size()), px.data(), py.data());
    }
  }
}

// Which horizontal lines' labels go at the right end: a line within 6% of the plot's height of the
// line below it whose label sits on the left would print over that label, so it takes the other side.
std::vector<bool> labels_on_the_right(const Figure& figure, const Extent& w) {
  std::vector<std::size_t> order;
  for (std::size_t i = 0; i < figure.lines.size(); ++i)
    if (figure.lines[i].horizontal && finite(figure.lines[i].at)) order.push_back(i);
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return figure.lines[a].at < figure.lines[b].at; });
  std::vector<bool> right(figure.lines.size(), false);
  for (std::size_t k = 1; k < order.size(); ++k) {
    const bool close = figure.lines[order[k]].at - figure.lines[order[k - 1]].at < 0.06 * (w.y1 - w.y0);
    right[order[k]] = close && !right[order[k - 1]];
  }
  return right;
}

void draw_reference_lines(plstream& pls, const Figure& figure, const Layout& layout) {
  const Extent& w = layout.window;
  const std::vector<bool> right = labels_on_the_right(figure, w);
  for (std::size_t i = 0; i < figure.lines.size(); ++i) {  // text direction in world units: any axis scale
    const ReferenceLine& line = figure.lines[i];
    if (!finite(line.at)) continue;
    pls.col0(kReferenceGrey);
    pls.width(1.5);
    pls.lsty(kDashed);
    const std::string label = plot_text(line.label);
    if (line.horizontal) {
      pls.join(w.x0, line.at, w.x1, line.at);
      pls.lsty(1);
      const double x = right[i] ? w.x1 - 0.02 * (w.x1 - w.x0) : w.x0 + 0.02 * (w.x1 - w.x0);
      pls.ptex(x, line.at + 0.015 * (w.y1 - w.y0), w.x1 - w.x0, 0.0, right[i] ? 1.0 : 0.0, label.c_str());
    } else {
      const double x = x_of(figure, line.at);
      pls.join(x, w.y0, x, w.y1);
      pls.lsty(1);
      pls.ptex(x - 0.012 * (w.x1 - w.x0), w.y0 + 0.03 * (w.y1 - w.y0), 0.0, w.y1 - w.y0, 0.0, label.c_str());
    }
  }
  pls.width(1.0);
}

void draw_series(plstream& pls, const Figure& figure, const Layout& layout) {
  for (std::size_t k = 0; k < figure.series.size(); ++k) {
    const Series& s = figure.series[k];
    const int c = layout.colours[k];
    pls.col0(kFirstColour + c);
    for (const auto& [a, b] : runs(s)) {
      std::vector<PLFLT> px;
      std::vector<PLFLT> py;
      std::vector<PLFLT> lo;
      std::vector<PLFLT> hi;
      for (std::size_t i = a; i < b; ++i) {
        px.push_back(x_of(figure, s.x[i]));
        py.push_back(s.y[i]);
        if (!s.low.empty()) lo.push_back(s.low[i]), hi.push_back(s.high[i]);
      }
      const auto n = static_cast<PLINT>(px.size());
      switch (s.style) {
        case SeriesStyle::band:
          break;  // drawn first, behind everything
        case SeriesStyle::line:
        case SeriesStyle::dashed_line:
          pls.width(2.0);
          pls.lsty(s.style == SeriesStyle::dashed_line ? kDashed : kLineStyles[c]);
          pls.line(n, px.data(), py.data());
          pls.lsty(1);
          break;
        case SeriesStyle::points:
          pls.string(n, px.data(), py.data(), kMarkers[c]);
          break;
        case SeriesStyle::error_bars:
          pls.width(1.5);
          pls.erry(n, px.data(), lo.data(), hi.data());
          pls.string(n, px.data(), py.data(), kMarkers[c]);
          break;
      }
      pls.width(1.0);
    }
  }
}

// One row per labelled series, showing what the series draws: its marker, line or band colour.
void draw_legend(plstream& pls, const Figure& figure, const Layout& layout) {
  std::vector<std::string> labels;
  std::vector<PLINT> options, text_colours, line_colours, line_styles, symbol_colours, symbol_numbers, box_colours,
      box_patterns;
  std::vector<PLFLT> line_widths, symbol_scales, box_scales, box_widths;
  std::vector<const char*> symbols;
  for (std::size_t k = 0; k < figure.series.size(); ++k) {
    const Series& s = figure.series[k];
    if (s.label.empty()) continue;
    const int c = layout.colours[k];
    switch (s.style) {
      case SeriesStyle::points:
      case SeriesStyle::error_bars:
        options.push_back(PL_LEGEND_SYMBOL);
        break;
      case SeriesStyle::band:
        options.push_back(PL_LEGEND_COLOR_BOX);
        break;
      case SeriesStyle::line:
      case SeriesStyle::dashed_line:
        options.push_back(PL_LEGEND_LINE);
        break;
    }
    labels.push_back(plot_text(s.label));
    text_colours.push_back(kInk);
    line_colours.push_back(kFirstColour + c);
    line_styles.push_back(s.style == SeriesStyle::dashed_line ? kDashed : kLineStyles[c]);
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
  if (options.empty()) return;
  std::vector<const char*> texts;
  for (const std::string& label : labels) texts.push_back(label.c_str());
  PLFLT width = 0.0;
  PLFLT height = 0.0;
  pls.legend(&width, &height, PL_LEGEND_BACKGROUND | PL_LEGEND_BOUNDING_BOX, layout.legend_position, 0.02, 0.02, 0.08,
             kBackground, kInk, 1, 0, 0, static_cast<PLINT>(options.size()), options.data(), 1.0, 0.85, 2.0, 0.0,
             text_colours.data(), texts.data(), box_colours.data(), box_patterns.data(), box_scales.data(),
             box_widths.data(), line_colours.data(), line_styles.data(), line_widths.data(), symbol_colours.data(),
             symbol_scales.data(), symbol_numbers.data(), symbols.data());
}

// Draws the figure on `device` into memory: PLplot writes through a FILE* it closes itself, so it
// never opens (or prompts for) a file name, and the bytes reach the disk only through WholeFile.
std::string render(const Figure& figure, const Layout& layout, const char* device, const std::string& path) {
  char* buffer = nullptr;
  std::size_t size = 0;
  struct FreeBuffer {
    char*& p;
    ~FreeBuffer() { std::free(p); }
  } free_buffer{buffer};
  FILE* memory = open_memstream(&buffer, &size);
  if (memory == nullptr) throw UserError(path + ": cannot allocate memory to draw the figure");
  PLINT abort_code = 0;           // set by PLplot's non-fatal errors instead of printing them
  char abort_message[4096] = "";  // PLplot's messages are a line or two
  std::string fatal;
  bool exited = false;
  try {
    plstream pls;  // its own stream; its destructor ends it and closes `memory`
    pls.sError(&abort_code, abort_message);
    pls.sdev(device);
    pls.sfile(memory);
    pls.spage(0.0, 0.0, figure_width_pixels, figure_height_pixels, 0, 0);
    set_colours(pls);
    pls.init();
    pls.schr(0.0, 1.0);
    draw_axes(pls, figure, layout);
    draw_bands(pls, figure, layout);
    draw_reference_lines(pls, figure, layout);
    draw_series(pls, figure, layout);
    draw_legend(pls, figure, layout);
  } catch (const PlplotExit& error) {
    exited = true;
    fatal = error.message;
  }
  if (exited || abort_code != 0) {
    std::string message = exited ? fatal : std::string(abort_message);
    while (!message.empty() && (message.front() == '\n' || message.front() == '*')) message.erase(0, 1);
    while (!message.empty() && message.back() == '\n') message.pop_back();
    throw UserError(path + ": PLplot (" + device + ") could not draw the figure: " + message);
  }
  if (size == 0) throw UserError(path + ": PLplot (" + device + ") drew nothing");
  return std::string(buffer, size);
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\r\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

std::string csv_number(double v) { return finite(v) ? exact_decimal(v) : ""; }

std::string comment_text(const std::string& text) {  // one comment line each
  std::string out = text;
  std::replace(out.begin(), out.end(), '\n', ' ');
  std::replace(out.begin(), out.end(), '\r', ' ');
  return out;
}

const char* style_name(SeriesStyle style) {
  switch (style) {
    case SeriesStyle::points:
      return "points";
    case SeriesStyle::line:
      return "line";
    case SeriesStyle::dashed_line:
      return "dashed_line";
    case SeriesStyle::band:
      return "band";
    case SeriesStyle::error_bars:
      return "error_bars";
  }
  return "";
}

std::string csv_of(const Figure& figure) {
  std::string text = "# title: " + comment_text(figure.title) + "\n# caption: " + comment_text(figure.caption) +
                     "\n# x: " + comment_text(figure.x_label) + "\n# y: " + comment_text(figure.y_label) +
                     "\nseries,style,x,y,low,high\n";
  for (const Series& s : figure.series)
    for (std::size_t i = 0; i < s.x.size(); ++i)
      text += csv_field(s.label) + "," + style_name(s.style) + "," + csv_number(s.x[i]) + "," + csv_number(s.y[i]) +
              "," + (s.low.empty() ? "" : csv_number(s.low[i])) + "," + (s.high.empty() ? "" : csv_number(s.high[i])) +
              "\n";
  for (const ReferenceLine& line : figure.lines)
    text += csv_field(line.label) + (line.horizontal ? ",horizontal_line,," + csv_number(line.at) + ",,\n"
                                                     : ",vertical_line," + csv_number(line.at) + ",,,\n");
  return text;
}

void check(const Figure& figure) {
  FRUGAL_CHECK(!figure.name.empty() &&
               figure.name.find_first_not_of("abcdefghijklmnopqrstuvwxyz0123456789-") == std::string::npos);
  for (const Series& s : figure.series) {
    FRUGAL_CHECK(s.y.size() == s.x.size());
    const bool ranged = s.style == SeriesStyle::band || s.style == SeriesStyle::error_bars;
    FRUGAL_CHECK(ranged ? s.low.size() == s.x.size() && s.high.size() == s.x.size() : s.low.empty() && s.high.empty());
    FRUGAL_CHECK(s.colour >= -1);
    if (figure.log_x)
      for (double x : s.x) FRUGAL_CHECK(!(x <= 0.0));  // NaN passes: it is skipped
  }
  if (figure.log_x)
    for (const ReferenceLine& line : figure.lines) FRUGAL_CHECK(line.horizontal || !(line.at <= 0.0));
}

}  // namespace

FigureFiles draw(const Figure& figure, const std::string& folder) {
  check(figure);
  require_writable_output(folder, OutputKind::folder, "a new or existing folder for the figures");
  std::error_code error;
  fs::create_directories(folder, error);
  if (!fs::is_directory(folder))
    throw UserError(folder + ": cannot create the folder for the figures" + (error ? ": " + error.message() : "") +
                    "; allowed: a new or existing writable folder");
  const std::string base = (fs::path(folder) / figure.name).string();
  const FigureFiles files{base + ".svg", base + ".png", base + ".pdf", base + ".csv"};
  const Layout layout = layout_of(figure);
  std::string svg, png, pdf;
  {
    const std::lock_guard<std::mutex> lock(plplot_mutex);
    const ExitHandler handler;
    svg = render(figure, layout, "svgcairo", files.svg);
    png = render(figure, layout, "pngcairo", files.png);
    pdf = render(figure, layout, "pdfcairo", files.pdf);
  }
  // All four temporary files are opened (and their paths checked) before any is moved into place,
  // so a path in the way leaves the earlier figure whole instead of half replaced.
  WholeFile svg_file(files.svg);
  WholeFile png_file(files.png);
  WholeFile pdf_file(files.pdf);
  WholeFile csv_file(files.csv);
  svg_file.write(svg);
  png_file.write(png);
  pdf_file.write(pdf);
  csv_file.write(csv_of(figure));
  svg_file.commit();
  png_file.commit();
  pdf_file.commit();
  csv_file.commit();
  return files;
}

}  // namespace frugal::figures

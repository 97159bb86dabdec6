#include "experiments/figures/figure.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <limits>
#include <opencv2/core.hpp>
#include <opencv2/imgcodecs.hpp>
#include <sstream>
#include <thread>

#include "phantoms/user_error.h"

namespace frugal::figures {
namespace {

namespace fs = std::filesystem;

std::string scratch(const std::string& name) {
  const char* root = std::getenv("TEST_TMPDIR");
  const fs::path folder = fs::path(root ? root : fs::temp_directory_path().string()) / name;
  fs::remove_all(folder);
  return folder.string();
}

std::string read(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

const double kNan = std::numeric_limits<double>::quiet_NaN();

Figure sample() {
  Figure figure;
  figure.name = "sample-curve";
  figure.title = "A curve, with \"quotes\", a comma and #";
  figure.x_label = "annotator-hours (h)";
  figure.y_label = "count mean absolute error";
  figure.log_x = true;
  figure.caption = "test figure";
  figure.series.push_back({"band", SeriesStyle::band, {1, 2, 4}, {3, 2, 1.5}, {2.5, 1.8, 1.2}, {3.5, 2.2, 1.8}, 2});
  figure.series.push_back({"fit", SeriesStyle::line, {1, 2, 4}, {3, 2, 1.5}, {}, {}, 5});
  figure.series.push_back(
      {"each, repeat", SeriesStyle::points, {1, 2, 4, 8}, {3.1, kNan, 1.0 / 3.0, 0.1 + 0.2}, {}, {}, 0});
  figure.series.push_back({"means", SeriesStyle::error_bars, {1, 4}, {3, 1.5}, {2, 1}, {4, 2}, 1});
  figure.series.push_back({"", SeriesStyle::dashed_line, {1.5, 6}, {2.75e-300, 1e300}, {}, {}, -1});
  figure.lines.push_back({true, 1.5, "target"});
  figure.lines.push_back({false, 3.25, "needed \"here\""});
  return figure;
}

// RFC 4180 fields of one line (no line breaks inside quotes: the figure never writes them).
std::vector<std::string> csv_fields(const std::string& line) {
  std::vector<std::string> fields(1);
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted && c == '"' && i + 1 < line.size() && line[i + 1] == '"')
      fields.back() += '"', ++i;
    else if (c == '"')
      quoted = !quoted;
    else if (c == ',' && !quoted)
      fields.emplace_back();
    else
      fields.back() += c;
  }
  return fields;
}

struct CsvFile {
  std::vector<std::string> comments;
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
};

CsvFile parse(const std::string& text) {
  CsvFile csv;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    if (line.rfind("# ", 0) == 0)
      csv.comments.push_back(line);
    else if (csv.header.empty())
      csv.header = csv_fields(line);
    else
      csv.rows.push_back(csv_fields(line));
  }
  return csv;
}

// Exact equality of a written number with the plotted one; NaN and "absent" are the empty field.
void expect_number(const std::string& field, double value, const std::string& where) {
  if (!std::isfinite(value)) {
    EXPECT_EQ(field, "") << where;
    return;
  }
  ASSERT_FALSE(field.empty()) << where;
  char* end = nullptr;
  EXPECT_EQ(std::strtod(field.c_str(), &end), value) << where << ": " << field;
  EXPECT_EQ(*end, '\0') << where;
}

TEST(Figure, WritesSvgPngPdfAndCsvAndLeavesNoTemporaryFile) {
  const std::string folder = scratch("figure-files");
  const FigureFiles files = draw(sample(), folder);
  EXPECT_EQ(files.svg, folder + "/sample-curve.svg");
  for (const std::string& path : {files.svg, files.png, files.pdf, files.csv}) {
    ASSERT_TRUE(fs::is_regular_file(path)) << path;
    EXPECT_GT(fs::file_size(path), 0U) << path;
  }
  // The PNG decodes at the page size and is not blank (common practice, no source): it holds
  // white paper, black ink and at least one palette colour (Okabe & Ito 2008 orange, 230,159,0).
  const cv::Mat png = cv::imread(files.png, cv::IMREAD_COLOR);
  ASSERT_FALSE(png.empty());
  EXPECT_EQ(png.cols, figure_width_pixels);
  EXPECT_EQ(png.rows, figure_height_pixels);
  EXPECT_EQ(png.at<cv::Vec3b>(0, 0), cv::Vec3b(255, 255, 255));  // white background (BGR)
  double darkest = 0.0;
  double lightest = 0.0;
  cv::Mat grey;
  cv::extractChannel(png, grey, 1);
  cv::minMaxLoc(grey, &darkest, &lightest);
  EXPECT_LT(darkest, 50.0);
  EXPECT_EQ(lightest, 255.0);
  bool orange = false;
  for (int j = 0; j < png.rows && !orange; ++j)
    for (int i = 0; i < png.cols && !orange; ++i) orange = png.at<cv::Vec3b>(j, i) == cv::Vec3b(0, 159, 230);
  EXPECT_TRUE(orange) << "no error bar or marker in the palette's orange";
  // An SVG is XML with an <svg> root (W3C SVG 1.1 §5.1); cairo draws glyphs and lines as paths.
  const std::string svg = read(files.svg);
  EXPECT_TRUE(svg.rfind("<?xml", 0) == 0 || svg.rfind("<svg", 0) == 0) << svg.substr(0, 40);
  EXPECT_NE(svg.find("<svg"), std::string::npos);
  EXPECT_NE(svg.find("</svg>"), std::string::npos);
  EXPECT_GT(svg.size(), 5000U);
  std::size_t paths = 0;
  for (std::size_t at = svg.find("<path"); at != std::string::npos; at = svg.find("<path", at + 1)) ++paths;
  EXPECT_GT(paths, 20U);
  // A PDF file starts with %PDF- (ISO 32000-1 §7.5.2).
  EXPECT_EQ(read(files.pdf).substr(0, 5), "%PDF-");
  for (const auto& entry : fs::directory_iterator(folder))
    EXPECT_EQ(entry.path().string().find(".partial"), std::string::npos) << entry.path();
  EXPECT_EQ(std::distance(fs::directory_iterator(folder), fs::directory_iterator{}), 4);
}

TEST(Figure, TheCsvHoldsExactlyThePlottedNumbers) {
  const Figure figure = sample();
  const CsvFile csv = parse(read(draw(figure, scratch("figure-csv")).csv));
  // Tidy layout with comment lines (common practice, no source).
  ASSERT_EQ(csv.comments.size(), 4U);
  EXPECT_EQ(csv.comments[0], "# title: " + figure.title);
  EXPECT_EQ(csv.comments[1], "# caption: test figure");
  EXPECT_EQ(csv.comments[2], "# x: annotator-hours (h)");
  EXPECT_EQ(csv.comments[3], "# y: count mean absolute error");
  EXPECT_EQ(csv.header, (std::vector<std::string>{"series", "style", "x", "y", "low", "high"}));
  const char* styles[] = {"points", "line", "dashed_line", "band", "error_bars"};
  std::size_t row = 0;
  for (const Series& s : figure.series)
    for (std::size_t i = 0; i < s.x.size(); ++i, ++row) {
      ASSERT_LT(row, csv.rows.size());
      const std::vector<std::string>& r = csv.rows[row];
      const std::string where = s.label + " point " + std::to_string(i);
      ASSERT_EQ(r.size(), 6U) << where;
      EXPECT_EQ(r[0], s.label) << where;  // RFC 4180 quoting undone by the parser above
      EXPECT_EQ(r[1], styles[static_cast<int>(s.style)]) << where;
      expect_number(r[2], s.x[i], where);
      expect_number(r[3], s.y[i], where);  // NaN → empty
      expect_number(r[4], s.low.empty() ? kNan : s.low[i], where);
      expect_number(r[5], s.high.empty() ? kNan : s.high[i], where);
    }
  for (const ReferenceLine& line : figure.lines) {
    ASSERT_LT(row, csv.rows.size());
    const std::vector<std::string>& r = csv.rows[row++];
    ASSERT_EQ(r.size(), 6U);
    EXPECT_EQ(r[0], line.label);
    EXPECT_EQ(r[1], line.horizontal ? "horizontal_line" : "vertical_line");
    expect_number(r[2], line.horizontal ? kNan : line.at, line.label);
    expect_number(r[3], line.horizontal ? line.at : kNan, line.label);
    EXPECT_EQ(r[4], "");
    EXPECT_EQ(r[5], "");
  }
  EXPECT_EQ(row, csv.rows.size());
}

TEST(Figure, NumbersAreTheShortestThatReadBackExactly) {
  Figure figure;
  figure.name = "digits";
  figure.series.push_back({"s", SeriesStyle::points, {0.1 + 0.2, 2.0}, {1.0 / 3.0, 1e-5}, {}, {}, -1});
  const std::string csv = read(draw(figure, scratch("figure-digits")).csv);
  // The shortest decimals that read back exactly: Python 3's repr() of the same doubles.
  EXPECT_NE(csv.find("\ns,points,0.30000000000000004,0.3333333333333333,,\n"), std::string::npos) << csv;
  EXPECT_NE(csv.find("\ns,points,2,1e-05,,\n"), std::string::npos) << csv;
}

TEST(Figure, AnEmptyFigureAndAFigureOfOnlyNanStillDraw) {
  Figure empty;
  empty.name = "empty";
  empty.title = "nothing yet";
  EXPECT_NO_THROW(draw(empty, scratch("figure-empty")));
  Figure nan;
  nan.name = "all-nan";
  nan.series.push_back({"none", SeriesStyle::line, {kNan, 1.0}, {2.0, kNan}, {}, {}, -1});
  nan.lines.push_back({true, kNan, "not drawn"});
  const FigureFiles files = draw(nan, scratch("figure-nan"));
  EXPECT_NE(read(files.csv).find("\nnot drawn,horizontal_line,,,,\n"), std::string::npos);
}

TEST(FigureDeathTest, ALogAxisRefusesXAtOrBelowZero) {
  GTEST_FLAG_SET(death_test_style, "threadsafe");
  Figure figure = sample();
  figure.series[2].x[0] = 0.0;  // log10(0) has no place on the axis (callers drop such points)
  EXPECT_DEATH(draw(figure, scratch("figure-log-zero")), "internal error: check");
  Figure line = sample();
  line.lines.push_back({false, -1.0, "negative hours"});
  EXPECT_DEATH(draw(line, scratch("figure-log-line")), "internal error: check");
  Figure named = sample();
  named.name = "Not/A stem";
  EXPECT_DEATH(draw(named, scratch("figure-name")), "internal error: check");
}

TEST(Figure, AFolderThatCannotBeMadeIsAUserErrorNamingIt) {
  const std::string folder = scratch("figure-blocked");
  fs::create_directories(folder);
  std::ofstream(folder + "/file") << "x";
  try {
    draw(sample(), folder + "/file/figures");
    FAIL() << "accepted";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find(folder + "/file/figures"), std::string::npos) << error.what();
  }
  try {  // the folder itself is a regular file
    draw(sample(), folder + "/file");
    FAIL() << "accepted";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find(folder + "/file"), std::string::npos) << error.what();
  }
  EXPECT_EQ(read(folder + "/file"), "x");
}

TEST(Figure, AFileInTheWayIsAUserErrorNamingItAndNothingIsLeftHalfWritten) {
  const std::string folder = scratch("figure-in-the-way");
  fs::create_directories(folder + "/sample-curve.png");  // a folder where the PNG goes
  std::ofstream(folder + "/sample-curve.svg") << "earlier";
  try {
    draw(sample(), folder);
    FAIL() << "accepted";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find(folder + "/sample-curve.png"), std::string::npos) << error.what();
  }
  EXPECT_EQ(read(folder + "/sample-curve.svg"), "earlier");  // no figure half replaced
  EXPECT_FALSE(fs::exists(folder + "/sample-curve.csv"));
  for (const auto& entry : fs::directory_iterator(folder))
    EXPECT_EQ(entry.path().string().find(".partial"), std::string::npos) << entry.path();
}

TEST(Figure, RedrawingReplacesTheFilesAndGivesTheSameCsv) {
  const std::string folder = scratch("figure-again");
  const std::string first = read(draw(sample(), folder).csv);
  Figure changed = sample();
  changed.title = "changed";
  const FigureFiles files = draw(changed, folder);
  EXPECT_NE(read(files.csv).find("# title: changed\n"), std::string::npos);
  EXPECT_EQ(read(draw(sample(), folder).csv), first);
}

TEST(Figure, TwoThreadsDrawingAtOnceBothSucceed) {
  // PLplot is not thread-safe; draw() serialises it (common practice, no source).
  const std::string a = scratch("figure-thread-a");
  const std::string b = scratch("figure-thread-b");
  std::string csv_a;
  std::string csv_b;
  std::thread other([&] { csv_a = read(draw(sample(), a).csv); });
  csv_b = read(draw(sample(), b).csv);
  other.join();
  EXPECT_FALSE(csv_a.empty());
  EXPECT_EQ(csv_a, csv_b);
  EXPECT_EQ(cv::imread(a + "/sample-curve.png").size(), cv::imread(b + "/sample-curve.png").size());
}

}  // namespace
}  // namespace frugal::figures

#include "experiments/report/html_report.h"

#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "experiments/report/base64.h"
#include "experiments/report/report_document.h"
#include "phantoms/user_error.h"

namespace frugal::report {
namespace {

namespace fs = std::filesystem;

// A fresh, empty folder in the test's scratch folder.
fs::path scratch(const std::string& name) {
  const char* folder = std::getenv("TEST_TMPDIR");
  const fs::path path = fs::path(folder != nullptr ? folder : ::testing::TempDir()) / ("html_report_" + name);
  fs::remove_all(path);
  fs::create_directories(path);
  return path;
}

void write(const fs::path& path, const std::string& bytes) {
  std::ofstream out(path, std::ios::binary);
  out << bytes;
}

std::string read(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream bytes;
  bytes << in.rdbuf();
  return bytes.str();
}

std::size_t count(const std::string& text, const std::string& part) {
  std::size_t n = 0;
  for (std::size_t at = text.find(part); at != std::string::npos; at = text.find(part, at + part.size())) ++n;
  return n;
}

// What a drawing library writes: a prolog and doctype, numbered glyph and clip ids, references to
// them through xlink:href and url(#...). Both figures use the same ids.
std::string svg_file(const std::string& colour) {
  return "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
         "<!DOCTYPE svg PUBLIC \"-//W3C//DTD SVG 1.1//EN\" \"http://www.w3.org/Graphics/SVG/1.1/DTD/svg11.dtd\">\n"
         "<!-- drawn by hand -->\n"
         "<svg xmlns=\"http://www.w3.org/2000/svg\" xmlns:xlink=\"http://www.w3.org/1999/xlink\" width=\"120\" "
         "height=\"80\">\n<defs><symbol overflow=\"visible\" id=\"glyph0-1\"><path d=\"M0 0h4v4z\"/></symbol>"
         "<clipPath id=\"clip1\"><rect x=\"0\" y=\"0\" width=\"100\" height=\"60\"/></clipPath></defs>\n"
         "<g id=\"surface1\" clip-path=\"url(#clip1)\"><rect width=\"50\" height=\"40\" style=\"fill:" +
         colour + "\"/><use xlink:href=\"#glyph0-1\" x=\"10\" y=\"10\"/></g>\n</svg>\n";
}

// The signature of a PNG and some bytes: the writer embeds files, it does not decode them.
const std::string kPngBytes = std::string("\x89PNG\r\n\x1a\n", 8) + std::string("\x00\x01\xfe\xff", 4);
const std::string kCsv = "# frugal 0.1.0\nbudget_hours,dice\n1,0.5\n2,0.7\n";

struct Sample {
  fs::path folder;
  ReportDocument document;
  fs::path html;
};

Sample sample(const std::string& name) {
  Sample s;
  s.folder = scratch(name);
  write(s.folder / "first.svg", svg_file("#336699"));
  write(s.folder / "second.svg", svg_file("#993333"));
  write(s.folder / "third.png", kPngBytes);
  write(s.folder / "numbers.csv", kCsv);
  s.html = s.folder / "report.html";
  ReportDocument& d = s.document;
  d.title = "Which labels, how many hours: test cohort";
  d.answer = "Buy 12 hours of outlines & grades.";
  d.answer_details = {"Reached at 11 to 14 hours.", "Presence labels never reach the target."};
  d.cautions = {"Results describe synthetic phantoms.", "They do not replace a pilot on real data."};
  Section curves{"curves", "Learning curves", {"Error falls with hours; <script>alert(1)</script> is text."}, {}, {}};
  curves.figures.push_back({"Dice against hours", "Mean over repeats.", (s.folder / "first.svg").string(), "",
                            (s.folder / "numbers.csv").string()});
  curves.figures.push_back({"Second chart", "Same ids inside.", (s.folder / "second.svg").string(), "", ""});
  Section costs{"costs", "Costs", {"Plain \"quoted\" text & more."}, {}, {}};
  costs.figures.push_back({"A raster figure", "From a PNG.", "", (s.folder / "third.png").string(), ""});
  costs.tables.push_back({"Hours per plan",
                          {"plan", "hours", "note"},
                          {{"outline", "12.0", "a < b"}, {"grade", "30.5", "-"}},
                          {false, true}});
  d.sections = {curves, costs};
  d.generated_by = "frugal 0.1.0, study hash abc, 2026-12-02";
  return s;
}

std::string written(const Sample& s) {
  write_html_report(s.document, s.html.string());
  return read(s.html);
}

// RFC 4648 §10 test vectors.
TEST(Base64, MatchesTheRfc4648TestVectors) {
  EXPECT_EQ(base64_encode(""), "");
  EXPECT_EQ(base64_encode("f"), "Zg==");
  EXPECT_EQ(base64_encode("fo"), "Zm8=");
  EXPECT_EQ(base64_encode("foo"), "Zm9v");
  EXPECT_EQ(base64_encode("foob"), "Zm9vYg==");
  EXPECT_EQ(base64_encode("fooba"), "Zm9vYmE=");
  EXPECT_EQ(base64_encode("foobar"), "Zm9vYmFy");
}

// Expected values from Python's base64.b64encode.
TEST(Base64, EncodesEveryByteValue) {
  EXPECT_EQ(base64_encode(std::string("\x00\xff\xfe\x80\x7f", 5)), "AP/+gH8=");
  std::string all;
  for (int b = 0; b < 256; ++b) all += static_cast<char>(b);
  EXPECT_EQ(
      base64_encode(all),
      "AAECAwQFBgcICQoLDA0ODxAREhMUFRYXGBkaGxwdHh8gISIjJCUmJygpKissLS4vMDEyMzQ1Njc4OTo7PD0+P0BBQkNERUZHSElKS0xNTk9Q"
      "UVJTVFVWV1hZWltcXV5fYGFiY2RlZmdoaWprbG1ub3BxcnN0dXZ3eHl6e3x9fn+AgYKDhIWGh4iJiouMjY6PkJGSk5SVlpeYmZqbnJ2en6Ch"
      "oqOkpaanqKmqq6ytrq+wsbKztLW2t7i5uru8vb6/wMHCw8TFxsfIycrLzM3Oz9DR0tPU1dbX2Nna29zd3t/g4eLj5OXm5+jp6uvs7e7v8PHy"
      "8/T19vf4+fr7/P3+/w==");
}

TEST(HtmlReport, EscapesAllText) {
  const std::string html = written(sample("escape"));
  EXPECT_NE(html.find("&lt;script&gt;alert(1)&lt;/script&gt; is text."), std::string::npos);
  EXPECT_EQ(html.find("<script>alert"), std::string::npos);
  EXPECT_EQ(count(html, "<script"), 1U) << "only the figure-counting script";
  EXPECT_NE(html.find("Buy 12 hours of outlines &amp; grades."), std::string::npos);
  EXPECT_NE(html.find("Plain &quot;quoted&quot; text &amp; more."), std::string::npos);
  EXPECT_NE(html.find("<td>a &lt; b</td>"), std::string::npos);
}

TEST(HtmlReport, RefersToNothingOutsideTheFile) {
  std::string html = written(sample("offline"));
  // The SVG namespace names are identifiers, never fetched: the only URLs allowed.
  for (const std::string allowed :
       {"xmlns=\"http://www.w3.org/2000/svg\"", "xmlns:xlink=\"http://www.w3.org/1999/xlink\""}) {
    EXPECT_EQ(count(html, allowed), 2U) << allowed;
    for (std::size_t at = html.find(allowed); at != std::string::npos; at = html.find(allowed))
      html.erase(at, allowed.size());
  }
  EXPECT_NE(html.find("<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none';"), std::string::npos);
  for (const std::string forbidden :
       {"http://", "https://", "src=\"//", "href=\"//", "url(//", "<link", "<?xml", "<!DOCTYPE svg"})
    EXPECT_EQ(html.find(forbidden), std::string::npos) << forbidden;
}

TEST(HtmlReport, EmbedsEveryFigureAndItsNumbers) {
  const std::string html = written(sample("embed"));
  EXPECT_EQ(count(html, "<figure class=\"figure\""), 3U);
  EXPECT_EQ(count(html, "<svg "), 2U);
  EXPECT_NE(html.find("fill:#336699"), std::string::npos);
  EXPECT_NE(html.find("fill:#993333"), std::string::npos);
  EXPECT_NE(html.find("<img alt=\"Figure 3. A raster figure\" src=\"data:image/png;base64," + base64_encode(kPngBytes) +
                      "\">"),
            std::string::npos);
  EXPECT_NE(html.find("download=\"numbers.csv\" href=\"data:text/csv;base64," + base64_encode(kCsv) + "\""),
            std::string::npos);
  // Each inline SVG's ids get the figure's own prefix, references follow them.
  for (const std::string prefix : {"f1-", "f2-"}) {
    EXPECT_NE(html.find("id=\"" + prefix + "glyph0-1\""), std::string::npos) << prefix;
    EXPECT_NE(html.find("xlink:href=\"#" + prefix + "glyph0-1\""), std::string::npos) << prefix;
    EXPECT_NE(html.find("clip-path=\"url(#" + prefix + "clip1)\""), std::string::npos) << prefix;
  }
  EXPECT_EQ(html.find("id=\"glyph0-1\""), std::string::npos);
  EXPECT_NE(html.find("role=\"img\" aria-label=\"Figure 1. Dice against hours\" viewBox=\"0 0 120 80\""),
            std::string::npos);
  EXPECT_NE(html.find("data-figures-total"), std::string::npos);
  EXPECT_NE(html.find("data-figures-loaded"), std::string::npos);
}

TEST(HtmlReport, ShowsTheAnswerFirstAndTheCautionsTwice) {
  const std::string html = written(sample("cautions"));
  const std::size_t answer = html.find("class=\"answer\"");
  ASSERT_NE(answer, std::string::npos);
  EXPECT_LT(answer, html.find("<section"));
  for (const std::string caution :
       {"Results describe synthetic phantoms.", "They do not replace a pilot on real data."}) {
    EXPECT_EQ(count(html, caution), 2U) << caution;
    EXPECT_LT(html.find(caution), html.find("<section"));
    EXPECT_GT(html.rfind(caution), html.rfind("</section>"));
  }
  EXPECT_NE(html.find("<li>Reached at 11 to 14 hours.</li>"), std::string::npos);
  EXPECT_NE(html.find("frugal 0.1.0, study hash abc, 2026-12-02</footer>"), std::string::npos);
}

TEST(HtmlReport, LinksTheSectionsAndAlignsNumericColumns) {
  const std::string html = written(sample("contents"));
  for (const std::string id : {"curves", "costs"}) {
    EXPECT_NE(html.find("<a href=\"#" + id + "\">"), std::string::npos) << id;
    EXPECT_NE(html.find("<section id=\"" + id + "\">"), std::string::npos) << id;
  }
  EXPECT_NE(html.find("<caption>Hours per plan</caption>"), std::string::npos);
  EXPECT_NE(html.find("<th scope=\"col\" class=\"num\">hours</th>"), std::string::npos);
  EXPECT_NE(html.find("<tr><td>outline</td><td class=\"num\">12.0</td><td>a &lt; b</td></tr>"), std::string::npos);
  EXPECT_NE(html.find("@media print"), std::string::npos);
}

TEST(HtmlReport, AMissingFigureIsAUserErrorNamingItAndWritesNothing) {
  for (const bool svg : {true, false}) {
    Sample s = sample(svg ? "missing_svg" : "missing_png");
    const std::string missing = (s.folder / (svg ? "gone.svg" : "gone.png")).string();
    FigureRef& figure = s.document.sections[1].figures[0];
    figure.svg_path = svg ? missing : "";
    figure.png_path = svg ? "" : missing;
    try {
      write_html_report(s.document, s.html.string());
      ADD_FAILURE() << "no error for " << missing;
    } catch (const UserError& error) {
      EXPECT_NE(std::string(error.what()).find(missing), std::string::npos) << error.what();
    }
    EXPECT_FALSE(fs::exists(s.html));
    EXPECT_FALSE(fs::exists(s.html.string() + ".partial"));
  }
}

TEST(HtmlReport, AMissingCsvIsAUserErrorNamingIt) {
  Sample s = sample("missing_csv");
  const std::string missing = (s.folder / "gone.csv").string();
  s.document.sections[0].figures[0].csv_path = missing;
  try {
    write_html_report(s.document, s.html.string());
    ADD_FAILURE() << "no error for " << missing;
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find(missing), std::string::npos) << error.what();
  }
  EXPECT_FALSE(fs::exists(s.html));
}

TEST(HtmlReport, LeavesOnlyTheFinishedFileAndReplacesAnOldOne) {
  Sample s = sample("atomic");
  write(s.html, "an old report");
  written(s);
  written(s);
  std::vector<std::string> names;
  for (const fs::directory_entry& entry : fs::directory_iterator(s.folder))
    names.push_back(entry.path().filename().string());
  EXPECT_EQ(names.size(), 5U);
  for (const std::string& name : names) EXPECT_EQ(name.find(".partial"), std::string::npos) << name;
  EXPECT_EQ(read(s.html).compare(0, 15, "<!DOCTYPE html>"), 0);
}

TEST(HtmlReport, RefusesAFolderAsTheOutput) {
  Sample s = sample("folder_output");
  EXPECT_THROW(write_html_report(s.document, s.folder.string()), UserError);
}

TEST(HtmlReport, RefusesSvgFiguresThatReachOutsideOrRunCode) {
  const std::vector<std::string> bad = {
      "<svg xmlns=\"http://www.w3.org/2000/svg\"><image href=\"https://example.org/a.png\"/></svg>",
      "<svg xmlns=\"http://www.w3.org/2000/svg\" xmlns:xlink=\"http://www.w3.org/1999/xlink\">"
      "<use xlink:href=\"other.svg#a\"/></svg>",
      "<svg xmlns=\"http://www.w3.org/2000/svg\"><script>alert(1)</script></svg>",
      "<svg xmlns=\"http://www.w3.org/2000/svg\" onload=\"alert(1)\"></svg>",
      "<html><body>not a drawing</body></html>",
      "<?xml version=\"1.0\"?><svg xmlns=\"http://www.w3.org/2000/svg\"><g>",
  };
  for (std::size_t i = 0; i < bad.size(); ++i) {
    Sample s = sample("bad_svg_" + std::to_string(i));
    write(s.folder / "first.svg", bad[i]);
    try {
      write_html_report(s.document, s.html.string());
      ADD_FAILURE() << "no error for " << bad[i];
    } catch (const UserError& error) {
      EXPECT_NE(std::string(error.what()).find("first.svg"), std::string::npos) << error.what();
    }
    EXPECT_FALSE(fs::exists(s.html)) << bad[i];
  }
}

TEST(HtmlReport, KeepsCommentsAndDataReferencesInsideAnSvg) {
  Sample s = sample("svg_comments");
  write(s.folder / "first.svg",
        "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 10 10\"><!-- a \"quoted\" <note> -->"
        "<image href=\"data:image/png;base64,AAAA\" width=\"2\" height=\"2\"/></svg>");
  const std::string html = written(s);
  EXPECT_NE(html.find("<!-- a \"quoted\" <note> -->"), std::string::npos);
  EXPECT_NE(html.find("<image href=\"data:image/png;base64,AAAA\""), std::string::npos);
  EXPECT_NE(
      html.find("<svg role=\"img\" aria-label=\"Figure 1. Dice against hours\" xmlns=\"http://www.w3.org/2000/svg\" "
                "viewBox=\"0 0 10 10\">"),
      std::string::npos);
}

}  // namespace
}  // namespace frugal::report

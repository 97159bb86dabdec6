// make_sample_report FOLDER: writes two hand-made SVG figures (with the same ids, as drawing
// libraries number them), a PNG figure, their CSV and FOLDER/report.html, for the browser check
// in tests/python/report_render_test.py. Prints the report's path.

#include <algorithm>
#include <array>
#include <cstdint>
#include <cstdlib>
#include <exception>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <stdexcept>
#include <string>
#include <vector>

#include "experiments/report/html_report.h"
#include "experiments/report/report_document.h"

namespace {

namespace fs = std::filesystem;
using frugal::report::FigureRef;
using frugal::report::ReportDocument;
using frugal::report::Section;

std::uint32_t crc32(const std::string& bytes) {  // the PNG chunk CRC (ISO 3309, reflected 0xEDB88320)
  std::uint32_t crc = 0xFFFFFFFFU;
  for (const char c : bytes) {
    crc ^= static_cast<unsigned char>(c);
    for (int k = 0; k < 8; ++k) crc = (crc >> 1U) ^ (0xEDB88320U & (0U - (crc & 1U)));
  }
  return crc ^ 0xFFFFFFFFU;
}

std::string big_endian(std::uint32_t value) {
  return {static_cast<char>(value >> 24U), static_cast<char>(value >> 16U), static_cast<char>(value >> 8U),
          static_cast<char>(value)};
}

std::string chunk(const std::string& type, const std::string& data) {
  return big_endian(static_cast<std::uint32_t>(data.size())) + type + data + big_endian(crc32(type + data));
}

// An 8-bit RGB PNG whose zlib stream holds stored (uncompressed) deflate blocks: no library needed.
std::string png(int width, int height, const std::vector<std::array<unsigned char, 3>>& pixels) {
  std::string raw;
  for (int y = 0; y < height; ++y) {
    raw += '\0';  // filter type None
    for (int x = 0; x < width; ++x)
      for (const unsigned char channel : pixels[static_cast<std::size_t>(y * width + x)])
        raw += static_cast<char>(channel);
  }
  std::string zlib = "\x78\x01";
  std::uint32_t a = 1;
  std::uint32_t b = 0;
  for (const char c : raw) {  // Adler-32 (RFC 1950)
    a = (a + static_cast<unsigned char>(c)) % 65521U;
    b = (b + a) % 65521U;
  }
  for (std::size_t at = 0; at < raw.size(); at += 65535) {
    const std::size_t n = std::min<std::size_t>(65535, raw.size() - at);
    zlib += static_cast<char>(at + n == raw.size() ? 1 : 0);
    zlib += static_cast<char>(n & 0xFFU);
    zlib += static_cast<char>(n >> 8U);
    zlib += static_cast<char>(~n & 0xFFU);
    zlib += static_cast<char>((~n >> 8U) & 0xFFU);
    zlib += raw.substr(at, n);
  }
  zlib += big_endian((b << 16U) | a);
  const std::string header = big_endian(static_cast<std::uint32_t>(width)) +
                             big_endian(static_cast<std::uint32_t>(height)) + std::string("\x08\x02\x00\x00\x00", 5);
  return std::string("\x89PNG\r\n\x1a\n", 8) + chunk("IHDR", header) + chunk("IDAT", zlib) + chunk("IEND", "");
}

// Bars rising left to right over a pale ground, with a dark diagonal: easy to recognise on a
// screenshot.
std::string sample_png() {
  const int width = 360;
  const int height = 200;
  std::vector<std::array<unsigned char, 3>> pixels(static_cast<std::size_t>(width * height), {246, 246, 242});
  for (int y = 0; y < height; ++y)
    for (int x = 0; x < width; ++x) {
      auto& pixel = pixels[static_cast<std::size_t>(y * width + x)];
      const int bar = x / 60;
      if (x % 60 > 8 && height - y < 30 + bar * 28) pixel = {static_cast<unsigned char>(70 + 25 * bar), 120, 150};
      if (std::abs(y - (height - 1 - x * height / width)) < 2) pixel = {30, 30, 30};
    }
  return png(width, height, pixels);
}

// A learning-curve-like drawing with a prolog, a doctype, a glyph symbol and a clip path whose
// ids are the same in both files.
std::string sample_svg(const std::string& colour, const std::string& label) {
  std::string points;
  for (int i = 0; i <= 8; ++i)
    points +=
        std::to_string(60 + i * 50) + "," + std::to_string(230 - static_cast<int>(180.0 * (1.0 - 1.0 / (1 + i)))) + " ";
  return "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
         "<!DOCTYPE svg PUBLIC \"-//W3C//DTD SVG 1.1//EN\" \"http://www.w3.org/Graphics/SVG/1.1/DTD/svg11.dtd\">\n"
         "<svg xmlns=\"http://www.w3.org/2000/svg\" xmlns:xlink=\"http://www.w3.org/1999/xlink\" width=\"520pt\" "
         "height=\"280pt\" viewBox=\"0 0 520 280\" version=\"1.1\">\n"
         "<defs>\n<symbol overflow=\"visible\" id=\"glyph0-1\"><circle r=\"5\" style=\"stroke:none;fill:" +
         colour +
         ";\"/></symbol>\n<clipPath id=\"clip1\"><rect x=\"50\" y=\"20\" width=\"440\" "
         "height=\"220\"/></clipPath>\n</defs>\n"
         "<g id=\"surface1\">\n<rect x=\"0\" y=\"0\" width=\"520\" height=\"280\" style=\"fill:#ffffff;\"/>\n"
         "<path d=\"M50 20V240H490\" style=\"fill:none;stroke:#333333;stroke-width:1.2;\"/>\n"
         "<g clip-path=\"url(#clip1)\"><polyline points=\"" +
         points + "\" style=\"fill:none;stroke:" + colour + ";stroke-width:2.5;\"/>\n" +
         [&] {
           std::string marks;
           for (int i = 0; i <= 8; ++i)
             marks += "<use xlink:href=\"#glyph0-1\" x=\"" + std::to_string(60 + i * 50) + "\" y=\"" +
                      std::to_string(230 - static_cast<int>(180.0 * (1.0 - 1.0 / (1 + i)))) + "\"/>";
           return marks;
         }() +
         "</g>\n<text x=\"270\" y=\"268\" text-anchor=\"middle\" style=\"font-family:sans-serif;font-size:14px;\">"
         "annotator-hours</text>\n<text x=\"60\" y=\"16\" style=\"font-family:sans-serif;font-size:14px;fill:" +
         colour + ";\">" + label + "</text>\n</g>\n</svg>\n";
}

void write(const fs::path& path, const std::string& bytes) {
  std::ofstream out(path, std::ios::binary);
  out << bytes;
  if (!out) throw std::runtime_error(path.string() + ": cannot write");
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::cerr << "usage: make_sample_report FOLDER\n";
    return 2;
  }
  try {
    const fs::path folder = argv[1];
    fs::create_directories(folder);
    write(folder / "curve-a.svg", sample_svg("#2c6e8f", "error, plan A"));
    write(folder / "curve-b.svg", sample_svg("#a4452c", "error, plan B"));
    write(folder / "bars.png", sample_png());
    write(folder / "curve.csv", "# sample\nhours,error\n1,0.90\n2,0.55\n4,0.35\n");

    ReportDocument document;
    document.title = "Sample report: the writer's own check";
    document.answer = "This sample answers nothing: it shows that every part of a report renders.";
    document.answer_details = {
        "Two inline SVG figures with the same ids inside, one PNG figure.",
        "A table with numeric columns, text that must be escaped: <b>not bold</b> & \"quoted\"."};
    document.cautions = {"Results describe synthetic phantoms; they guide the design of a labelling plan.",
                         "They do not validate a method for clinical use or replace a pilot on real data."};
    Section figures{"figures",
                    "Figures",
                    {"Both drawings use the ids glyph0-1 and clip1; each keeps its own colour.",
                     "<script>document.title = 'escaping failed';</script>"},
                    {},
                    {}};
    figures.figures.push_back({"Plan A", "Markers drawn through a shared symbol id.", (folder / "curve-a.svg").string(),
                               "", (folder / "curve.csv").string()});
    figures.figures.push_back({"Plan B", "The same ids, another colour.", (folder / "curve-b.svg").string(), "", ""});
    figures.figures.push_back({"A raster figure", "Embedded from a PNG.", "", (folder / "bars.png").string(), ""});
    Section tables{"tables", "Tables", {"Numbers right-aligned in tabular figures."}, {}, {}};
    tables.tables.push_back({"Hours per plan",
                             {"plan", "hours needed", "interval", "note"},
                             {{"outline", "12.4", "10.1 to 15.0", "measured"},
                              {"grade", "131.0", "98.2 to 180.7", "extrapolated"},
                              {"presence", "-", "-", "never reaches the target"}},
                             {false, true, false, false}});
    document.sections = {figures, tables};
    document.generated_by = "frugal sample report, written by make_sample_report";
    const fs::path html = folder / "report.html";
    frugal::report::write_html_report(document, html.string());
    std::cout << html.string() << "\n";
  } catch (const std::exception& error) {
    std::cerr << "make_sample_report: " << error.what() << "\n";
    return 1;
  }
  return 0;
}

#include "experiments/report/html_report.h"

#include <cctype>
#include <cstddef>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "experiments/report/base64.h"
#include "phantoms/image.h"
#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::report {
namespace {

std::string escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (const char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

std::string read_figure_file(const std::string& path) {
  require_regular_file(path, "a figure or CSV file for the report");
  std::ifstream in(path, std::ios::binary);
  if (!in) throw UserError(path + ": cannot be opened for reading");
  std::ostringstream bytes;
  bytes << in.rdbuf();
  if (in.bad()) throw UserError(path + ": cannot be read");
  return bytes.str();
}

bool starts_with(const std::string& text, std::size_t at, const char* prefix) {
  return text.compare(at, std::char_traits<char>::length(prefix), prefix) == 0;
}

// Where the root <svg element starts, past a byte-order mark, the XML declaration, processing
// instructions, comments and a doctype (whose internal subset may hold '>' inside brackets).
std::size_t root_element_start(const std::string& svg, const std::string& path) {
  std::size_t i = starts_with(svg, 0, "\xEF\xBB\xBF") ? 3 : 0;
  while (true) {
    while (i < svg.size() && std::isspace(static_cast<unsigned char>(svg[i]))) ++i;
    std::size_t end = std::string::npos;
    if (starts_with(svg, i, "<?")) {
      end = svg.find("?>", i);
      if (end != std::string::npos) end += 2;
    } else if (starts_with(svg, i, "<!--")) {
      end = svg.find("-->", i);
      if (end != std::string::npos) end += 3;
    } else if (starts_with(svg, i, "<!")) {
      int brackets = 0;
      for (std::size_t j = i + 2; j < svg.size(); ++j) {
        if (svg[j] == '[') ++brackets;
        if (svg[j] == ']') --brackets;
        if (svg[j] == '>' && brackets == 0) {
          end = j + 1;
          break;
        }
      }
    } else if (starts_with(svg, i, "<svg") && i + 4 < svg.size() &&
               (std::isspace(static_cast<unsigned char>(svg[i + 4])) || svg[i + 4] == '>')) {
      return i;
    } else {
      throw UserError(path + ": not an SVG file (expected the <svg> element after the XML declaration)");
    }
    if (end == std::string::npos) throw UserError(path + ": not an SVG file (an unterminated declaration or comment)");
    i = end;
  }
}

// The name of the attribute whose value starts with the quote at `quote`, or "" when the quote is
// not an attribute value.
std::string attribute_name(const std::string& text, std::size_t quote) {
  std::size_t k = quote;
  while (k > 0 && std::isspace(static_cast<unsigned char>(text[k - 1]))) --k;
  if (k == 0 || text[k - 1] != '=') return "";
  --k;
  while (k > 0 && std::isspace(static_cast<unsigned char>(text[k - 1]))) --k;
  const std::size_t end = k;
  while (k > 0 && (std::isalnum(static_cast<unsigned char>(text[k - 1])) || text[k - 1] == ':' || text[k - 1] == '-' ||
                   text[k - 1] == '_'))
    --k;
  return text.substr(k, end - k);
}

std::string replace_all(std::string text, const std::string& from, const std::string& to) {
  for (std::size_t at = text.find(from); at != std::string::npos; at = text.find(from, at + to.size()))
    text.replace(at, from.size(), to);
  return text;
}

// Several figures share one HTML document, and drawing libraries number their ids the same way in
// every file (glyph0-1, clip1, ...): each figure's ids get their own prefix so that one figure's
// <use> never draws another's glyph. References that leave the file are refused.
std::string attribute_value(const std::string& name, const std::string& value, const std::string& prefix,
                            const std::string& path) {
  if (name == "id") return prefix + value;
  if (name == "href" || name == "xlink:href") {
    if (!value.empty() && value[0] == '#') return "#" + prefix + value.substr(1);
    if (value.compare(0, 5, "data:") == 0) return value;
    throw UserError(path + ": refers to '" + value + "' outside the file; a report figure must be self-contained");
  }
  return replace_all(replace_all(value, "url(#", "url(#" + prefix), "url('#", "url('#" + prefix);
}

// The SVG file as an element to place in HTML: the root <svg> element only, with its ids
// prefixed, labelled for screen readers, and a viewBox added when it has a size but none, so that
// CSS can scale it to the column width.
std::string inline_svg(const std::string& file, const std::string& prefix, const std::string& label,
                       const std::string& path) {
  const std::size_t begin = root_element_start(file, path);
  const std::size_t close = file.rfind("</svg>");
  if (close == std::string::npos || close < begin) throw UserError(path + ": not an SVG file (no closing </svg>)");
  const std::string svg = file.substr(begin, close + 6 - begin);

  std::string out;
  out.reserve(svg.size() + svg.size() / 8);
  std::size_t i = 0;
  bool root = true;
  while (i < svg.size()) {
    if (svg[i] != '<') {
      out += svg[i++];
      continue;
    }
    const char* shut = starts_with(svg, i, "<!--") ? "-->" : starts_with(svg, i, "<![CDATA[") ? "]]>" : nullptr;
    if (shut != nullptr) {  // copied as they are
      const std::size_t end = svg.find(shut, i);
      if (end == std::string::npos) throw UserError(path + ": not an SVG file (an unterminated comment or CDATA)");
      const std::size_t next = end + std::char_traits<char>::length(shut);
      out += svg.substr(i, next - i);
      i = next;
      continue;
    }
    if (starts_with(svg, i, "<script") || starts_with(svg, i, "<foreignObject"))
      throw UserError(path + ": an SVG figure with a script or foreign content; a report embeds static figures only");
    std::size_t j = i + 1;
    std::string tag = "<";
    while (j < svg.size() && svg[j] != '>') {
      if (svg[j] != '"' && svg[j] != '\'') {
        tag += svg[j++];
        continue;
      }
      const char quote = svg[j];
      const std::size_t end = svg.find(quote, j + 1);
      if (end == std::string::npos) throw UserError(path + ": not an SVG file (an unterminated attribute value)");
      const std::string name = attribute_name(svg, j);
      if (name.compare(0, 2, "on") == 0)
        throw UserError(path + ": an SVG figure with an event handler ('" + name +
                        "'); a report embeds static figures only");
      tag += quote + attribute_value(name, svg.substr(j + 1, end - j - 1), prefix, path) + quote;
      j = end + 1;
    }
    if (root) {
      root = false;
      std::string extra = " role=\"img\" aria-label=\"" + escape(label) + "\"";
      const auto number = [&](const char* attribute) -> std::string {
        const std::size_t at = tag.find(std::string(" ") + attribute + "=\"");
        if (at == std::string::npos) return "";
        const std::size_t start = at + std::char_traits<char>::length(attribute) + 3;
        std::string value = tag.substr(start, tag.find('"', start) - start);
        if (value.size() > 2 && value.compare(value.size() - 2, 2, "px") == 0) value.resize(value.size() - 2);
        const bool plain = !value.empty() && value.find_first_not_of("0123456789.") == std::string::npos;
        return plain ? value : "";
      };
      const std::string width = number("width");
      const std::string height = number("height");
      if (tag.find("viewBox=") == std::string::npos && !width.empty() && !height.empty())
        extra += " viewBox=\"0 0 " + width + " " + height + "\"";
      tag.insert(4, extra);
    }
    out += tag;
    if (j < svg.size()) out += '>';
    i = j + 1;
  }
  return out;
}

std::string file_name(const std::string& path) { return std::filesystem::path(path).filename().string(); }

std::string figure_html(const FigureRef& figure, std::size_t number) {
  FRUGAL_CHECK(!figure.svg_path.empty() || !figure.png_path.empty());
  const std::string label = "Figure " + std::to_string(number) + ". " + figure.title;
  std::string out =
      "<figure class=\"figure\" id=\"figure-" + std::to_string(number) + "\">\n<div class=\"figure-image\">";
  if (!figure.svg_path.empty()) {
    const std::string prefix = "f" + std::to_string(number) + "-";
    out += inline_svg(read_figure_file(figure.svg_path), prefix, label, figure.svg_path);
  } else {
    out += "<img alt=\"" + escape(label) + "\" src=\"data:image/png;base64," +
           base64_encode(read_figure_file(figure.png_path)) + "\">";
  }
  out += "</div>\n<figcaption><span class=\"figure-title\">" + escape(label) + "</span>";
  if (!figure.caption.empty()) out += " " + escape(figure.caption);
  if (!figure.csv_path.empty()) {
    const std::string name = file_name(figure.csv_path);
    out += " <a class=\"data-link\" download=\"" + escape(name) + "\" href=\"data:text/csv;base64," +
           base64_encode(read_figure_file(figure.csv_path)) + "\">The plotted numbers (" + escape(name) + ")</a>";
  }
  return out + "</figcaption>\n</figure>\n";
}

std::string table_html(const Table& table) {
  const auto cell_class = [&](std::size_t column) {
    return column < table.numeric.size() && table.numeric[column] ? " class=\"num\"" : "";
  };
  std::string out = "<div class=\"table-frame\"><table>";
  if (!table.caption.empty()) out += "<caption>" + escape(table.caption) + "</caption>";
  if (!table.header.empty()) {
    out += "\n<thead><tr>";
    for (std::size_t c = 0; c < table.header.size(); ++c)
      out += std::string("<th scope=\"col\"") + cell_class(c) + ">" + escape(table.header[c]) + "</th>";
    out += "</tr></thead>";
  }
  out += "\n<tbody>\n";
  for (const std::vector<std::string>& row : table.rows) {
    out += "<tr>";
    for (std::size_t c = 0; c < row.size(); ++c)
      out += std::string("<td") + cell_class(c) + ">" + escape(row[c]) + "</td>";
    out += "</tr>\n";
  }
  return out + "</tbody></table></div>\n";
}

std::string cautions_box(const ReportDocument& document, const std::string& id, const char* heading) {
  std::string out =
      "<aside class=\"cautions\" id=\"" + id + "\" aria-label=\"Cautions\">\n<h2>" + heading + "</h2>\n<ul>\n";
  for (const std::string& caution : document.cautions) out += "<li>" + escape(caution) + "</li>\n";
  return out + "</ul>\n</aside>\n";
}

const char* const kStyle = R"css(
:root { --ink: #202124; --quiet: #5b5e63; --rule: #d5d6d8; --answer: #2e5a4f; --answer-ground: #f1f4f2;
        --caution: #8c5a12; --caution-ground: #fdf7ec; }
* { box-sizing: border-box; }
html { font-size: 100%; }
body { margin: 0 auto; padding: 1.5rem 1.25rem 3rem; max-width: 60rem; color: var(--ink); background: #fff;
       font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "DejaVu Sans", "Liberation Sans",
                    Arial, sans-serif;
       font-size: 1rem; line-height: 1.55; }
h1 { font-size: 1.75rem; line-height: 1.25; margin: 0.5rem 0 1rem; }
h2 { font-size: 1.3rem; line-height: 1.3; margin: 2.25rem 0 0.75rem; padding-bottom: 0.25rem;
     border-bottom: 1px solid var(--rule); }
p { margin: 0 0 0.9rem; max-width: 42rem; }
a { color: #1d4f7a; }
.answer { margin: 0 0 0.5rem; padding: 0.9rem 1.1rem; max-width: none; font-size: 1.2rem; font-weight: 600;
          background: var(--answer-ground); border-left: 0.35rem solid var(--answer); }
.answer-details { margin: 0 0 1.25rem; padding: 0 0 0 1.45rem; color: var(--quiet); }
.cautions { margin: 1.25rem 0; padding: 0.75rem 1.1rem; background: var(--caution-ground);
            border: 2px solid var(--caution); border-radius: 0.25rem; }
.cautions h2 { margin: 0 0 0.4rem; padding: 0; border: 0; font-size: 1.05rem; color: var(--caution); }
.cautions ul { margin: 0; padding-left: 1.25rem; }
.contents { margin: 1.5rem 0; }
.contents h2 { font-size: 1.05rem; margin: 0 0 0.4rem; border: 0; }
.contents ol { margin: 0; padding-left: 1.5rem; }
.figure { margin: 1.75rem 0; }
.figure-image svg, .figure-image img { display: block; max-width: 100%; height: auto; }
figcaption { margin-top: 0.5rem; font-size: 0.92rem; color: var(--quiet); max-width: 46rem; }
.figure-title { font-weight: 600; color: var(--ink); }
.data-link { white-space: nowrap; }
.table-frame { margin: 1.25rem 0; overflow-x: auto; }
table { border-collapse: collapse; font-size: 0.92rem; }
caption { caption-side: top; text-align: left; font-weight: 600; padding-bottom: 0.4rem; }
th, td { padding: 0.3rem 0.65rem; text-align: left; vertical-align: top; border-bottom: 1px solid var(--rule); }
thead th { border-bottom: 2px solid var(--ink); }
.num { text-align: right; font-variant-numeric: tabular-nums lining-nums; white-space: nowrap; }
footer { margin-top: 2.5rem; padding-top: 0.5rem; border-top: 1px solid var(--rule); font-size: 0.85rem;
         color: var(--quiet); }
@media print {
  @page { margin: 16mm 14mm; }
  body { max-width: none; padding: 0; font-size: 10.5pt; }
  a { color: inherit; text-decoration: none; }
  .data-link { display: none; }
  .answer { background: none; }
  .cautions { background: none; }
  .table-frame { overflow: visible; }
  h2 { break-after: avoid; }
  .figure, .table-frame, .cautions, tr { break-inside: avoid; }
}
)css";

// Counts the figures that rendered (an inline SVG with a non-empty box, or a decoded image) once
// everything has loaded; the browser check reads the two attributes from the dumped DOM.
const char* const kScript = R"js(
window.addEventListener('load', function () {
  var figures = document.querySelectorAll('figure.figure');
  var loaded = 0;
  for (var i = 0; i < figures.length; ++i) {
    var svg = figures[i].querySelector('svg');
    var image = figures[i].querySelector('img');
    if (svg) {
      var box = svg.getBoundingClientRect();
      if (box.width > 0 && box.height > 0) loaded += 1;
    } else if (image && image.complete && image.naturalWidth > 0) {
      loaded += 1;
    }
  }
  document.body.setAttribute('data-figures-total', String(figures.length));
  document.body.setAttribute('data-figures-loaded', String(loaded));
});
)js";

}  // namespace

void write_html_report(const ReportDocument& document, const std::string& path) {
  require_writable_output(path, OutputKind::file, "a new or regular file for the report");
  std::string html =
      "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
      "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
      // Everything is inside the file: the browser may load nothing from anywhere.
      "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
      "style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:\">\n"
      "<title>" +
      escape(document.title) + "</title>\n<style>" + kStyle + "</style>\n</head>\n<body>\n";
  html +=
      "<header>\n<h1>" + escape(document.title) + "</h1>\n<p class=\"answer\">" + escape(document.answer) + "</p>\n";
  if (!document.answer_details.empty()) {
    html += "<ul class=\"answer-details\">\n";
    for (const std::string& line : document.answer_details) html += "<li>" + escape(line) + "</li>\n";
    html += "</ul>\n";
  }
  html += "</header>\n";
  const bool cautions = !document.cautions.empty();
  if (cautions) html += cautions_box(document, "cautions", "Before you use these numbers");
  if (!document.sections.empty()) {
    html += "<nav class=\"contents\" aria-label=\"Contents\">\n<h2>Contents</h2>\n<ol>\n";
    for (const Section& section : document.sections)
      html += "<li><a href=\"#" + escape(section.id) + "\">" + escape(section.heading) + "</a></li>\n";
    if (cautions) html += "<li><a href=\"#cautions-again\">Cautions</a></li>\n";
    html += "</ol>\n</nav>\n";
  }
  html += "<main>\n";
  std::size_t figure_number = 0;
  for (const Section& section : document.sections) {
    html += "<section id=\"" + escape(section.id) + "\">\n<h2>" + escape(section.heading) + "</h2>\n";
    for (const std::string& paragraph : section.paragraphs) html += "<p>" + escape(paragraph) + "</p>\n";
    for (const FigureRef& figure : section.figures) html += figure_html(figure, ++figure_number);
    for (const Table& table : section.tables) html += table_html(table);
    html += "</section>\n";
  }
  html += "</main>\n";
  if (cautions) html += cautions_box(document, "cautions-again", "Cautions");
  html +=
      "<footer>" + escape(document.generated_by) + "</footer>\n<script>" + kScript + "</script>\n</body>\n</html>\n";

  WholeFile file(path);
  file.write(html);
  file.commit();
}

}  // namespace frugal::report

#pragma once
// The content of a report as plain values: the answer first, cautions, then sections of
// paragraphs, figures and tables. html_report.h turns it into one self-contained file; every
// string is plain text (the writer escapes it), never markup.

#include <string>
#include <vector>

namespace frugal::report {

struct Table {
  std::string caption;
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
  std::vector<bool> numeric;  // per column: right-aligned, tabular figures; missing entries are text
};

struct FigureRef {
  std::string title;
  std::string caption;
  std::string svg_path;  // embedded as inline SVG when set
  std::string png_path;  // embedded as a data: image when svg_path is empty
  std::string csv_path;  // the plotted numbers, embedded as a download link; optional
};

struct Section {
  std::string id;  // the table of contents links to it; unique within the document
  std::string heading;
  std::vector<std::string> paragraphs;
  std::vector<FigureRef> figures;
  std::vector<Table> tables;
};

struct ReportDocument {
  std::string title;                        // e.g. "Which labels, how many hours: ageing-cohort"
  std::string answer;                       // the one-sentence recommendation, shown first
  std::vector<std::string> answer_details;  // short lines under it
  std::vector<std::string> cautions;        // a box near the top, repeated at the end
  std::vector<Section> sections;
  std::string generated_by;  // footer: tool version, study hash, date
};

}  // namespace frugal::report

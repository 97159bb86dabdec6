#pragma once
// One self-contained HTML file from a ReportDocument: inline style, every figure embedded (inline
// SVG, or a PNG as a data: image) with its CSV as a data: download link, no reference to anything
// outside the file, so it opens from a USB stick without a network. A small inline script marks
// on <body> how many figures rendered (data-figures-total, data-figures-loaded), which the browser
// check in tests/python/report_render_test.py reads.

#include <string>

#include "experiments/report/report_document.h"

namespace frugal::report {

// Reads every figure file first and writes `path` atomically (PATH.partial, then rename).
// Throws UserError naming a figure file that is missing or unreadable, an SVG that refers to
// anything outside itself or carries a script, or an output path that cannot be written; in
// every such case nothing is written.
void write_html_report(const ReportDocument& document, const std::string& path);

}  // namespace frugal::report

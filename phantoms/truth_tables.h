#pragma once
// The truth of a phantom set as CSV: one row per subject (truth.csv) and one row per drawn
// object (objects.csv). Column meanings: docs/phantom-set.md.

#include <string>

#include "phantoms/subject.h"

namespace frugal {

// First line of every CSV frugal writes: tool and schema version, as a comment.
std::string csv_version_comment(const std::string& table);

std::string truth_csv_header();
std::string truth_csv_row(const SubjectTruth& truth, const std::string& image_file, const std::string& labels_file);
std::string objects_csv_header();
std::string objects_csv_rows(const SubjectTruth& truth);

}  // namespace frugal

#pragma once
// Reads a label set that `frugal labels` wrote (labels.csv, clicks.csv, masks/*.nii.gz and
// manifest.json; docs/labels.md) back into Labels, so that a learner can train on bought labels.
// Every problem a user can cause (a missing or unfinished set, a bad cell, a missing or
// non-binary mask) throws UserError naming the file, the line and what is allowed.

#include <cstdint>
#include <string>
#include <vector>

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "phantoms/phantom_set_reader.h"

namespace frugal {

struct LabelSetReadOptions {
  int rater = -1;          // keep only this panel member (0-based); -1 keeps every rater
  bool read_masks = true;  // false: partial masks and outlines keep an empty mask (costs only)
  std::string validate() const;
};

// What manifest.json says about the set.
struct LabelSetInfo {
  std::string folder;
  LabelKind kind = LabelKind::count;
  CountScope scope = CountScope::image;  // counts only
  int raters = 1;                        // panel size
  int first = 0;
  int count = 0;  // subjects
  std::uint64_t seed = 0;
  double annotator_hours = 0.0;  // the whole set, every rater (manifest total)
  std::string scenario_file;
  std::string rater_file;
  RaterOptions rater;         // the resolved rater model that made the labels
  std::string scenario_json;  // the resolved scenario, as compact JSON
};

struct LabelSet {
  LabelSetInfo info;
  std::vector<Label> labels;       // labels.csv order, after the rater filter
  double annotator_seconds = 0.0;  // summed cost of the labels kept
};

// Throws UserError as described above; a folder without manifest.json is an unfinished set.
LabelSet read_label_set(const std::string& folder, const LabelSetReadOptions& options = {});

// Labels describe the subjects of (scenario, seed): empty when the phantom set was drawn from the
// same resolved scenario and seed (or its manifest is unknown), else a message saying what differs.
// Every label's subject and rescan must also be a row of the set (UserError naming both folders).
std::string check_label_set_origin(const LabelSetInfo& labels, const PhantomSetIndex& phantoms);
void check_labels_in_phantom_set(const LabelSet& labels, const PhantomSetIndex& phantoms);

}  // namespace frugal

#pragma once
// Reads the index of a phantom set that `frugal phantoms` wrote (truth.csv; docs/phantom-set.md):
// one row per subject and acquisition with its truth quantities and the paths of its image and
// label image. Images are read on demand with read_nifti_image / read_nifti_labels, so a large
// set costs no memory until it is used.

#include <cstddef>
#include <cstdint>
#include <map>
#include <string>
#include <utility>
#include <vector>

namespace frugal {

struct TruthRow {
  int subject = 0;
  int rescan = 0;
  std::string family;   // "streaks" or "voids"
  std::string pattern;  // voids pattern, "none" for streaks
  double count = 0.0;   // lesions placed (streaks), painted balls (voids)
  double burden_mm3 = 0.0;
  double affected_fraction = 0.0;
  double densitometry = 0.0;  // NaN when the table says NA (streaks)
  double confounder = 0.0;    // NaN when the column is absent
  std::string image_path;     // the set folder joined with truth.csv's `image`
  std::string labels_path;    // the set folder joined with truth.csv's `labels`
  int line = 0;               // line in truth.csv, for messages
};

// What the set's manifest.json says about how it was drawn (absent for a hand-made index).
struct PhantomSetOrigin {
  bool known = false;  // false when the folder has no readable manifest.json
  std::uint64_t seed = 0;
  std::string scenario_json;  // the resolved scenario, as compact JSON
};

class PhantomSetIndex {
 public:
  // Throws UserError when a (subject, rescan) pair appears twice.
  PhantomSetIndex(std::string folder, std::string truth_file, std::vector<TruthRow> rows, PhantomSetOrigin origin = {});

  const std::string& folder() const { return folder_; }
  const std::string& truth_file() const { return truth_file_; }
  const std::vector<TruthRow>& rows() const { return rows_; }
  const PhantomSetOrigin& origin() const { return origin_; }
  // The row of (subject, rescan), or nullptr.
  const TruthRow* find(int subject, int rescan) const;

 private:
  std::string folder_;
  std::string truth_file_;
  std::vector<TruthRow> rows_;
  PhantomSetOrigin origin_;
  std::map<std::pair<int, int>, std::size_t> positions_;
};

// Throws UserError when the folder or its truth.csv is missing or a cell is not what
// docs/phantom-set.md describes (naming the file, line and column).
PhantomSetIndex read_phantom_set(const std::string& folder);

}  // namespace frugal

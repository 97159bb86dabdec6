#pragma once
// A generated subject: the image and its exact truth. Truth is everything the phantom knows and
// no rater or learner may see directly; corruptors derive labels from it.

#include <array>
#include <cstdint>
#include <string>
#include <vector>

#include "phantoms/image.h"
#include "phantoms/scenario.h"

namespace frugal {

// Values of the truth label image. Lesion and distractors are distinct so that nothing that
// reads the mask can confuse a look-alike with a target.
enum LabelCode : std::uint8_t {
  kOutside = 0,         // outside the field (air around the head or body)
  kField = 1,           // inside the field, no object
  kLesion = 2,          // target: elongated lesion (streaks) or low-density region (voids)
  kDotDistractor = 3,   // round bright dot (streaks)
  kLineDistractor = 4,  // long thin vessel-like line (streaks)
};

enum class ObjectKind { lesion, dot_distractor, line_distractor };
std::string to_string(ObjectKind kind);

// One drawn object, in world millimetres of the (possibly rescanned) image.
struct ObjectRecord {
  int id = 0;  // 1-based within the subject
  ObjectKind kind = ObjectKind::lesion;
  std::array<double, 3> centre_mm{};
  std::array<double, 3> direction{1.0, 0.0, 0.0};  // unit long axis
  double length_mm = 0.0;                          // full long-axis length
  double width_mm = 0.0;                           // full short-axis width
  double contrast = 0.0;                           // added intensity before bias, WM = 1
  double volume_mm3 = 0.0;       // analytic volume of the continuous object (area x slice in 2D)
  double mask_volume_mm3 = 0.0;  // volume of the voxels labelled with this object
  bool in_reference_slice = false;
};

struct SubjectTruth {
  int subject = 0;
  int rescan = 0;
  Family family = Family::streaks;
  double target = 0.0;             // the drawn target: lesion count (streaks), extent or densitometry (voids)
  int count = 0;                   // streaks: lesions in the image; voids: holes or spaces painted
  int count_reference_slice = 0;   // lesions whose labelled voxels touch the reference slice
  int reference_slice = 0;
  double burden_mm3 = 0.0;         // summed analytic lesion volume (streaks); region volume (voids)
  double affected_fraction = 0.0;  // lesion voxels / field voxels of the label image
  std::string pattern = "none";    // voids: spatial pattern of the low-density region
  double densitometry = -1.0;      // voids: fraction of field voxels strictly below threshold_hu
  double confounder = 1.0;         // the nuisance factor applied (1 or 0 HU when none)
  double field_volume_mm3 = 0.0;
  // voids: the vessel and airway tree inside the field, by partial-volume share (voids.tree; 0
  // without one): all of it (vessels, airway walls and lumen) and its air-filled lumen alone.
  double tree_volume_mm3 = 0.0;
  double tree_air_volume_mm3 = 0.0;
  int objects_dropped = 0;         // drawn objects that could not be placed apart
  std::vector<ObjectRecord> objects;
};

struct Subject {
  FloatImage image;
  LabelImage labels;
  SubjectTruth truth;
};

}  // namespace frugal

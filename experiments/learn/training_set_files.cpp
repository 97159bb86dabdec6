#include "experiments/learn/training_set_files.h"

#include <map>
#include <set>
#include <utility>

#include "phantoms/nifti_io.h"
#include "phantoms/user_error.h"

namespace frugal::learn {

FileTrainingSet training_set_from_files(const PhantomSetIndex& phantoms, std::vector<LabelSet>& label_sets,
                                        const TrainOptions& options) {
  FileTrainingSet out;
  if (is_classical(options.strategy)) {
    if (!phantoms.rows().empty()) out.set.add_unlabelled(read_nifti_image(phantoms.rows().front().image_path));
    return out;
  }
  std::map<std::pair<int, int>, FloatImage> images;
  std::set<int> labelled_subjects;
  const auto image_of = [&](int subject, int rescan) -> const FloatImage& {
    const auto key = std::make_pair(subject, rescan);
    auto found = images.find(key);
    if (found == images.end())
      found = images.emplace(key, read_nifti_image(phantoms.find(subject, rescan)->image_path)).first;
    return found->second;
  };
  for (LabelSet& labels : label_sets)
    for (Label& label : labels.labels) {
      labelled_subjects.insert(label.subject);
      const FloatImage& image = image_of(label.subject, label.rescan);
      if (!label.mask.empty() && label.mask.shape() != image.shape())
        throw UserError(labels.info.folder + ": the mask of subject " + std::to_string(label.subject) + ", rater " +
                        std::to_string(label.rater) + " has another grid than its image " +
                        phantoms.find(label.subject, label.rescan)->image_path +
                        "; the labels were made at another image size (--dims or geometry differ)");
      out.set.add(image, std::move(label));
    }
  images.clear();
  if (options.consistency_weight > 0.0)
    for (const TruthRow& row : phantoms.rows())
      if (labelled_subjects.count(row.subject) == 0) {
        out.set.add_unlabelled(read_nifti_image(row.image_path));
        ++out.unlabelled;
      }
  return out;
}

FieldOptions field_for_phantom_set(const PhantomSetIndex& phantoms) {
  std::set<std::string> families;
  for (const TruthRow& row : phantoms.rows()) families.insert(row.family);
  if (families.empty()) return FieldOptions{};
  if (families.size() > 1)
    throw UserError(phantoms.truth_file() +
                    ": the phantom set mixes streaks and voids images, which have different fields; give the field "
                    "explicitly (train.field: low, high, drop_border_connected)");
  return default_field_for_family(*families.begin());
}

}  // namespace frugal::learn

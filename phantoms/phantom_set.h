#pragma once
// Writes a phantom set to a folder: per subject one NIfTI image and one NIfTI label image, plus
// truth.csv, objects.csv, scenario.resolved.yaml, preview.png and manifest.json. Subjects are
// generated on several threads and streamed to disk in order, so memory does not grow with the
// count and the files do not depend on the thread count.

#include <cstdint>
#include <functional>
#include <string>

#include "phantoms/scenario.h"

namespace frugal {

// Checks shared by every command that writes one file set per range of subjects.
std::string validate_subject_range(const std::string& out_dir, int count, int first, int threads);

struct PhantomSetOptions {
  std::string out_dir;
  int count = 10;
  int first = 0;        // index of the first subject, so a set can be extended or sharded
  int rescans = 0;      // extra acquisitions per subject (same anatomy, new pose and noise)
  std::uint64_t seed = 1;
  int threads = 1;
  int preview_tiles = 16;
  bool overwrite = false;  // allow a folder that already holds a finished set

  std::string validate() const;
};

struct PhantomSetSummary {
  int subjects = 0;
  int files = 0;
  double seconds = 0.0;
  std::string manifest_path;
};

// `scenario_file` is only recorded in the manifest. `progress` is called with the number of
// subjects finished, from the calling thread.
PhantomSetSummary write_phantom_set(const ScenarioOptions& scenario, const std::string& scenario_file,
                                    const PhantomSetOptions& options,
                                    const std::function<void(long long)>& progress = {});

}  // namespace frugal

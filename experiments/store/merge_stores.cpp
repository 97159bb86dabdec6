// merge_stores (results_store.h): shards of one study into one new store.

#include <cmath>
#include <filesystem>
#include <map>
#include <utility>

#include "experiments/store/results_store.h"
#include "phantoms/user_error.h"

namespace frugal::store {

namespace {

namespace fs = std::filesystem;

// Equal, with NaN equal to NaN: a metric the data could not give is the same result twice.
bool same(double a, double b) { return a == b || (std::isnan(a) && std::isnan(b)); }

bool same(const MetricRow& a, const MetricRow& b) {
  return a.test_set == b.test_set && a.quantity == b.quantity && a.metric == b.metric && same(a.value, b.value) &&
         same(a.lower, b.lower) && same(a.upper, b.upper) && a.n == b.n && a.note == b.note;
}
bool same(const SubjectPrediction& a, const SubjectPrediction& b) {
  return a.test_set == b.test_set && a.subject == b.subject && a.rescan == b.rescan && a.quantity == b.quantity &&
         same(a.predicted, b.predicted) && same(a.truth, b.truth);
}
bool same(const EpochRow& a, const EpochRow& b) {
  return a.epoch == b.epoch && same(a.training_loss, b.training_loss) && same(a.validation_loss, b.validation_loss) &&
         same(a.validation_error, b.validation_error);
}
// `seconds` is the rater model's annotator time, a result, not a timing.
bool same(const LabelCostRow& a, const LabelCostRow& b) {
  return a.part == b.part && a.subject == b.subject && a.rater == b.rater && a.kind == b.kind &&
         same(a.seconds, b.seconds);
}

bool same(const ExampleMap& a, const ExampleMap& b) {
  return a.role == b.role && a.subject == b.subject && a.caption == b.caption && a.scale == b.scale &&
         a.width == b.width && a.height == b.height && a.pixels == b.pixels;
}

template <class Row>
bool same(const std::vector<Row>& a, const std::vector<Row>& b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if (!same(a[i], b[i])) return false;
  return true;
}

// Every column and child row except the seconds_* wall-clock timings, which differ between two
// runs of one deterministic cell.
bool same_results(const CellRecord& a, const CellRecord& b) {
  return a.key == b.key && a.plan == b.plan && a.strategy == b.strategy && same(a.budget, b.budget) &&
         a.budget_unit == b.budget_unit && a.repeat == b.repeat && a.spec_json == b.spec_json && a.status == b.status &&
         a.error == b.error && a.labels_bought == b.labels_bought && same(a.hours_spent, b.hours_spent) &&
         same(a.metrics, b.metrics) && same(a.predictions, b.predictions) && same(a.training_curve, b.training_curve) &&
         same(a.label_costs, b.label_costs) && same(a.example_maps, b.example_maps);
}

bool same_study(const StudyRecord& a, const StudyRecord& b) {
  return a.study_hash == b.study_hash && a.name == b.name && a.resolved_yaml == b.resolved_yaml &&
         a.cells_total == b.cells_total;
}

// Removes what a killed earlier merge into the same name left behind.
void remove_leftovers(const std::string& partial) {
  std::error_code ignored;
  for (const char* suffix : {"", "-wal", "-shm", "-journal"}) fs::remove(partial + suffix, ignored);
}

struct Chosen {
  CellRecord cell;
  std::string source;  // input file it was taken from
};

}  // namespace

void merge_stores(const std::vector<std::string>& inputs, const std::string& output) {
  if (inputs.empty()) throw UserError("merge: no input results stores; allowed: one or more files");
  std::error_code error;
  if (fs::exists(output, error) || fs::is_symlink(output, error))
    throw UserError(output + ": exists; allowed: a new file");

  StudyRecord study;
  std::string study_source;
  std::map<std::string, Chosen> chosen;
  for (const std::string& input : inputs) {
    const ResultsStore store = ResultsStore::open_existing(input);
    const StudyRecord record = store.study();
    if (study_source.empty()) {
      study = record;
      study_source = input;
    } else if (!same_study(record, study)) {
      throw UserError(input + ": holds study '" + record.name + "' (hash " + record.study_hash + "), but " +
                      study_source + " holds study '" + study.name + "' (hash " + study.study_hash +
                      "); merge only shards of one study");
    }
    for (CellRecord& cell : store.cells()) {
      const auto found = chosen.find(cell.key);
      if (found == chosen.end()) {
        std::string key = cell.key;
        chosen.emplace(std::move(key), Chosen{std::move(cell), input});
        continue;
      }
      Chosen& earlier = found->second;
      if (earlier.cell.status != cell.status) {
        // A shard run again after a failure: the finished record is the result.
        if (cell.status == "done") earlier = Chosen{std::move(cell), input};
        continue;
      }
      if (!same_results(earlier.cell, cell))
        throw UserError("cell " + cell.key + ": " + earlier.source + " and " + input +
                        " hold different results for it; merge shards whose cells were run once, or remove one "
                        "of the two files");
    }
  }

  // Built under a temporary name, so a killed merge leaves nothing under `output`.
  const std::string partial = output + ".partial";
  remove_leftovers(partial);
  try {
    {
      ResultsStore merged = ResultsStore::open_for_study(partial, study);
      for (const auto& [key, entry] : chosen) merged.write_cell(entry.cell);
    }  // closing the last connection folds the WAL into the file, so the file alone is the store
    fs::rename(partial, output, error);
    if (error) throw UserError(output + ": cannot move the merged store into place: " + error.message());
  } catch (...) {
    remove_leftovers(partial);
    throw;
  }
}

}  // namespace frugal::store

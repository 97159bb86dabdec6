#include "experiments/validate/cell_archive.h"

#include <nlohmann/json.hpp>
#include <utility>

#include "experiments/study/cell.h"
#include "frugal_version.h"
#include "phantoms/user_error.h"

namespace frugal::validation {

CellArchive::CellArchive(const std::string& store_path, const ValidationOptions& options) {
  // What a cell's numbers depend on beyond its own spec: the thread count (cell keys leave it
  // out) and the program that trained it.
  const nlohmann::json run = {{"command", "validate"},
                              {"size", to_string(options.size)},
                              {"seed", options.seed},
                              {"threads", options.threads},
                              {"tool_version", kVersion}};
  store::StudyRecord record;
  record.name = "validate-" + to_string(options.size) + "-seed" + std::to_string(options.seed) + "-threads" +
                std::to_string(options.threads);
  record.study_hash = study::sha256_hex(run.dump());
  record.resolved_yaml = run.dump(2) + "\n";  // JSON is YAML
  record.tool_version = kVersion;
  record.cells_total = 0;  // a validation run's cells are known only as its phenomena run
  store_ = std::make_unique<store::ResultsStore>(store::ResultsStore::open_for_study(store_path, record));
  for (study::CellResult& cell : store_->cells()) {
    if (cell.status != "done") continue;
    const std::string key = cell.key;
    cells_.emplace(key, std::move(cell));
  }
  resumed_ = static_cast<int>(cells_.size());
}

const study::CellResult* CellArchive::find(const std::string& key) const {
  const auto found = cells_.find(key);
  return found == cells_.end() ? nullptr : &found->second;
}

const study::CellResult& CellArchive::keep(study::CellResult cell) {
  FRUGAL_CHECK(cell.status == "done" && cells_.count(cell.key) == 0);
  if (store_) store_->write_cell(cell);
  const std::string key = cell.key;
  return cells_.emplace(key, std::move(cell)).first->second;
}

}  // namespace frugal::validation

#pragma once
// The cells a validation run has measured, so that none is trained twice: held in memory for the
// run (two phenomena may share a cell), and written to a results store when one is given, one
// transaction per cell, so a killed run loses at most the cell it was training and a rerun with
// the same store resumes from the cells already there.

#include <map>
#include <memory>
#include <string>

#include "experiments/store/results_store.h"
#include "experiments/study/cell_runner.h"
#include "experiments/validate/validation.h"

namespace frugal::validation {

class CellArchive {
 public:
  CellArchive() = default;  // memory only
  // Opens or creates the store at `store_path` for this run's size, seed and thread count (a
  // store made with another refuses to open: its cells would give other numbers) and reads back
  // its finished cells. Throws UserError naming the file.
  CellArchive(const std::string& store_path, const ValidationOptions& options);

  // The finished cell of this key, or nullptr.
  const study::CellResult* find(const std::string& key) const;
  // Keeps a finished cell (and writes it to the store); returns the kept copy.
  const study::CellResult& keep(study::CellResult cell);
  // Finished cells the store held when it was opened (0 for a new store or memory only).
  int resumed() const { return resumed_; }

 private:
  std::unique_ptr<store::ResultsStore> store_;
  std::map<std::string, study::CellResult> cells_;
  int resumed_ = 0;
};

}  // namespace frugal::validation

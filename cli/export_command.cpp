// frugal export: a results store as tidy CSV tables or one JSON document, for pandas or R.

#include <CLI/CLI.hpp>
#include <cstdio>
#include <memory>
#include <string>

#include "cli/commands.h"
#include "experiments/store/results_store.h"
#include "phantoms/user_error.h"

namespace frugal::cli {
namespace {

struct ExportArguments {
  std::string store;
  std::string csv;
  std::string json;
};

void export_store(const ExportArguments& arguments) {
  if (arguments.csv.empty() == arguments.json.empty())
    throw UserError("give exactly one of --csv DIR and --json FILE");
  const store::ResultsStore results = store::ResultsStore::open_existing(arguments.store);
  if (!arguments.csv.empty()) {
    store::export_csv(results, arguments.csv);
    std::printf("wrote cells.csv, metrics.csv, predictions.csv, training_curves.csv and label_costs.csv to %s\n",
                arguments.csv.c_str());
  } else {
    store::export_json(results, arguments.json);
    std::printf("wrote %s\n", arguments.json.c_str());
  }
}

}  // namespace

void add_export_command(CLI::App& app) {
  auto arguments = std::make_shared<ExportArguments>();
  CLI::App* command = app.add_subcommand(
      "export", "Export a results store as tidy CSV tables (one row per observation) or one JSON document "
                "(results_schema/results_store_v1.md).");
  command->add_option("store", arguments->store, "Results store (results.db)")->required();
  command->add_option("--csv", arguments->csv, "Folder to write the CSV tables into");
  command->add_option("--json", arguments->json, "JSON file to write");
  command->callback([arguments] { export_store(*arguments); });
}

}  // namespace frugal::cli

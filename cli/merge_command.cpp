// frugal merge: the shards of one study joined into one results store, exactly.

#include <CLI/CLI.hpp>
#include <cstdio>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "experiments/store/results_store.h"

namespace frugal::cli {
namespace {

struct MergeArguments {
  std::vector<std::string> inputs;
  std::string out;
};

void merge(const MergeArguments& arguments) {
  store::merge_stores(arguments.inputs, arguments.out);
  const store::ResultsStore merged = store::ResultsStore::open_existing(arguments.out);
  const store::StudyRecord study = merged.study();
  std::printf("merged %zu stores of study %s into %s: %zu of %d cells finished\n", arguments.inputs.size(),
              study.name.c_str(), arguments.out.c_str(), merged.finished_keys().size(), study.cells_total);
}

}  // namespace

void add_merge_command(CLI::App& app) {
  auto arguments = std::make_shared<MergeArguments>();
  CLI::App* command = app.add_subcommand(
      "merge", "Merge the results stores of one study's shards into a new store; refuses stores of different "
               "studies (docs/studies.md).");
  command->add_option("stores", arguments->inputs, "Results stores written by frugal run --shard")->required();
  command->add_option("--out", arguments->out, "New results store to write")->required();
  command->callback([arguments] { merge(*arguments); });
}

}  // namespace frugal::cli

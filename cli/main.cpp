// The frugal command line: one subcommand per job, each in its own <name>_command.cpp.

#include <CLI/CLI.hpp>

#include <cstdio>
#include <exception>

#include "cli/commands.h"
#include "frugal_version.h"
#include "phantoms/allocation_tuning.h"
#include "phantoms/user_error.h"

int main(int argc, char** argv) {
  frugal::keep_freed_image_memory();
  CLI::App app{"frugal: plan expert-annotation budgets on synthetic phantoms with exact truth.\n"
               "Results describe synthetic phantoms; they do not validate a method for clinical use."};
  app.set_version_flag("--version", std::string("frugal ") + frugal::kVersion);
  app.require_subcommand(1);
  frugal::cli::add_phantoms_command(app);
  frugal::cli::add_labels_command(app);
  frugal::cli::add_agree_command(app);
  frugal::cli::add_calibrate_command(app);
  frugal::cli::add_train_command(app);
  frugal::cli::add_predict_command(app);
  frugal::cli::add_score_command(app);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& error) {
    return app.exit(error);
  } catch (const frugal::UserError& error) {
    std::fprintf(stderr, "frugal: error: %s\n", error.what());
    return 2;
  } catch (const std::exception& error) {
    std::fprintf(stderr, "frugal: error: %s\n", error.what());
    return 1;
  }
  return 0;
}

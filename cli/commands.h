#pragma once
// Each subcommand registers itself on the application; its callback throws frugal::UserError for
// anything the user can fix.

#include <stdexcept>
#include <string>

namespace CLI {
class App;
}

namespace frugal::cli {

void add_phantoms_command(CLI::App& app);
void add_agree_command(CLI::App& app);
void add_labels_command(CLI::App& app);
void add_calibrate_command(CLI::App& app);
void add_train_command(CLI::App& app);
void add_predict_command(CLI::App& app);
void add_score_command(CLI::App& app);
void add_run_command(CLI::App& app);
void add_merge_command(CLI::App& app);
void add_export_command(CLI::App& app);
void add_plan_command(CLI::App& app);
void add_report_command(CLI::App& app);
void add_demo_command(CLI::App& app);
void add_validate_command(CLI::App& app);

// A command ran, but what it checks did not hold (frugal validate): exit status 3, apart from
// bad input (2) and internal errors (1).
class ChecksFailed : public std::runtime_error {
 public:
  explicit ChecksFailed(const std::string& what) : std::runtime_error(what) {}
};

}  // namespace frugal::cli

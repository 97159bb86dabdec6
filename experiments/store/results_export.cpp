// export_csv and export_json (results_store.h): the store as tidy tables, one row per
// observation, with the cell's factors beside every row so no join is needed
// (results_schema/results_store_v1.md, results_schema/results_export_v1.json).

#include <cmath>
#include <filesystem>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

#include "experiments/store/results_store.h"
#include "experiments/store/results_store_internal.h"
#include "frugal_version.h"
#include "phantoms/csv_table.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::store {

namespace {

namespace fs = std::filesystem;
using ordered_json = nlohmann::ordered_json;

// One field of a tidy row; NaN reals are missing (NA in CSV, null in JSON).
struct Field {
  enum class Type { text, integer, real };
  Type type = Type::text;
  std::string text;
  long long integer = 0;
  double real = 0.0;
};

Field text(const std::string& value) { return {Field::Type::text, value, 0, 0.0}; }
Field integer(int value) { return {Field::Type::integer, {}, value, 0.0}; }
Field real(double value) { return {Field::Type::real, {}, 0, value}; }

struct Table {
  std::string name;  // file stem and JSON key
  std::vector<std::string> columns;
  std::vector<std::vector<Field>> rows;
};

const std::vector<std::string> kFactorColumns = {"cell_key", "plan", "strategy", "budget", "budget_unit", "repeat"};

std::vector<Field> factors(const CellRecord& cell) {
  return {text(cell.key),    text(cell.plan),        text(cell.strategy),
          real(cell.budget), text(cell.budget_unit), integer(cell.repeat)};
}

std::vector<std::string> with_factors(const std::vector<std::string>& columns) {
  std::vector<std::string> all = kFactorColumns;
  all.insert(all.end(), columns.begin(), columns.end());
  return all;
}

template <class Row, class Fields>
void add_rows(Table& table, const CellRecord& cell, const std::vector<Row>& rows, Fields fields) {
  for (const Row& row : rows) {
    std::vector<Field> line = factors(cell);
    for (Field& field : fields(row)) line.push_back(std::move(field));
    table.rows.push_back(std::move(line));
  }
}

// The five tables, in the order of results_store_v1.md; cells' rows follow `cells`.
std::vector<Table> tidy_tables(const std::vector<CellRecord>& cells) {
  Table cell_table{"cells",
                   with_factors({"status", "error", "labels_bought", "hours_spent", "seconds_generate", "seconds_label",
                                 "seconds_train", "seconds_predict", "seconds_score"}),
                   {}};
  Table metrics{
      "metrics", with_factors({"test_set", "quantity", "metric", "value", "lower", "upper", "n", "note"}), {}};
  Table predictions{
      "predictions", with_factors({"test_set", "subject", "rescan", "quantity", "predicted", "truth"}), {}};
  Table curves{"training_curves", with_factors({"epoch", "training_loss", "validation_loss", "validation_error"}), {}};
  Table costs{"label_costs", with_factors({"part", "subject", "rater", "kind", "seconds"}), {}};
  for (const CellRecord& cell : cells) {
    std::vector<Field> row = factors(cell);
    for (Field field : {text(cell.status), text(cell.error), integer(cell.labels_bought), real(cell.hours_spent),
                        real(cell.seconds_generate), real(cell.seconds_label), real(cell.seconds_train),
                        real(cell.seconds_predict), real(cell.seconds_score)})
      row.push_back(std::move(field));
    cell_table.rows.push_back(std::move(row));
    add_rows(metrics, cell, cell.metrics, [](const MetricRow& m) {
      return std::vector<Field>{text(m.test_set), text(m.quantity), text(m.metric), real(m.value),
                                real(m.lower),    real(m.upper),    integer(m.n),   text(m.note)};
    });
    add_rows(predictions, cell, cell.predictions, [](const SubjectPrediction& p) {
      return std::vector<Field>{text(p.test_set), integer(p.subject), integer(p.rescan),
                                text(p.quantity), real(p.predicted),  real(p.truth)};
    });
    add_rows(curves, cell, cell.training_curve, [](const EpochRow& e) {
      return std::vector<Field>{integer(e.epoch), real(e.training_loss), real(e.validation_loss),
                                real(e.validation_error)};
    });
    add_rows(costs, cell, cell.label_costs, [](const LabelCostRow& c) {
      return std::vector<Field>{text(c.part), integer(c.subject), integer(c.rater), text(c.kind), real(c.seconds)};
    });
  }
  std::vector<Table> tables;
  for (Table* table : {&cell_table, &metrics, &predictions, &curves, &costs}) tables.push_back(std::move(*table));
  return tables;
}

// The project's CSV conventions: NA for a missing number, the shortest decimal that reads back
// exactly, RFC 4180 quoting of text holding commas, quotes or line breaks.
std::string csv_value(const Field& field) {
  switch (field.type) {
    case Field::Type::text:
      return csv_field(field.text);
    case Field::Type::integer:
      return std::to_string(field.integer);
    case Field::Type::real:
      return std::isnan(field.real) ? "NA" : exact_decimal(field.real);
  }
  return {};
}

ordered_json json_value(const Field& field) {
  switch (field.type) {
    case Field::Type::text:
      return field.text;
    case Field::Type::integer:
      return field.integer;
    case Field::Type::real:
      // JSON has no NaN or infinity; null is the missing value.
      return std::isfinite(field.real) ? ordered_json(field.real) : ordered_json(nullptr);
  }
  return nullptr;
}

std::string version_comment(const std::string& table) {
  return "# frugal " + std::string(kVersion) + ", results " + table + ", schema " +
         std::to_string(internal::schema_version()) + "\n";
}

}  // namespace

void export_csv(const ResultsStore& store, const std::string& folder) {
  std::error_code error;
  fs::create_directories(folder, error);
  if (!fs::is_directory(folder, error))
    throw UserError(folder + ": cannot create the export folder" + (error ? ": " + error.message() : std::string()));
  const std::vector<Table> tables = tidy_tables(store.cells());
  std::vector<std::unique_ptr<WholeFile>> files;
  for (const Table& table : tables) {
    std::string text = version_comment(table.name);
    for (std::size_t c = 0; c < table.columns.size(); ++c) text += (c == 0 ? "" : ",") + table.columns[c];
    text += "\n";
    for (const std::vector<Field>& row : table.rows) {
      for (std::size_t c = 0; c < row.size(); ++c) text += (c == 0 ? "" : ",") + csv_value(row[c]);
      text += "\n";
    }
    files.push_back(std::make_unique<WholeFile>(fs::path(folder) / (table.name + ".csv")));
    files.back()->write(text);
  }
  for (const auto& file : files) file->commit();
}

void export_json(const ResultsStore& store, const std::string& file) {
  const std::vector<CellRecord> cells = store.cells();
  const StudyRecord study = store.study();
  ordered_json document;
  document["schema"] = "frugal results export";
  document["schema_version"] = internal::schema_version();
  document["tool"] = "frugal";
  document["tool_version"] = kVersion;
  document["study"] = {{"name", study.name},
                       {"study_hash", study.study_hash},
                       {"tool_version", study.tool_version},
                       {"cells_total", study.cells_total},
                       {"resolved_yaml", study.resolved_yaml}};
  ordered_json& tables = document["tables"];
  for (const Table& table : tidy_tables(cells)) {
    ordered_json& rows = tables[table.name];
    rows = ordered_json::array();
    for (std::size_t r = 0; r < table.rows.size(); ++r) {
      ordered_json row;
      for (std::size_t c = 0; c < table.columns.size(); ++c) row[table.columns[c]] = json_value(table.rows[r][c]);
      if (table.name == "cells") {
        // The resolved cell as an object, so readers need not parse JSON inside JSON.
        try {
          row["spec"] = ordered_json::parse(cells[r].spec_json);
        } catch (const nlohmann::json::parse_error& parse_error) {
          throw UserError(store.path() + ": cell " + cells[r].key + " has a spec_json that is not JSON (" +
                          parse_error.what() + ")");
        }
      }
      rows.push_back(std::move(row));
    }
  }
  WholeFile out(file);
  out.write(document.dump(2) + "\n");
  out.commit();
}

}  // namespace frugal::store

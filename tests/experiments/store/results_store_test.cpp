#include "experiments/store/results_store.h"

#include <gtest/gtest.h>

#include <cstdio>
#include <signal.h>
#include <sqlite3.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>
#include <random>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include "experiments/store/results_store_internal.h"
#include "frugal_version.h"
#include "phantoms/user_error.h"

namespace frugal::store {
namespace {

namespace fs = std::filesystem;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Text that needs RFC 4180 quoting: a comma, a quote and a line break.
const std::string kAwkwardText = "n/a: constant column, \"all equal\"\nsecond line";

// A fresh path in the test's scratch folder, with no store or WAL files left from an earlier run.
std::string scratch(const std::string& name) {
  const char* folder = std::getenv("TEST_TMPDIR");
  const fs::path path = fs::path(folder != nullptr ? folder : ::testing::TempDir()) / name;
  for (const char* suffix : {"", "-wal", "-shm", ".partial", ".partial-wal", ".partial-shm"})
    fs::remove_all(path.string() + suffix);
  return path.string();
}

StudyRecord study(const std::string& name = "ageing cohort", const std::string& hash = std::string(64, 'a')) {
  StudyRecord record;
  record.name = name;
  record.study_hash = hash;
  record.resolved_yaml = "name: " + name + "\nbudgets: [1, 2]\n";
  record.cells_total = 12;
  return record;
}

// A cell whose child row counts follow from `index`, with NaN and awkward text in places.
CellRecord cell(const std::string& key, int index, const std::string& status = "done") {
  CellRecord c;
  c.key = key;
  c.plan = index % 2 == 0 ? "counts only" : "mixed, strong and weak";
  c.strategy = "count-map";
  c.budget = 0.5 * (index + 1);
  c.budget_unit = "hours";
  c.repeat = index % 3;
  c.spec_json = R"({"key":")" + key + R"(","repeat":)" + std::to_string(c.repeat) + "}";
  c.status = status;
  c.error = status == "failed" ? "training diverged, loss \"nan\"\nat epoch 3" : "";
  if (status == "failed") return c;
  c.labels_bought = 10 + index;
  c.hours_spent = 0.1 * index + 1.0 / 3.0;
  c.seconds_generate = 1.25;
  c.seconds_label = 0.5;
  c.seconds_train = 30.0 + index;
  c.seconds_predict = 2.0;
  c.seconds_score = 0.125;
  for (int m = 0; m < 2 + index % 4; ++m)
    c.metrics.push_back({"test", "count", "metric" + std::to_string(m), m == 1 ? kNaN : 1.0 / (m + 3),
                         m == 0 ? 0.1 : kNaN, m == 0 ? 0.9 : kNaN, 40 + m, m == 1 ? kAwkwardText : ""});
  for (int s = 0; s < 3 + index % 5; ++s)
    c.predictions.push_back({s % 2 == 0 ? "test" : "rescan", 1000 + s, s % 2, "count", 2.5 * s + 0.1,
                             s == 2 ? kNaN : static_cast<double>(s)});
  for (int e = 1; e <= 1 + index % 6; ++e)
    c.training_curve.push_back({e, 1.0 / e, e % 2 == 0 ? kNaN : 2.0 / e, e % 3 == 0 ? kNaN : 0.5 / e});
  for (int l = 0; l < 4 + index % 3; ++l)
    c.label_costs.push_back({index % 2 == 0 ? "" : (l % 2 == 0 ? "strong" : "weak"), 20 + l, l % 3,
                             l % 2 == 0 ? "count" : "outline", 12.5 + l});
  // Pictures of odd sizes, with values whose bytes differ in every position (a swapped byte order
  // or a transposed row would not read back).
  for (int m = 0; m < index % 3; ++m) {
    ExampleMap map{m == 0 ? "test_image" : "label", 600000 + m, "caption " + std::to_string(m) + kAwkwardText,
                          m == 0 ? "grey" : "probability", 3 + m, 2, {}};
    for (int p = 0; p < map.width * map.height; ++p) map.pixels.push_back(-1.5e-3F * static_cast<float>(p * p) + 0.123456F * m);
    c.example_maps.push_back(map);
  }
  return c;
}

// Equal, NaN equal to NaN (common practice, no source).
void expect_same(double a, double b, const std::string& what) {
  if (std::isnan(a) || std::isnan(b))
    EXPECT_TRUE(std::isnan(a) && std::isnan(b)) << what << ": " << a << " vs " << b;
  else
    EXPECT_EQ(a, b) << what;
}

// Every field and child row, timings included: the store must give back what it was given.
void expect_same_cell(const CellRecord& a, const CellRecord& b) {
  const std::string k = "cell " + a.key + ": ";
  EXPECT_EQ(a.key, b.key);
  EXPECT_EQ(a.plan, b.plan) << k;
  EXPECT_EQ(a.strategy, b.strategy) << k;
  expect_same(a.budget, b.budget, k + "budget");
  EXPECT_EQ(a.budget_unit, b.budget_unit) << k;
  EXPECT_EQ(a.repeat, b.repeat) << k;
  EXPECT_EQ(a.spec_json, b.spec_json) << k;
  EXPECT_EQ(a.status, b.status) << k;
  EXPECT_EQ(a.error, b.error) << k;
  EXPECT_EQ(a.labels_bought, b.labels_bought) << k;
  expect_same(a.hours_spent, b.hours_spent, k + "hours_spent");
  expect_same(a.seconds_generate, b.seconds_generate, k + "seconds_generate");
  expect_same(a.seconds_label, b.seconds_label, k + "seconds_label");
  expect_same(a.seconds_train, b.seconds_train, k + "seconds_train");
  expect_same(a.seconds_predict, b.seconds_predict, k + "seconds_predict");
  expect_same(a.seconds_score, b.seconds_score, k + "seconds_score");
  ASSERT_EQ(a.metrics.size(), b.metrics.size()) << k;
  for (std::size_t i = 0; i < a.metrics.size(); ++i) {
    const MetricRow& x = a.metrics[i];
    const MetricRow& y = b.metrics[i];
    EXPECT_EQ(x.test_set, y.test_set) << k;
    EXPECT_EQ(x.quantity, y.quantity) << k;
    EXPECT_EQ(x.metric, y.metric) << k;
    expect_same(x.value, y.value, k + "metric value");
    expect_same(x.lower, y.lower, k + "metric lower");
    expect_same(x.upper, y.upper, k + "metric upper");
    EXPECT_EQ(x.n, y.n) << k;
    EXPECT_EQ(x.note, y.note) << k;
  }
  ASSERT_EQ(a.predictions.size(), b.predictions.size()) << k;
  for (std::size_t i = 0; i < a.predictions.size(); ++i) {
    const SubjectPrediction& x = a.predictions[i];
    const SubjectPrediction& y = b.predictions[i];
    EXPECT_EQ(x.test_set, y.test_set) << k;
    EXPECT_EQ(x.subject, y.subject) << k;
    EXPECT_EQ(x.rescan, y.rescan) << k;
    EXPECT_EQ(x.quantity, y.quantity) << k;
    expect_same(x.predicted, y.predicted, k + "predicted");
    expect_same(x.truth, y.truth, k + "truth");
  }
  ASSERT_EQ(a.training_curve.size(), b.training_curve.size()) << k;
  for (std::size_t i = 0; i < a.training_curve.size(); ++i) {
    EXPECT_EQ(a.training_curve[i].epoch, b.training_curve[i].epoch) << k;
    expect_same(a.training_curve[i].training_loss, b.training_curve[i].training_loss, k + "training_loss");
    expect_same(a.training_curve[i].validation_loss, b.training_curve[i].validation_loss, k + "validation_loss");
  }
  ASSERT_EQ(a.label_costs.size(), b.label_costs.size()) << k;
  for (std::size_t i = 0; i < a.label_costs.size(); ++i) {
    const LabelCostRow& x = a.label_costs[i];
    const LabelCostRow& y = b.label_costs[i];
    EXPECT_EQ(x.part, y.part) << k;
    EXPECT_EQ(x.subject, y.subject) << k;
    EXPECT_EQ(x.rater, y.rater) << k;
    EXPECT_EQ(x.kind, y.kind) << k;
    expect_same(x.seconds, y.seconds, k + "label seconds");
  }
  ASSERT_EQ(a.example_maps.size(), b.example_maps.size()) << k;
  for (std::size_t i = 0; i < a.example_maps.size(); ++i) {
    const ExampleMap& x = a.example_maps[i];
    const ExampleMap& y = b.example_maps[i];
    EXPECT_EQ(x.role, y.role) << k;
    EXPECT_EQ(x.subject, y.subject) << k;
    EXPECT_EQ(x.caption, y.caption) << k;
    EXPECT_EQ(x.scale, y.scale) << k;
    EXPECT_EQ(x.width, y.width) << k;
    EXPECT_EQ(x.height, y.height) << k;
    EXPECT_EQ(x.pixels, y.pixels) << k;  // bit for bit
  }
}

// Expects `action` to throw UserError whose message holds every one of `parts`.
void expect_user_error(const std::function<void()>& action, const std::vector<std::string>& parts) {
  try {
    action();
    ADD_FAILURE() << "no UserError; expected one naming " << (parts.empty() ? "" : parts[0]);
  } catch (const UserError& error) {
    for (const std::string& part : parts)
      EXPECT_NE(std::string(error.what()).find(part), std::string::npos) << "'" << part << "' not in: " << error.what();
  }
}

// The test's own SQLite access, to look beneath the store's API and to damage files on purpose.
class RawDatabase {
 public:
  explicit RawDatabase(const std::string& path) { EXPECT_EQ(sqlite3_open(path.c_str(), &db_), SQLITE_OK); }
  ~RawDatabase() { sqlite3_close(db_); }
  RawDatabase(const RawDatabase&) = delete;
  RawDatabase& operator=(const RawDatabase&) = delete;
  void execute(const std::string& sql) {
    char* message = nullptr;
    EXPECT_EQ(sqlite3_exec(db_, sql.c_str(), nullptr, nullptr, &message), SQLITE_OK) << (message ? message : "");
    sqlite3_free(message);
  }
  // The first column of every row, as text ("" for NULL).
  std::vector<std::string> column(const std::string& sql) {
    std::vector<std::string> values;
    sqlite3_stmt* statement = nullptr;
    EXPECT_EQ(sqlite3_prepare_v2(db_, sql.c_str(), -1, &statement, nullptr), SQLITE_OK) << sqlite3_errmsg(db_);
    while (statement != nullptr && sqlite3_step(statement) == SQLITE_ROW) {
      const auto* text = reinterpret_cast<const char*>(sqlite3_column_text(statement, 0));
      values.emplace_back(text != nullptr ? text : "");
    }
    sqlite3_finalize(statement);
    return values;
  }
  long long count(const std::string& sql) { return std::stoll(column(sql).at(0)); }

 private:
  sqlite3* db_ = nullptr;
};

std::string read_text(const std::string& path) {
  std::ifstream stream(path, std::ios::binary);
  std::ostringstream text;
  text << stream.rdbuf();
  return text.str();
}

// RFC 4180 records (quoted fields may hold commas, "" and line breaks); '#' lines before the header
// are comments. Common practice, no source.
std::vector<std::vector<std::string>> parse_csv(const std::string& text, std::vector<std::string>* comments) {
  std::vector<std::vector<std::string>> records;
  std::size_t i = 0;
  while (i < text.size() && text[i] == '#') {
    const std::size_t end = text.find('\n', i);
    comments->push_back(text.substr(i, end - i));
    i = end + 1;
  }
  std::vector<std::string> record;
  std::string field;
  bool quoted = false;
  for (; i < text.size(); ++i) {
    const char c = text[i];
    if (quoted) {
      if (c == '"' && i + 1 < text.size() && text[i + 1] == '"') {
        field += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        field += c;
      }
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      record.push_back(field);
      field.clear();
    } else if (c == '\n') {
      record.push_back(field);
      field.clear();
      records.push_back(record);
      record.clear();
    } else {
      field += c;
    }
  }
  EXPECT_FALSE(quoted) << "unclosed quote";
  EXPECT_TRUE(record.empty() && field.empty()) << "last record without a line break";
  return records;
}

// A CSV file as rows keyed by column name.
struct CsvFile {
  std::vector<std::string> comments;
  std::vector<std::string> columns;
  std::vector<std::map<std::string, std::string>> rows;
};

CsvFile read_csv(const std::string& path) {
  CsvFile file;
  const auto records = parse_csv(read_text(path), &file.comments);
  EXPECT_FALSE(records.empty()) << path;
  if (records.empty()) return file;
  file.columns = records[0];
  for (std::size_t r = 1; r < records.size(); ++r) {
    EXPECT_EQ(records[r].size(), file.columns.size()) << path << " record " << r;
    std::map<std::string, std::string> row;
    for (std::size_t c = 0; c < file.columns.size() && c < records[r].size(); ++c) row[file.columns[c]] = records[r][c];
    file.rows.push_back(row);
  }
  return file;
}

void write_cells(const std::string& path, const StudyRecord& record, const std::vector<CellRecord>& cells) {
  ResultsStore store = ResultsStore::open_for_study(path, record);
  for (const CellRecord& c : cells) store.write_cell(c);
}

TEST(ResultsStore, EmbeddedSchemaIsTheVersionedFile) {
  // The file users read must be what the code creates (common practice, no source).
  EXPECT_EQ(internal::schema_sql(), read_text(std::string(FRUGAL_SOURCE_DIR) + "/results_schema/results_store_v1.sql"));
  EXPECT_EQ(internal::schema_version(), 1);
}

TEST(ResultsStore, CellWithNaNValuesRoundTrips) {
  const std::string path = scratch("round_trip.db");
  const CellRecord written = cell("0abc", 5);
  write_cells(path, study(), {written});

  const ResultsStore store = ResultsStore::open_existing(path);
  const std::vector<CellRecord> cells = store.cells();
  ASSERT_EQ(cells.size(), 1U);
  expect_same_cell(cells[0], written);
  const StudyRecord record = store.study();
  EXPECT_EQ(record.name, "ageing cohort");
  EXPECT_EQ(record.study_hash, std::string(64, 'a'));
  EXPECT_EQ(record.resolved_yaml, study().resolved_yaml);
  EXPECT_EQ(record.cells_total, 12);
  EXPECT_EQ(record.tool_version, kVersion);
  EXPECT_EQ(store.path(), path);

  // NaN is NULL beneath the API, so SQL users see missing values, not a sentinel number.
  RawDatabase raw(path);
  EXPECT_EQ(raw.count("SELECT count(*) FROM metrics WHERE value IS NULL"), 1);
  EXPECT_EQ(raw.count("SELECT count(*) FROM metrics WHERE lower IS NULL"),
            static_cast<long long>(written.metrics.size() - 1));
  EXPECT_EQ(raw.count("SELECT count(*) FROM predictions WHERE truth IS NULL"), 1);
  EXPECT_EQ(raw.column("SELECT value FROM meta WHERE key = 'schema_version'"), std::vector<std::string>{"1"});
  EXPECT_EQ(raw.column("SELECT value FROM meta WHERE key = 'tool'"), std::vector<std::string>{"frugal"});
  EXPECT_EQ(raw.column("PRAGMA journal_mode"), std::vector<std::string>{"wal"});
}

TEST(ResultsStore, FinishedKeysAreTheDoneCells) {
  const std::string path = scratch("finished.db");
  write_cells(path, study(), {cell("b", 1), cell("a", 0, "failed"), cell("c", 2)});
  const ResultsStore store = ResultsStore::open_existing(path);
  EXPECT_EQ(store.finished_keys(), (std::set<std::string>{"b", "c"}));
  // Ordered by key (results_store.h).
  const std::vector<CellRecord> cells = store.cells();
  ASSERT_EQ(cells.size(), 3U);
  EXPECT_EQ(cells[0].key, "a");
  EXPECT_EQ(cells[0].status, "failed");
  EXPECT_EQ(cells[2].key, "c");
}

TEST(ResultsStore, DoneReplacesAnEarlierFailure) {
  const std::string path = scratch("replace.db");
  CellRecord failed = cell("k", 4, "failed");
  failed.label_costs = cell("k", 4).label_costs;  // bought before it failed; must go with the record
  failed.label_costs.push_back({"", 99, 0, "count", 1.0});
  const CellRecord done = cell("k", 4);
  write_cells(path, study(), {failed});
  {
    ResultsStore store = ResultsStore::open_for_study(path, study());  // a resumed run
    EXPECT_TRUE(store.finished_keys().empty());
    store.write_cell(done);
    EXPECT_EQ(store.finished_keys(), std::set<std::string>{"k"});
  }
  const std::vector<CellRecord> cells = ResultsStore::open_existing(path).cells();
  ASSERT_EQ(cells.size(), 1U);
  expect_same_cell(cells[0], done);
  RawDatabase raw(path);
  EXPECT_EQ(raw.count("SELECT count(*) FROM label_costs WHERE cell_key = 'k'"),
            static_cast<long long>(done.label_costs.size()));
  EXPECT_EQ(raw.count("SELECT count(*) FROM label_costs WHERE subject = 99"), 0);
}

TEST(ResultsStoreDeathTest, RewritingADoneCellIsAnInternalError) {
  // The runner skips finished_keys(), so a second done record is frugal's bug (results_store.h).
  const std::string path = scratch("twice.db");
  write_cells(path, study(), {cell("k", 1)});
  EXPECT_DEATH(write_cells(path, study(), {cell("k", 1)}), "internal error: check");
  EXPECT_EQ(ResultsStore::open_existing(path).cells().size(), 1U);
}

TEST(ResultsStore, RefusesAStoreOfAnotherStudy) {
  const std::string path = scratch("other_study.db");
  write_cells(path, study("ageing cohort", std::string(64, 'a')), {cell("a", 0)});
  expect_user_error(
      [&] { ResultsStore::open_for_study(path, study("young cohort", std::string(64, 'c'))); },
      {path + ": holds study 'ageing cohort' (hash aaaaaaaaaaaa...), not 'young cohort' (cccccccccccc...)",
       "give another store file, or run what made this one"});
  // The refused open changed nothing.
  EXPECT_EQ(ResultsStore::open_existing(path).finished_keys(), std::set<std::string>{"a"});
}

TEST(ResultsStore, RefusesAnotherSchemaVersion) {
  const std::string path = scratch("schema3.db");
  write_cells(path, study(), {cell("a", 0)});
  RawDatabase(path).execute("UPDATE meta SET value = '3' WHERE key = 'schema_version'");
  const std::vector<std::string> parts = {
      path + ": results store schema version 3; this frugal reads version 1 (results_schema/results_store_v1.sql)"};
  expect_user_error([&] { ResultsStore::open_existing(path); }, parts);
  expect_user_error([&] { ResultsStore::open_for_study(path, study()); }, parts);
}

TEST(ResultsStore, RefusesATextFileWithoutChangingIt) {
  const std::string path = scratch("notes.db");
  const std::string text = "subject,count\n1,3\n2,0\nthis is a table, not a results store\n";
  std::ofstream(path) << text;
  expect_user_error([&] { ResultsStore::open_for_study(path, study()); }, {path + ": not a frugal results store"});
  expect_user_error([&] { ResultsStore::open_existing(path); }, {path + ": not a frugal results store"});
  EXPECT_EQ(read_text(path), text);
}

TEST(ResultsStore, RefusesAnotherSQLiteDatabase) {
  const std::string path = scratch("other.db");
  RawDatabase(path).execute("CREATE TABLE subjects (id INTEGER)");
  expect_user_error([&] { ResultsStore::open_for_study(path, study()); },
                    {path + ": not a frugal results store (no meta table)"});
  expect_user_error([&] { ResultsStore::open_existing(path); },
                    {path + ": not a frugal results store (no meta table)"});
}

TEST(ResultsStore, RefusesATruncatedFile) {
  const std::string path = scratch("truncated.db");
  std::vector<CellRecord> cells;
  for (int i = 0; i < 40; ++i) cells.push_back(cell("cell" + std::to_string(100 + i), i));
  write_cells(path, study(), cells);
  ASSERT_FALSE(fs::exists(path + "-wal"));  // the last close folds the WAL into the file
  const auto size = fs::file_size(path);
  ASSERT_GT(size, 8 * 4096U);
  fs::resize_file(path, size / 2);  // a copy cut short (common practice, no source)
  const std::vector<std::string> parts = {path + ": the results store is damaged"};
  expect_user_error([&] { ResultsStore::open_existing(path); }, parts);
  expect_user_error([&] { ResultsStore::open_for_study(path, study()); }, parts);
  fs::resize_file(path, 60);  // shorter than SQLite's 100-byte header
  expect_user_error([&] { ResultsStore::open_existing(path); }, parts);
}

TEST(ResultsStore, RefusesAMissingFileAndAFolder) {
  const std::string path = scratch("missing.db");
  expect_user_error([&] { ResultsStore::open_existing(path); }, {path + ": no such results store"});
  const std::string folder = scratch("a_folder");
  fs::create_directories(folder);
  expect_user_error([&] { ResultsStore::open_for_study(folder, study()); }, {folder + ": is a folder"});
}

TEST(ResultsStore, TwoWritersShareOneFile) {
  // Two processes create and fill one new store at once; the busy timeout makes each wait for the
  // other's transactions instead of failing (common practice, no source).
  const std::string path = scratch("shared.db");
  std::vector<pid_t> children;
  for (int writer = 0; writer < 2; ++writer) {
    const pid_t child = fork();
    ASSERT_GE(child, 0);
    if (child == 0) {
      int code = 0;
      try {
        ResultsStore store = ResultsStore::open_for_study(path, study());
        for (int i = 0; i < 60; ++i)
          store.write_cell(cell("w" + std::to_string(writer) + "-" + std::to_string(100 + i), i));
      } catch (const std::exception& error) {
        std::fprintf(stderr, "writer %d: %s\n", writer, error.what());
        code = 3;
      }
      _exit(code);
    }
    children.push_back(child);
  }
  for (const pid_t child : children) {
    int status = 0;
    ASSERT_EQ(waitpid(child, &status, 0), child);
    EXPECT_TRUE(WIFEXITED(status) && WEXITSTATUS(status) == 0) << "a writer failed";
  }
  EXPECT_EQ(ResultsStore::open_existing(path).finished_keys().size(), 120U);
}

// Shards A (cells 0-5) and B (cells 4-9): 4 and 5 appear in both with the same results.
TEST(ResultsStore, MergeOfShardsEqualsOneStore) {
  std::vector<CellRecord> all;
  for (int i = 0; i < 10; ++i) all.push_back(cell("cell" + std::to_string(i), i));
  const std::string a = scratch("shard_a.db");
  const std::string b = scratch("shard_b.db");
  const std::string c = scratch("shard_c.db");
  const std::string whole = scratch("whole.db");
  const std::string merged = scratch("merged.db");
  write_cells(a, study(), {all.begin(), all.begin() + 6});
  CellRecord retimed = all[5];  // run twice: other timings, same results
  retimed.seconds_train += 7.0;
  write_cells(b, study(), {all[4], retimed, all[6], all[7], all[8], all[9]});
  // Shard C failed on cell 3 and on cell 10, which no other shard finished.
  CellRecord unfinished = cell("cell10", 10, "failed");
  write_cells(c, study(), {cell("cell3", 3, "failed"), unfinished});
  all.push_back(unfinished);
  write_cells(whole, study(), all);

  merge_stores({c, a, b}, merged);
  EXPECT_FALSE(fs::exists(merged + ".partial"));
  const ResultsStore store = ResultsStore::open_existing(merged);
  EXPECT_EQ(store.study().study_hash, study().study_hash);
  EXPECT_EQ(store.study().resolved_yaml, study().resolved_yaml);
  EXPECT_EQ(store.study().cells_total, 12);
  const std::vector<CellRecord> got = store.cells();
  const std::vector<CellRecord> expected = ResultsStore::open_existing(whole).cells();
  ASSERT_EQ(got.size(), expected.size());
  for (std::size_t i = 0; i < got.size(); ++i) expect_same_cell(got[i], expected[i]);
  EXPECT_EQ(store.finished_keys().size(), 10U);  // done cell3 replaced the failed one
  RawDatabase raw(merged);
  EXPECT_EQ(raw.column("PRAGMA integrity_check"), std::vector<std::string>{"ok"});
}

TEST(ResultsStore, MergeRefusesDifferentStudies) {
  const std::string a = scratch("study_a.db");
  const std::string b = scratch("study_b.db");
  const std::string out = scratch("studies_merged.db");
  write_cells(a, study("ageing cohort", std::string(64, 'a')), {cell("x", 0)});
  write_cells(b, study("young cohort", std::string(64, 'b')), {cell("y", 1)});
  expect_user_error([&] { merge_stores({a, b}, out); }, {a, b, "ageing cohort", "young cohort", "one study"});
  EXPECT_FALSE(fs::exists(out));
  EXPECT_FALSE(fs::exists(out + ".partial"));
}

TEST(ResultsStore, MergeRefusesConflictingDuplicates) {
  const std::string a = scratch("conflict_a.db");
  const std::string b = scratch("conflict_b.db");
  const std::string out = scratch("conflict_merged.db");
  CellRecord other = cell("dup", 2);
  other.predictions[1].predicted += 1e-12;  // one child row differs
  write_cells(a, study(), {cell("dup", 2)});
  write_cells(b, study(), {other});
  expect_user_error([&] { merge_stores({a, b}, out); }, {"cell dup", a, b});
  EXPECT_FALSE(fs::exists(out));
  EXPECT_FALSE(fs::exists(out + ".partial"));
}

TEST(ResultsStore, MergeRefusesAnExistingOutput) {
  const std::string a = scratch("exists_a.db");
  write_cells(a, study(), {cell("x", 0)});
  const std::string out = scratch("exists_merged.db");
  std::ofstream(out) << "keep me\n";
  expect_user_error([&] { merge_stores({a}, out); }, {out + ": exists; allowed: a new file"});
  EXPECT_EQ(read_text(out), "keep me\n");
  expect_user_error([&] { merge_stores({a}, a); }, {a + ": exists"});
}

TEST(ResultsStore, CsvExportReadsBack) {
  const std::string path = scratch("csv.db");
  const std::string folder = scratch("csv_export");
  const std::vector<CellRecord> written = {cell("a1", 1), cell("b2", 2), cell("c0", 0, "failed")};
  write_cells(path, study(), written);
  export_csv(ResultsStore::open_existing(path), folder);
  std::map<std::string, CellRecord> by_key;
  for (const CellRecord& c : written) by_key[c.key] = c;

  const std::map<std::string, std::size_t> rows = {
      {"cells", 3},
      {"metrics", written[0].metrics.size() + written[1].metrics.size()},
      {"predictions", written[0].predictions.size() + written[1].predictions.size()},
      {"training_curves", written[0].training_curve.size() + written[1].training_curve.size()},
      {"label_costs", written[0].label_costs.size() + written[1].label_costs.size()}};
  const nlohmann::ordered_json schema = nlohmann::ordered_json::parse(
      read_text(std::string(FRUGAL_SOURCE_DIR) + "/results_schema/results_export_v1.json"));
  const std::map<std::string, std::string> definition = {{"cells", "cell"},
                                                         {"metrics", "metric"},
                                                         {"predictions", "prediction"},
                                                         {"training_curves", "epoch"},
                                                         {"label_costs", "label_cost"}};
  for (const auto& [table, count] : rows) {
    const CsvFile csv = read_csv(folder + "/" + table + ".csv");
    EXPECT_EQ(csv.rows.size(), count) << table;
    // Version line as in every frugal CSV (phantoms/truth_tables.h).
    ASSERT_EQ(csv.comments.size(), 1U) << table;
    EXPECT_EQ(csv.comments[0], "# frugal " + std::string(kVersion) + ", results " + table + ", schema 1");
    // Columns as results_export_v1.json lists them, in order (spec is JSON-only).
    std::vector<std::string> documented;
    for (const auto& [name, property] : schema.at("$defs").at(definition.at(table)).at("properties").items())
      if (name != "spec") documented.push_back(name);
    EXPECT_EQ(csv.columns, documented) << table;
    // Factors beside every row, so no join is needed.
    for (const auto& row : csv.rows) {
      const CellRecord& source = by_key.at(row.at("cell_key"));
      EXPECT_EQ(row.at("plan"), source.plan) << table;
      EXPECT_EQ(row.at("repeat"), std::to_string(source.repeat)) << table;
      EXPECT_EQ(std::strtod(row.at("budget").c_str(), nullptr), source.budget) << table;
    }
  }

  const CsvFile cells = read_csv(folder + "/cells.csv");
  EXPECT_EQ(cells.rows[0].at("cell_key"), "a1");
  EXPECT_EQ(cells.rows[0].at("plan"), "mixed, strong and weak");  // quoted for its comma
  EXPECT_EQ(std::strtod(cells.rows[0].at("hours_spent").c_str(), nullptr), written[0].hours_spent);  // exact digits
  EXPECT_EQ(cells.rows[0].at("status"), "done");
  EXPECT_EQ(cells.rows[0].at("error"), "");
  EXPECT_EQ(cells.rows[2].at("status"), "failed");
  EXPECT_EQ(cells.rows[2].at("error"), written[2].error);  // quotes and a line break survive
  EXPECT_EQ(cells.rows[1].at("seconds_train"), "32");

  const CsvFile metrics = read_csv(folder + "/metrics.csv");
  EXPECT_EQ(metrics.rows[0].at("metric"), "metric0");
  EXPECT_EQ(std::strtod(metrics.rows[0].at("value").c_str(), nullptr), 1.0 / 3.0);
  EXPECT_EQ(metrics.rows[1].at("value"), "NA");  // NaN is NA, as in the project's other tables
  EXPECT_EQ(metrics.rows[1].at("lower"), "NA");
  EXPECT_EQ(metrics.rows[1].at("note"), kAwkwardText);
  const CsvFile predictions = read_csv(folder + "/predictions.csv");
  EXPECT_EQ(predictions.rows[2].at("truth"), "NA");
  EXPECT_EQ(predictions.rows[1].at("subject"), "1001");
  EXPECT_EQ(predictions.rows[1].at("rescan"), "1");
  const CsvFile costs = read_csv(folder + "/label_costs.csv");
  EXPECT_EQ(costs.rows[0].at("part"), "strong");
  EXPECT_EQ(costs.rows[0].at("seconds"), "12.5");

  for (const auto& entry : fs::directory_iterator(folder))
    EXPECT_NE(entry.path().extension(), ".partial") << entry.path();
}

TEST(ResultsStore, JsonExportHasTheStudyAndEveryTable) {
  const std::string path = scratch("json.db");
  const std::string file = scratch("export.json");
  const std::vector<CellRecord> written = {cell("a1", 1), cell("c0", 0, "failed")};
  write_cells(path, study(), written);
  export_json(ResultsStore::open_existing(path), file);

  const nlohmann::json document = nlohmann::json::parse(read_text(file));
  EXPECT_EQ(document.at("schema"), "frugal results export");
  EXPECT_EQ(document.at("schema_version"), 1);
  EXPECT_EQ(document.at("tool"), "frugal");
  EXPECT_EQ(document.at("tool_version"), kVersion);
  const nlohmann::json& record = document.at("study");
  EXPECT_EQ(record.at("name"), "ageing cohort");
  EXPECT_EQ(record.at("study_hash"), std::string(64, 'a'));
  EXPECT_EQ(record.at("cells_total"), 12);
  EXPECT_EQ(record.at("resolved_yaml"), study().resolved_yaml);
  const nlohmann::json& tables = document.at("tables");
  EXPECT_EQ(tables.size(), 5U);
  ASSERT_EQ(tables.at("cells").size(), 2U);
  EXPECT_EQ(tables.at("metrics").size(), written[0].metrics.size());
  EXPECT_EQ(tables.at("predictions").size(), written[0].predictions.size());
  EXPECT_EQ(tables.at("training_curves").size(), written[0].training_curve.size());
  EXPECT_EQ(tables.at("label_costs").size(), written[0].label_costs.size());
  const nlohmann::json& first = tables.at("cells")[0];
  EXPECT_EQ(first.at("cell_key"), "a1");
  EXPECT_EQ(first.at("spec").at("repeat"), 1);                               // parsed, not JSON inside a string
  EXPECT_EQ(first.at("hours_spent").get<double>(), written[0].hours_spent);  // full precision
  EXPECT_EQ(tables.at("cells")[1].at("error"), written[1].error);
  const nlohmann::json& missing = tables.at("metrics")[1];
  EXPECT_TRUE(missing.at("value").is_null());  // NaN
  EXPECT_EQ(missing.at("note"), kAwkwardText);
  EXPECT_EQ(missing.at("plan"), written[0].plan);
  EXPECT_TRUE(tables.at("training_curves")[1].at("validation_loss").is_null());

  // Every row carries exactly the documented properties (results_export_v1.json).
  const nlohmann::json schema =
      nlohmann::json::parse(read_text(std::string(FRUGAL_SOURCE_DIR) + "/results_schema/results_export_v1.json"));
  const std::map<std::string, std::string> definition = {{"cells", "cell"},
                                                         {"metrics", "metric"},
                                                         {"predictions", "prediction"},
                                                         {"training_curves", "epoch"},
                                                         {"label_costs", "label_cost"}};
  for (const auto& [table, name] : definition) {
    const nlohmann::json& properties = schema.at("$defs").at(name).at("properties");
    for (const nlohmann::json& row : tables.at(table)) {
      EXPECT_EQ(row.size(), properties.size()) << table;
      for (const auto& [column, value] : row.items())
        EXPECT_TRUE(properties.contains(column)) << table << "." << column;
    }
  }
}

// The child of KilledWritersLeaveWholeCells: writes cells of `run` until it is killed and reports
// each committed index through `report`.
[[noreturn]] void write_until_killed(const std::string& path, int run, int report) {
  try {
    ResultsStore store = ResultsStore::open_for_study(path, study());
    for (int i = 0;; ++i) {
      store.write_cell(cell("run" + std::to_string(run) + "-" + std::to_string(1000 + i), i));
      if (write(report, &i, sizeof i) != static_cast<ssize_t>(sizeof i)) _exit(4);
    }
  } catch (const std::exception&) {
    _exit(3);
  }
}

TEST(ResultsStore, KilledWritersLeaveWholeCells) {
  // SIGKILL lands at a random moment: inside a transaction, a commit or a WAL checkpoint. Every
  // committed cell must survive whole and no cell may be half there (common practice, no source).
  const std::uint32_t seed = 20'260'417;
  std::cout << "kill-test seed " << seed << "\n";
  std::mt19937 random(seed);
  const std::string path = scratch("killed.db");
  std::map<std::string, int> committed;  // key -> index the writer reported after its commit
  for (int run = 0; run < 8; ++run) {
    int pipe_ends[2];
    ASSERT_EQ(pipe(pipe_ends), 0);
    const pid_t child = fork();
    ASSERT_GE(child, 0);
    if (child == 0) {
      close(pipe_ends[0]);
      write_until_killed(path, run, pipe_ends[1]);
    }
    close(pipe_ends[1]);
    const int delay_ms = 20 + static_cast<int>(random() % 120);
    std::this_thread::sleep_for(std::chrono::milliseconds(delay_ms));
    kill(child, SIGKILL);
    int status = 0;
    ASSERT_EQ(waitpid(child, &status, 0), child);
    ASSERT_TRUE(WIFSIGNALED(status) && WTERMSIG(status) == SIGKILL)
        << "seed " << seed << " run " << run << ": the writer stopped by itself (exit " << WEXITSTATUS(status) << ")";
    int index = 0;
    while (read(pipe_ends[0], &index, sizeof index) == static_cast<ssize_t>(sizeof index))
      committed["run" + std::to_string(run) + "-" + std::to_string(1000 + index)] = index;
    close(pipe_ends[0]);
  }

  const ResultsStore store = ResultsStore::open_existing(path);
  std::map<std::string, CellRecord> stored;
  for (CellRecord& c : store.cells()) stored[c.key] = std::move(c);
  for (const auto& [key, index] : committed) EXPECT_EQ(stored.count(key), 1U) << "seed " << seed << ": lost " << key;
  EXPECT_GT(committed.size(), 8U) << "seed " << seed << ": the writers barely wrote; the test shows little";
  for (const auto& [key, got] : stored) {
    const int index = std::stoi(key.substr(key.find('-') + 1)) - 1000;
    const CellRecord expected = cell(key, index);
    EXPECT_EQ(got.metrics.size(), expected.metrics.size()) << "seed " << seed << " " << key;
    EXPECT_EQ(got.predictions.size(), expected.predictions.size()) << "seed " << seed << " " << key;
    EXPECT_EQ(got.training_curve.size(), expected.training_curve.size()) << "seed " << seed << " " << key;
    EXPECT_EQ(got.label_costs.size(), expected.label_costs.size()) << "seed " << seed << " " << key;
  }
  std::cout << committed.size() << " cells committed, " << stored.size() << " stored\n";
  RawDatabase raw(path);
  EXPECT_EQ(raw.column("PRAGMA integrity_check"), std::vector<std::string>{"ok"}) << "seed " << seed;
}

// Writes a small store and its exports for tests/python/results_store_reference_test.py, which
// reads them with Python's own sqlite3 and csv modules and checks the JSON against its schema.
TEST(ResultsStoreReference, WritesPythonCases) {
  const char* folder = std::getenv("FRUGAL_RESULTS_STORE_REFERENCE_DIR");
  if (folder == nullptr) folder = std::getenv("TEST_TMPDIR");
  if (folder == nullptr) GTEST_SKIP() << "neither FRUGAL_RESULTS_STORE_REFERENCE_DIR nor TEST_TMPDIR is set";
  const std::string base = std::string(folder) + "/reference";
  fs::remove_all(base);
  fs::create_directories(base);
  const std::string path = base + "/store.db";
  write_cells(path, study(), {cell("a1", 1), cell("b2", 2), cell("c0", 0, "failed")});
  const ResultsStore store = ResultsStore::open_existing(path);
  export_csv(store, base + "/csv");
  export_json(store, base + "/export.json");
}

}  // namespace
}  // namespace frugal::store

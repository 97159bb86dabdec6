#include "experiments/store/results_store.h"

#include <sqlite3.h>

#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <limits>
#include <map>
#include <thread>
#include <utility>

#include "experiments/store/results_store_internal.h"
#include "frugal_version.h"
#include "phantoms/image.h"
#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"

namespace frugal::store {

namespace internal {

int schema_version() { return 1; }

// Kept equal to results_schema/results_store_v1.sql by results_store_test, so the file users read
// is the schema the code writes.
const std::string& schema_sql() {
  static const std::string sql =
      R"sql(-- frugal results store, schema version 1: one SQLite file per study (results_store_v1.md).
-- Every REAL column holds NULL where frugal's value is NaN (not measured, not defined).
-- Child rows are kept in the order frugal wrote them (rowid).

-- The study the store belongs to, one row per key: schema_version ('1'), tool ('frugal'),
-- tool_version (frugal version that created the file), study_name, study_hash (hex hash of the
-- resolved study; a store holds exactly one), cells_total (cells the study expands into, over
-- all shards) and resolved_yaml (the resolved study file).
CREATE TABLE meta (
  key TEXT PRIMARY KEY,  -- one of the names above
  value TEXT NOT NULL    -- the value as text
);

-- One row per cell (plan x strategy x budget x repeat) that finished or failed.
CREATE TABLE cells (
  key TEXT PRIMARY KEY,             -- stable hex hash of the resolved cell
  plan TEXT NOT NULL,               -- label plan name from the study file
  strategy TEXT NOT NULL,           -- learning strategy name ('count-map', 'mask', ...)
  budget REAL,                      -- annotation budget, in budget_unit
  budget_unit TEXT NOT NULL,        -- 'hours' (annotator-hours) or 'labels'
  repeat INTEGER NOT NULL,          -- repeat index of the cell
  spec_json TEXT NOT NULL,          -- the resolved cell as canonical JSON
  status TEXT NOT NULL CHECK (status IN ('done', 'failed')),
  error TEXT NOT NULL,              -- the failure's message; '' when done
  labels_bought INTEGER NOT NULL,   -- labels the cell bought within its budget
  hours_spent REAL,                 -- annotator-hours of those labels
  seconds_generate REAL,            -- wall-clock seconds generating phantoms
  seconds_label REAL,               -- wall-clock seconds simulating labels
  seconds_train REAL,               -- wall-clock seconds training
  seconds_predict REAL,             -- wall-clock seconds predicting the test sets
  seconds_score REAL                -- wall-clock seconds scoring the predictions
);

-- One number a cell measured on one held-out test set.
CREATE TABLE metrics (
  cell_key TEXT NOT NULL REFERENCES cells (key),
  test_set TEXT NOT NULL,  -- 'test', 'rescan', 'decorrelated'
  quantity TEXT NOT NULL,  -- 'count', 'affected_fraction', 'burden_mm3', 'grade', 'presence', 'lesions', ...
  metric TEXT NOT NULL,    -- 'mae', 'bias', 'rmse', 'pearson', 'spearman', 'icc_a1', 'dice_pooled', ...
  value REAL,              -- in the quantity's unit (errors) or unitless (correlations, overlaps)
  lower REAL,              -- lower end of the value's interval; NULL when the statistic has none
  upper REAL,              -- upper end of the value's interval; NULL when the statistic has none
  n INTEGER NOT NULL,      -- rows (subjects, images or pairs) behind the value
  note TEXT NOT NULL       -- why the value is NULL ('n/a: constant column'); '' otherwise
);
CREATE INDEX metrics_cell_key ON metrics (cell_key);

-- One test subject's prediction of one quantity next to its exact truth.
CREATE TABLE predictions (
  cell_key TEXT NOT NULL REFERENCES cells (key),
  test_set TEXT NOT NULL,     -- 'test', 'rescan', 'decorrelated'
  subject INTEGER NOT NULL,   -- subject index of the test phantom set
  rescan INTEGER NOT NULL,    -- acquisition, 0 = first scan
  quantity TEXT NOT NULL,     -- as in metrics.quantity
  predicted REAL,             -- in the quantity's unit (lesions, fraction, mm3, bin, probability)
  truth REAL                  -- the phantom's exact value, same unit
);
CREATE INDEX predictions_cell_key ON predictions (cell_key);

-- The training curve of a cell, one row per epoch.
CREATE TABLE training_curves (
  cell_key TEXT NOT NULL REFERENCES cells (key),
  epoch INTEGER NOT NULL,  -- 1-based
  training_loss REAL,      -- the strategy's loss on the training set in that epoch
  validation_loss REAL,    -- same loss on the validation split; NULL without one
  validation_error REAL    -- the epoch-selection criterion on the validation split (the answers'
                           -- error against its labels); NULL without one or for partial masks
);
CREATE INDEX training_curves_cell_key ON training_curves (cell_key);

-- Every label a cell bought and its annotator time.
CREATE TABLE label_costs (
  cell_key TEXT NOT NULL REFERENCES cells (key),
  part TEXT NOT NULL,         -- 'strong' or 'weak' in a mixed plan; '' otherwise
  subject INTEGER NOT NULL,   -- subject index of the training phantom set
  rater INTEGER NOT NULL,     -- panel member, 0-based
  kind TEXT NOT NULL,         -- label kind ('count', 'outline', ...)
  seconds REAL                -- annotator seconds under the rater's cost model
);
CREATE INDEX label_costs_cell_key ON label_costs (cell_key);

-- A few pictures per cell for the report: 2D slices of the first held-out test subject with a
-- lesion and of the first label bought.
CREATE TABLE example_maps (
  cell_key TEXT NOT NULL REFERENCES cells (key),
  role TEXT NOT NULL,       -- 'test_image', 'test_truth', 'prediction', 'label_image', 'label'
  subject INTEGER NOT NULL, -- subject index of the test or pool phantom set
  caption TEXT NOT NULL,    -- what the picture shows
  scale TEXT NOT NULL CHECK (scale IN ('grey', 'probability')),
  width INTEGER NOT NULL,
  height INTEGER NOT NULL,
  pixels BLOB NOT NULL      -- width * height float32, little-endian, row-major
);
CREATE INDEX example_maps_cell_key ON example_maps (cell_key);
)sql";
  return sql;
}

}  // namespace internal

namespace {

namespace fs = std::filesystem;

constexpr int kBusyTimeoutMilliseconds = 10'000;  // two shards sharing a file wait for each other's commits
constexpr const char* kSchemaFile = "results_schema/results_store_v1.sql";

// "ab12cd34ef56..." for messages; full hashes make them unreadable.
std::string short_hash(const std::string& hash) { return hash.size() > 12 ? hash.substr(0, 12) + "..." : hash; }

// One SQLite connection and the file name every message carries.
class Connection {
 public:
  Connection(const std::string& path, bool read_only) : path_(path) {
    // SQLite opens a device or a pipe and then fails with an I/O error (and creates PATH-journal
    // beside it), which reads like a failing disk.
    if (!read_only) require_writable_output(path, OutputKind::file, "a new file or an existing frugal results store");
    sqlite3* raw = nullptr;
    const int flags = read_only ? SQLITE_OPEN_READONLY : SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE;
    const int code = sqlite3_open_v2(path.c_str(), &raw, flags, nullptr);
    FRUGAL_CHECK(raw != nullptr);  // only when SQLite cannot allocate its handle
    db_.reset(raw);
    if (code != SQLITE_OK) fail("cannot open");
    sqlite3_extended_result_codes(raw, 1);
    sqlite3_busy_timeout(raw, kBusyTimeoutMilliseconds);
  }

  sqlite3* get() const { return db_.get(); }
  const std::string& path() const { return path_; }

  // Turns the connection's last SQLite error into a message for the user, with a hint for the
  // errors a user can act on.
  [[noreturn]] void fail(const std::string& doing) const {
    const int code = sqlite3_extended_errcode(db_.get());
    const std::string message = sqlite3_errmsg(db_.get());
    switch (code & 0xff) {
      case SQLITE_NOTADB:
        throw UserError(path_ + ": not a frugal results store (not an SQLite database: " + message + ")");
      case SQLITE_CORRUPT:
        throw UserError(path_ + ": the results store is damaged (" + message +
                        "); restore it from a copy or run the study into a new --out file");
      case SQLITE_FULL:
      case SQLITE_IOERR:
        // SQLite reports a full disk as SQLITE_FULL, or as an I/O error when its WAL index cannot grow.
        throw UserError(path_ + ": " + doing + ": " + message +
                        " (the disk is full or failing); free space and run again: finished cells are kept");
      case SQLITE_BUSY:
        throw UserError(path_ + ": " + doing + ": " + message + " (another process held it for more than " +
                        std::to_string(kBusyTimeoutMilliseconds / 1000) + " s)");
      default:
        throw UserError(path_ + ": " + doing + ": " + message);
    }
  }

  void execute(const char* sql, const std::string& doing) const {
    if (sqlite3_exec(db_.get(), sql, nullptr, nullptr, nullptr) != SQLITE_OK) fail(doing);
  }

 private:
  struct Close {
    void operator()(sqlite3* db) const { sqlite3_close_v2(db); }
  };
  std::string path_;
  std::unique_ptr<sqlite3, Close> db_;
};

// A prepared statement with bound parameters; NaN doubles are bound and read as NULL.
class Statement {
 public:
  Statement(const Connection& connection, const char* sql) : connection_(connection) {
    sqlite3_stmt* raw = nullptr;
    if (sqlite3_prepare_v2(connection.get(), sql, -1, &raw, nullptr) != SQLITE_OK) connection.fail("reading the store");
    statement_.reset(raw);
  }

  Statement& bind(int index, const std::string& text) {
    check(sqlite3_bind_text64(statement_.get(), index, text.data(), text.size(), SQLITE_TRANSIENT, SQLITE_UTF8));
    return *this;
  }
  Statement& bind(int index, long long number) {
    check(sqlite3_bind_int64(statement_.get(), index, number));
    return *this;
  }
  Statement& bind(int index, int number) { return bind(index, static_cast<long long>(number)); }
  Statement& bind(int index, const std::vector<unsigned char>& bytes) {
    check(sqlite3_bind_blob64(statement_.get(), index, bytes.data(), bytes.size(), SQLITE_TRANSIENT));
    return *this;
  }
  Statement& bind(int index, double number) {
    check(std::isnan(number) ? sqlite3_bind_null(statement_.get(), index)
                             : sqlite3_bind_double(statement_.get(), index, number));
    return *this;
  }

  // True while a row is ready; false when the statement has finished.
  bool step(const std::string& doing) {
    const int code = sqlite3_step(statement_.get());
    if (code == SQLITE_ROW) return true;
    if (code == SQLITE_DONE) return false;
    sqlite3_reset(statement_.get());
    connection_.fail(doing);
  }
  // Runs a statement that returns no rows and readies it for the next binding.
  void run(const std::string& doing) {
    step(doing);
    sqlite3_reset(statement_.get());
  }

  std::string text(int column) const {
    const auto* characters = reinterpret_cast<const char*>(sqlite3_column_text(statement_.get(), column));
    if (characters == nullptr) return {};
    return std::string(characters, static_cast<std::size_t>(sqlite3_column_bytes(statement_.get(), column)));
  }
  std::vector<unsigned char> blob(int column) const {
    const auto* bytes = static_cast<const unsigned char*>(sqlite3_column_blob(statement_.get(), column));
    const auto size = static_cast<std::size_t>(sqlite3_column_bytes(statement_.get(), column));
    return bytes == nullptr ? std::vector<unsigned char>{} : std::vector<unsigned char>(bytes, bytes + size);
  }
  int integer(int column) const { return static_cast<int>(sqlite3_column_int64(statement_.get(), column)); }
  double real(int column) const {
    if (sqlite3_column_type(statement_.get(), column) == SQLITE_NULL) return std::numeric_limits<double>::quiet_NaN();
    return sqlite3_column_double(statement_.get(), column);
  }

 private:
  // Binding fails only for a wrong index or a value beyond SQLite's limits, both frugal's bugs.
  static void check(int code) { FRUGAL_CHECK(code == SQLITE_OK); }
  struct Finalize {
    void operator()(sqlite3_stmt* statement) const { sqlite3_finalize(statement); }
  };
  const Connection& connection_;
  std::unique_ptr<sqlite3_stmt, Finalize> statement_;
};

// BEGIN ... COMMIT, rolled back when an exception leaves the scope first.
class Transaction {
 public:
  enum class Kind { read, write };
  Transaction(const Connection& connection, Kind kind) : connection_(connection) {
    // IMMEDIATE takes the write lock up front, so a busy store makes us wait (busy timeout)
    // instead of failing at the first write of a half-done transaction.
    connection.execute(kind == Kind::write ? "BEGIN IMMEDIATE" : "BEGIN", "starting a transaction");
  }
  ~Transaction() {
    if (!committed_) sqlite3_exec(connection_.get(), "ROLLBACK", nullptr, nullptr, nullptr);
  }
  Transaction(const Transaction&) = delete;
  Transaction& operator=(const Transaction&) = delete;
  void commit() {
    connection_.execute("COMMIT", "committing");
    committed_ = true;
  }

 private:
  const Connection& connection_;
  bool committed_ = false;
};

int table_count(const Connection& connection) {
  Statement count(connection, "SELECT count(*) FROM sqlite_master WHERE type = 'table'");
  count.step("reading the store");
  return count.integer(0);
}

bool has_meta_table(const Connection& connection) {
  Statement meta(connection, "SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name = 'meta'");
  meta.step("reading the store");
  return meta.integer(0) > 0;
}

// A results store is small enough to check whole at every open, which names a damaged file
// (a truncated copy, a full disk at copy time) before a run spends hours on it.
void check_integrity(const Connection& connection) {
  Statement check(connection, "PRAGMA quick_check");
  std::string problems;
  while (check.step("checking the store")) {
    const std::string row = check.text(0);
    if (row != "ok") problems += (problems.empty() ? "" : "; ") + row;
  }
  if (!problems.empty())
    throw UserError(connection.path() + ": the results store is damaged (" + problems +
                    "); restore it from a copy or run the study into a new --out file");
}

StudyRecord read_study(const Connection& connection) {
  if (!has_meta_table(connection)) throw UserError(connection.path() + ": not a frugal results store (no meta table)");
  std::map<std::string, std::string> meta;
  Statement rows(connection, "SELECT key, value FROM meta");
  while (rows.step("reading the meta table")) meta[rows.text(0)] = rows.text(1);
  const auto value = [&](const std::string& key) {
    const auto found = meta.find(key);
    if (found == meta.end())
      throw UserError(connection.path() + ": not a frugal results store (the meta table has no " + key + ")");
    return found->second;
  };
  if (value("tool") != "frugal")
    throw UserError(connection.path() + ": not a frugal results store (meta tool is '" + value("tool") + "')");
  const std::string version = value("schema_version");
  if (version != std::to_string(internal::schema_version()))
    throw UserError(connection.path() + ": results store schema version " + version + "; this frugal reads version " +
                    std::to_string(internal::schema_version()) + " (" + kSchemaFile + ")");
  StudyRecord study;
  study.name = value("study_name");
  study.study_hash = value("study_hash");
  study.resolved_yaml = value("resolved_yaml");
  study.tool_version = value("tool_version");
  const std::string total = value("cells_total");
  try {
    std::size_t used = 0;
    study.cells_total = std::stoi(total, &used);
    if (used != total.size()) throw std::invalid_argument(total);
  } catch (const std::logic_error&) {
    throw UserError(connection.path() + ": meta cells_total is '" + total + "'; allowed: a whole number");
  }
  return study;
}

// Creates the tables and the study record in an empty file, inside the caller's transaction.
void create_schema(const Connection& connection, const StudyRecord& study) {
  connection.execute(internal::schema_sql().c_str(), "creating the results store");
  Statement insert(connection, "INSERT INTO meta (key, value) VALUES (?1, ?2)");
  const std::pair<const char*, std::string> rows[] = {
      {"schema_version", std::to_string(internal::schema_version())},
      {"tool", "frugal"},
      {"tool_version", kVersion},
      {"study_name", study.name},
      {"study_hash", study.study_hash},
      {"cells_total", std::to_string(study.cells_total)},
      {"resolved_yaml", study.resolved_yaml},
  };
  for (const auto& [key, value] : rows) insert.bind(1, std::string(key)).bind(2, value).run("writing the meta table");
}

// Per-connection settings; journal_mode is stored in the file, the others are not.
void configure_writer(const Connection& connection) {
  // Switching the journal needs a moment alone with the file and SQLite does not wait for it:
  // while another shard is creating the same store, try again for up to the busy timeout.
  std::string mode;
  for (int attempt = 0;; ++attempt) {
    try {
      Statement journal(connection, "PRAGMA journal_mode = WAL");
      journal.step("switching to the WAL journal");
      mode = journal.text(0);
      if (mode == "wal") break;
    } catch (const UserError&) {
      if (attempt * 10 >= kBusyTimeoutMilliseconds) throw;
    }
    if (attempt * 10 >= kBusyTimeoutMilliseconds) break;
    std::this_thread::sleep_for(std::chrono::milliseconds(10));
  }
  if (mode != "wal")
    throw UserError(connection.path() + ": cannot use SQLite's WAL journal here (journal mode stays '" + mode +
                    "'); put the store on a local disk");
  // NORMAL in WAL mode: a commit survives a killed process; only power loss can drop the last ones.
  connection.execute("PRAGMA synchronous = NORMAL", "configuring the store");
}

// float32 pixels as little-endian bytes whatever the machine, so a store reads the same everywhere.
std::vector<unsigned char> pixel_bytes(const std::vector<float>& pixels) {
  std::vector<unsigned char> bytes;
  bytes.reserve(pixels.size() * 4);
  for (float pixel : pixels) {
    std::uint32_t bits = 0;
    std::memcpy(&bits, &pixel, 4);
    for (int shift = 0; shift < 32; shift += 8) bytes.push_back(static_cast<unsigned char>(bits >> shift));
  }
  return bytes;
}

std::vector<float> pixels_from_bytes(const std::vector<unsigned char>& bytes) {
  std::vector<float> pixels(bytes.size() / 4);
  for (std::size_t i = 0; i < pixels.size(); ++i) {
    std::uint32_t bits = 0;
    for (int b = 3; b >= 0; --b) bits = (bits << 8) | bytes[4 * i + static_cast<std::size_t>(b)];
    std::memcpy(&pixels[i], &bits, 4);
  }
  return pixels;
}

void delete_cell(const Connection& connection, const std::string& key) {
  for (const char* sql :
       {"DELETE FROM metrics WHERE cell_key = ?1", "DELETE FROM predictions WHERE cell_key = ?1",
        "DELETE FROM training_curves WHERE cell_key = ?1", "DELETE FROM label_costs WHERE cell_key = ?1",
        "DELETE FROM example_maps WHERE cell_key = ?1", "DELETE FROM cells WHERE key = ?1"})
    Statement(connection, sql).bind(1, key).run("replacing a failed cell");
}

void insert_cell(const Connection& connection, const CellRecord& cell) {
  const std::string doing = "writing cell " + cell.key;
  Statement(connection,
            "INSERT INTO cells (key, plan, strategy, budget, budget_unit, repeat, spec_json, status, error, "
            "labels_bought, hours_spent, seconds_generate, seconds_label, seconds_train, seconds_predict, "
            "seconds_score) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16)")
      .bind(1, cell.key)
      .bind(2, cell.plan)
      .bind(3, cell.strategy)
      .bind(4, cell.budget)
      .bind(5, cell.budget_unit)
      .bind(6, cell.repeat)
      .bind(7, cell.spec_json)
      .bind(8, cell.status)
      .bind(9, cell.error)
      .bind(10, cell.labels_bought)
      .bind(11, cell.hours_spent)
      .bind(12, cell.seconds_generate)
      .bind(13, cell.seconds_label)
      .bind(14, cell.seconds_train)
      .bind(15, cell.seconds_predict)
      .bind(16, cell.seconds_score)
      .run(doing);
  Statement metric(connection,
                   "INSERT INTO metrics (cell_key, test_set, quantity, metric, value, lower, upper, n, note) "
                   "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)");
  for (const MetricRow& row : cell.metrics)
    metric.bind(1, cell.key)
        .bind(2, row.test_set)
        .bind(3, row.quantity)
        .bind(4, row.metric)
        .bind(5, row.value)
        .bind(6, row.lower)
        .bind(7, row.upper)
        .bind(8, row.n)
        .bind(9, row.note)
        .run(doing);
  Statement prediction(connection,
                       "INSERT INTO predictions (cell_key, test_set, subject, rescan, quantity, predicted, truth) "
                       "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)");
  for (const SubjectPrediction& row : cell.predictions)
    prediction.bind(1, cell.key)
        .bind(2, row.test_set)
        .bind(3, row.subject)
        .bind(4, row.rescan)
        .bind(5, row.quantity)
        .bind(6, row.predicted)
        .bind(7, row.truth)
        .run(doing);
  Statement epoch(connection,
                  "INSERT INTO training_curves (cell_key, epoch, training_loss, validation_loss, validation_error) "
                  "VALUES (?1, ?2, ?3, ?4, ?5)");
  for (const EpochRow& row : cell.training_curve)
    epoch.bind(1, cell.key)
        .bind(2, row.epoch)
        .bind(3, row.training_loss)
        .bind(4, row.validation_loss)
        .bind(5, row.validation_error)
        .run(doing);
  Statement cost(connection,
                 "INSERT INTO label_costs (cell_key, part, subject, rater, kind, seconds) "
                 "VALUES (?1, ?2, ?3, ?4, ?5, ?6)");
  for (const LabelCostRow& row : cell.label_costs)
    cost.bind(1, cell.key)
        .bind(2, row.part)
        .bind(3, row.subject)
        .bind(4, row.rater)
        .bind(5, row.kind)
        .bind(6, row.seconds)
        .run(doing);
  Statement picture(connection,
                    "INSERT INTO example_maps (cell_key, role, subject, caption, scale, width, height, pixels) "
                    "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)");
  for (const ExampleMap& map : cell.example_maps) {
    FRUGAL_CHECK(map.pixels.size() == static_cast<std::size_t>(map.width) * static_cast<std::size_t>(map.height));
    picture.bind(1, cell.key)
        .bind(2, map.role)
        .bind(3, map.subject)
        .bind(4, map.caption)
        .bind(5, map.scale)
        .bind(6, map.width)
        .bind(7, map.height)
        .bind(8, pixel_bytes(map.pixels))
        .run(doing);
  }
}

}  // namespace

struct ResultsStore::Impl {
  Impl(const std::string& file, bool read_only_store) : connection(file, read_only_store), read_only(read_only_store) {}
  Connection connection;
  bool read_only;
  StudyRecord study;
};

ResultsStore ResultsStore::open_for_study(const std::string& path, const StudyRecord& study) {
  FRUGAL_CHECK(!study.study_hash.empty());
  std::error_code error;
  if (fs::is_directory(path, error)) throw UserError(path + ": is a folder; give a results store file name");
  auto impl = std::make_unique<Impl>(path, false);
  const Connection& connection = impl->connection;
  // SQLite opens a file it may not write read-only without complaint; say so now, not after a cell.
  if (sqlite3_db_readonly(connection.get(), "main") == 1)
    throw UserError(path + ": cannot write the results store (read-only file or folder)");
  connection.execute("PRAGMA foreign_keys = ON", "configuring the store");
  // Reading first refuses a file that is not SQLite before anything is written to it.
  if (!has_meta_table(connection)) {
    // The second read may see a store another shard created after the first one: look again.
    if (table_count(connection) > 0 && !has_meta_table(connection))
      throw UserError(path + ": not a frugal results store (no meta table)");
    configure_writer(connection);
    Transaction transaction(connection, Transaction::Kind::write);
    // Another shard may have created the store since the check above; the write lock settles it.
    if (table_count(connection) == 0) create_schema(connection, study);
    transaction.commit();
  } else {
    check_integrity(connection);
    configure_writer(connection);
  }
  impl->study = read_study(connection);
  if (impl->study.study_hash != study.study_hash)
    throw UserError(path + ": holds study '" + impl->study.name + "' (hash " + short_hash(impl->study.study_hash) +
                    "), not '" + study.name + "' (" + short_hash(study.study_hash) +
                    "); give another store file, or run what made this one");
  return ResultsStore(std::move(impl));
}

ResultsStore ResultsStore::open_existing(const std::string& path) {
  std::error_code error;
  if (!fs::exists(path, error)) throw UserError(path + ": no such results store");
  if (fs::is_directory(path, error)) throw UserError(path + ": is a folder; give a results store file name");
  auto impl = std::make_unique<Impl>(path, true);
  check_integrity(impl->connection);
  impl->study = read_study(impl->connection);
  return ResultsStore(std::move(impl));
}

ResultsStore::ResultsStore(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
ResultsStore::ResultsStore(ResultsStore&&) noexcept = default;
ResultsStore& ResultsStore::operator=(ResultsStore&&) noexcept = default;
ResultsStore::~ResultsStore() = default;

const std::string& ResultsStore::path() const { return impl_->connection.path(); }

StudyRecord ResultsStore::study() const { return impl_->study; }

std::set<std::string> ResultsStore::finished_keys() const {
  std::set<std::string> keys;
  Statement done(impl_->connection, "SELECT key FROM cells WHERE status = 'done'");
  while (done.step("reading the cells")) keys.insert(done.text(0));
  return keys;
}

void ResultsStore::write_cell(const CellRecord& cell) {
  FRUGAL_CHECK(!impl_->read_only);
  FRUGAL_CHECK(!cell.key.empty());
  FRUGAL_CHECK(cell.status == "done" || cell.status == "failed");
  const Connection& connection = impl_->connection;
  Transaction transaction(connection, Transaction::Kind::write);
  Statement earlier(connection, "SELECT status FROM cells WHERE key = ?1");
  if (earlier.bind(1, cell.key).step("reading cell " + cell.key)) {
    FRUGAL_CHECK(earlier.text(0) != "done");  // the runner skips finished_keys()
    delete_cell(connection, cell.key);
  }
  insert_cell(connection, cell);
  transaction.commit();
}

std::vector<CellRecord> ResultsStore::cells() const {
  const Connection& connection = impl_->connection;
  // One read transaction, so a shard committing meanwhile cannot split a cell from its rows.
  Transaction snapshot(connection, Transaction::Kind::read);
  std::vector<CellRecord> cells;
  std::map<std::string, std::size_t> position;
  const std::string doing = "reading the cells";
  Statement cell_rows(connection,
                      "SELECT key, plan, strategy, budget, budget_unit, repeat, spec_json, status, error, "
                      "labels_bought, hours_spent, seconds_generate, seconds_label, seconds_train, seconds_predict, "
                      "seconds_score FROM cells ORDER BY key");
  while (cell_rows.step(doing)) {
    CellRecord cell;
    cell.key = cell_rows.text(0);
    cell.plan = cell_rows.text(1);
    cell.strategy = cell_rows.text(2);
    cell.budget = cell_rows.real(3);
    cell.budget_unit = cell_rows.text(4);
    cell.repeat = cell_rows.integer(5);
    cell.spec_json = cell_rows.text(6);
    cell.status = cell_rows.text(7);
    cell.error = cell_rows.text(8);
    cell.labels_bought = cell_rows.integer(9);
    cell.hours_spent = cell_rows.real(10);
    cell.seconds_generate = cell_rows.real(11);
    cell.seconds_label = cell_rows.real(12);
    cell.seconds_train = cell_rows.real(13);
    cell.seconds_predict = cell_rows.real(14);
    cell.seconds_score = cell_rows.real(15);
    position[cell.key] = cells.size();
    cells.push_back(std::move(cell));
  }
  // Child rows in the order they were written (rowid); the foreign key guarantees their cell.
  const auto owner = [&](const Statement& row) -> CellRecord& {
    const auto found = position.find(row.text(0));
    if (found == position.end())
      throw UserError(connection.path() + ": the results store is damaged (rows of cell " + row.text(0) +
                      ", which it does not hold); restore it from a copy or run the study into a new --out file");
    return cells[found->second];
  };
  Statement metric(connection,
                   "SELECT cell_key, test_set, quantity, metric, value, lower, upper, n, note FROM metrics "
                   "ORDER BY rowid");
  while (metric.step(doing))
    owner(metric).metrics.push_back({metric.text(1), metric.text(2), metric.text(3), metric.real(4), metric.real(5),
                                     metric.real(6), metric.integer(7), metric.text(8)});
  Statement prediction(connection,
                       "SELECT cell_key, test_set, subject, rescan, quantity, predicted, truth FROM predictions "
                       "ORDER BY rowid");
  while (prediction.step(doing))
    owner(prediction)
        .predictions.push_back({prediction.text(1), prediction.integer(2), prediction.integer(3), prediction.text(4),
                                prediction.real(5), prediction.real(6)});
  Statement epoch(connection,
                  "SELECT cell_key, epoch, training_loss, validation_loss, validation_error FROM training_curves "
                  "ORDER BY rowid");
  while (epoch.step(doing))
    owner(epoch).training_curve.push_back({epoch.integer(1), epoch.real(2), epoch.real(3), epoch.real(4)});
  Statement cost(connection, "SELECT cell_key, part, subject, rater, kind, seconds FROM label_costs ORDER BY rowid");
  while (cost.step(doing))
    owner(cost).label_costs.push_back({cost.text(1), cost.integer(2), cost.integer(3), cost.text(4), cost.real(5)});
  Statement picture(connection,
                    "SELECT cell_key, role, subject, caption, scale, width, height, pixels FROM example_maps "
                    "ORDER BY rowid");
  while (picture.step(doing)) {
    ExampleMap map{picture.text(1),
                   picture.integer(2),
                   picture.text(3),
                   picture.text(4),
                   picture.integer(5),
                   picture.integer(6),
                   pixels_from_bytes(picture.blob(7))};
    if (map.width < 0 || map.height < 0 ||
        map.pixels.size() != static_cast<std::size_t>(map.width) * static_cast<std::size_t>(map.height))
      throw UserError(connection.path() + ": the results store is damaged (an example picture of cell " +
                      picture.text(0) + " holds " + std::to_string(map.pixels.size()) + " pixels for " +
                      std::to_string(map.width) + " x " + std::to_string(map.height) +
                      "); restore it from a copy or run the study into a new --out file");
    owner(picture).example_maps.push_back(std::move(map));
  }
  snapshot.commit();
  return cells;
}

}  // namespace frugal::store

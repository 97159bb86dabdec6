-- frugal results store, schema version 1: one SQLite file per study (results_store_v1.md).
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

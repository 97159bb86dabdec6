#!/usr/bin/env python3
"""Reference check of the results store (experiments/store) against Python's own sqlite3, csv and
json modules, as a user opens it: NaN is NULL, text and numbers read back exactly, and the JSON
export follows results_schema/results_export_v1.json (validated with jsonschema when installed).

Run by CTest as: /usr/bin/python3 results_store_reference_test.py --frugal PATH --source REPO_DIR
    --store-test PATH_OF_results_store_test
It runs the gtest ResultsStoreReference.WritesPythonCases, which writes store.db (cells a1 and b2
done, c0 failed; the cell() helper of results_store_test.cpp), csv/ and export.json.
"""

import argparse
import csv
import json
import math
import os
import sqlite3
import subprocess
import sys
import unittest

from frugal_testing import run_suite

STORE_TEST = None  # path of the results_store_test gtest program (from --store-test)
SOURCE = None  # repository root
WORK = None  # scratch folder, removed at the end
AWKWARD = 'n/a: constant column, "all equal"\nsecond line'  # kAwkwardText of the C++ test


def configure(frugal, source, scratch):
    del frugal  # the check needs no command line
    global SOURCE, WORK
    SOURCE = source
    WORK = scratch


def reference(*parts):
    return os.path.join(WORK, "reference", *parts)


class ResultsStoreReference(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        environment = dict(os.environ, FRUGAL_RESULTS_STORE_REFERENCE_DIR=WORK)
        done = subprocess.run([STORE_TEST, "--gtest_filter=ResultsStoreReference.WritesPythonCases"],
                              capture_output=True, text=True, timeout=120, env=environment)
        if done.returncode != 0 or "[  PASSED  ] 1 test" not in done.stdout:
            raise AssertionError(f"{STORE_TEST} exited {done.returncode}:\n{done.stdout}\n{done.stderr}")

    def connect(self):
        # Read-only, as a user inspecting a finished study would.
        return sqlite3.connect(f"file:{reference('store.db')}?mode=ro", uri=True)

    def test_sqlite_reads_the_store(self):
        with self.connect() as db:
            meta = dict(db.execute("SELECT key, value FROM meta"))
            self.assertEqual(meta["schema_version"], "1")
            self.assertEqual(meta["tool"], "frugal")
            self.assertEqual(meta["cells_total"], "12")
            self.assertEqual(db.execute("PRAGMA integrity_check").fetchone()[0], "ok")
            status = dict(db.execute("SELECT key, status FROM cells"))
            self.assertEqual(status, {"a1": "done", "b2": "done", "c0": "failed"})
            # cell("a1", 1): hours_spent = 0.1 * 1 + 1 / 3, the same double in C++ and Python.
            hours = db.execute("SELECT hours_spent FROM cells WHERE key = 'a1'").fetchone()[0]
            self.assertEqual(hours, 0.1 * 1 + 1.0 / 3.0)
            # Metric 1 of every cell is NaN with a note: NULL in SQL, not a number.
            value, lower, note = db.execute(
                "SELECT value, lower, note FROM metrics WHERE cell_key = 'a1' AND metric = 'metric1'").fetchone()
            self.assertIsNone(value)
            self.assertIsNone(lower)
            self.assertEqual(note, AWKWARD)
            self.assertEqual(db.execute("SELECT value FROM metrics WHERE cell_key = 'a1' AND metric = 'metric0'")
                             .fetchone()[0], 1.0 / 3.0)
            # cell(key, i) writes 3 + i % 5 predictions: 4 for a1, 5 for b2, none for a failure.
            counts = dict(db.execute("SELECT cell_key, count(*) FROM predictions GROUP BY cell_key"))
            self.assertEqual(counts, {"a1": 4, "b2": 5})
            self.assertEqual(db.execute("SELECT count(*) FROM predictions WHERE truth IS NULL").fetchone()[0], 2)

    def test_example_pictures_read_with_the_documented_recipe(self):
        import numpy  # Debian python3-numpy
        with self.connect() as db:
            rows = db.execute("SELECT cell_key, role, width, height, pixels FROM example_maps "
                              "ORDER BY cell_key, rowid").fetchall()
        # cell(key, i) keeps i % 3 pictures: 1 for a1, 2 for b2; picture m is (3 + m) x 2 with pixel
        # p = -1.5e-3 p^2 + 0.123456 m, in float32.
        self.assertEqual([(r[0], r[1]) for r in rows], [("a1", "test_image"), ("b2", "test_image"), ("b2", "label")])
        for m, (key, role, width, height, blob) in zip([0, 0, 1], rows):
            self.assertEqual((width, height), (3 + m, 2), key)
            # The recipe of results_schema/results_store_v1.md.
            picture = numpy.frombuffer(blob, "<f4").reshape(height, width)
            p = numpy.arange(width * height, dtype=numpy.float32).reshape(height, width)
            expected = numpy.float32(-1.5e-3) * p * p + numpy.float32(0.123456) * numpy.float32(m)
            numpy.testing.assert_allclose(picture, expected, rtol=1e-6, atol=1e-9, err_msg=key)

    def test_csv_matches_the_store(self):
        with open(reference("csv", "metrics.csv"), newline="") as table:
            first = table.readline()
            self.assertTrue(first.startswith("# frugal "), first)
            self.assertTrue(first.rstrip("\n").endswith(", results metrics, schema 1"), first)
            rows = list(csv.DictReader(table))
        with self.connect() as db:
            stored = db.execute("SELECT cell_key, metric, value, note FROM metrics ORDER BY cell_key, rowid").fetchall()
        self.assertEqual(len(rows), len(stored))
        for row, (key, metric, value, note) in zip(rows, stored):
            self.assertEqual((row["cell_key"], row["metric"], row["note"]), (key, metric, note))
            if value is None:
                self.assertEqual(row["value"], "NA")
            else:
                self.assertEqual(float(row["value"]), value)  # shortest round-trip decimal
        with open(reference("csv", "cells.csv"), newline="") as table:
            cells = list(csv.DictReader(line for line in table if not line.startswith("#")))
        self.assertEqual([c["cell_key"] for c in cells], ["a1", "b2", "c0"])
        self.assertEqual(cells[0]["plan"], "mixed, strong and weak")
        self.assertIn("\n", cells[2]["error"])

    def test_json_export_follows_its_schema(self):
        with open(reference("export.json")) as document_file:
            document = json.load(document_file)
        with open(os.path.join(SOURCE, "results_schema", "results_export_v1.json")) as schema_file:
            schema = json.load(schema_file)
        # The CSV columns are the schema's row properties, in order (spec is JSON-only).
        definitions = {"cells": "cell", "metrics": "metric", "predictions": "prediction",
                       "training_curves": "epoch", "label_costs": "label_cost"}
        for table, definition in definitions.items():
            with open(reference("csv", table + ".csv"), newline="") as csv_file:
                header = next(csv.reader(line for line in csv_file if not line.startswith("#")))
            self.assertEqual(header, [p for p in schema["$defs"][definition]["properties"] if p != "spec"], table)
            self.assertTrue(all(set(row) == set(schema["$defs"][definition]["properties"])
                                for row in document["tables"][table]), table)
        missing = [m for m in document["tables"]["metrics"] if m["metric"] == "metric1"]
        self.assertTrue(missing and all(m["value"] is None for m in missing))
        self.assertFalse(any(isinstance(v, float) and math.isnan(v)
                             for row in document["tables"]["predictions"] for v in row.values()))
        try:
            import jsonschema
        except ImportError:
            self.skipTest("python3-jsonschema is not installed")
        jsonschema.Draft202012Validator.check_schema(schema)
        jsonschema.Draft202012Validator(schema).validate(document)


if __name__ == "__main__":
    parser = argparse.ArgumentParser(add_help=False)
    parser.add_argument("--store-test", required=True)
    known, remaining = parser.parse_known_args()
    STORE_TEST = os.path.abspath(known.store_test)
    sys.argv = [sys.argv[0]] + remaining
    run_suite("Results store against Python's sqlite3, csv and json modules", "frugal-results-store-", configure)

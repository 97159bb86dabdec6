"""frugal plan on a results store written here, straight into the SQLite schema
(results_schema/results_store_v1.sql), whose answer is known by construction: every cell's count
MAE lies on a chosen inverse power law of the hours it spent, and the fitted hours are checked
against scipy.optimize.curve_fit on the same points (a general-purpose reference)."""

import json
import os
import sqlite3
import sys

import unittest

import numpy as np
from scipy.optimize import curve_fit

sys.path.insert(0, os.path.dirname(__file__))
import frugal_testing  # noqa: E402

FRUGAL = SOURCE = SCRATCH = None
BUDGETS = [2.0, 4.0, 8.0, 16.0, 32.0]
REPEATS = 4


def shift(repeat, k):
    # A repeat's own test set moves its values a little, differently at each budget (invented).
    return 0.02 * (((repeat * 7 + k * 3) % 5) - 2)


def write_store(path, arms):
    with open(os.path.join(SOURCE, "results_schema", "results_store_v1.sql")) as file:
        schema = file.read()
    db = sqlite3.connect(path)
    db.executescript(schema)
    cost = {"count_per_image_s": 12, "count_per_lesion_s": 1, "outline_per_image_s": 30}
    study = {"name": "synthetic", "seed": 1, "budgets": BUDGETS, "budget_unit": "hours", "repeats": REPEATS,
             "training_images": 100, "cohort": {"pool": 100, "test": 10}, "scenario": {"name": "s", "family": "streaks"},
             "plans": [{"name": plan, "kind": "count", "raters_per_image": 1, "strategies": [strategy],
                        "rater": {"name": "invented panel", "cost": cost}} for plan, strategy, *_ in arms]}
    meta = {"schema_version": "1", "tool": "frugal", "tool_version": "0.1.0", "study_name": "synthetic",
            "study_hash": "ab" * 32, "cells_total": "0", "resolved_yaml": json.dumps(study)}
    db.executemany("INSERT INTO meta VALUES (?, ?)", meta.items())
    points = {}
    for plan, strategy, a, b, c in arms:
        for repeat in range(REPEATS):
            for k, budget in enumerate(BUDGETS):
                key = f"{plan}-{strategy}-{budget}-{repeat}"
                hours = budget * (1 - 0.01 * repeat)
                mae = a * hours ** (-b) + c + shift(repeat, k)
                points.setdefault(plan, []).append((hours, mae))
                spec = json.dumps({"plan": {"name": plan, "kind": "count"}})
                db.execute("INSERT INTO cells VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
                           (key, plan, strategy, budget, "hours", repeat, spec, "done", "", int(budget * 50),
                            hours, 0, 0, 0, 0, 0))
                db.execute("INSERT INTO metrics VALUES (?,?,?,?,?,?,?,?,?)",
                           (key, "test", "count", "mae", mae, None, None, 10, ""))
                for subject in range(10):  # invented predictions, for the agreement figures
                    truth = float(subject % 6)
                    db.execute("INSERT INTO predictions VALUES (?,?,?,?,?,?,?)",
                               (key, "test", 1000 * repeat + subject, 0, "count", truth + shift(subject, k), truth))
    db.commit()
    db.close()
    return points


class PlanCommand(unittest.TestCase):
    def test_hours_match_curve_fit_and_the_cheapest_plan_is_found(self):
        store = os.path.join(SCRATCH, "known.db")
        points = write_store(store, [("counts", "count-map", 4.0, 0.5, 0.2), ("outlines", "mask", 6.0, 0.5, 0.2)])
        out = os.path.join(SCRATCH, "plan.json")
        frugal_testing.run_frugal(FRUGAL, "plan", store, "--target", "count.mae<=0.8", "--json", out, "--draws", "300")
        with open(out) as file:
            answer = json.load(file)
        self.assertEqual(answer["cheapest"], "counts / count-map")
        for arm in answer["arms"]:
            hours, mae = np.array(points[arm["plan"]]).T
            # Figueroa et al. (2012, BMC Med Inform Decis Mak 12:8) weights: sigma = 1/sqrt(h / sum h).
            p, _ = curve_fit(lambda h, a, b, c: a * np.power(h, -b) + c, hours, mae, p0=(1, 0.3, 0),
                             sigma=1 / np.sqrt(hours / hours.sum()), maxfev=20000)
            fit = arm["curves"][0]["fit"]
            for ours, theirs in zip((fit["a"], fit["b"], fit["c"]), p):
                self.assertAlmostEqual(ours, theirs, delta=1e-4 * abs(theirs) + 1e-9)
            expected = (p[0] / (0.8 - p[2])) ** (1 / p[1])
            self.assertAlmostEqual(arm["hours"]["estimate"], expected, delta=1e-3 * expected)
            self.assertLessEqual(arm["hours"]["lower"], arm["hours"]["estimate"])
            self.assertGreaterEqual(arm["hours"]["upper"], arm["hours"]["estimate"])
        self.assertTrue(answer["difference"]["supported"])
        table = frugal_testing.run_frugal(FRUGAL, "plan", store, "--target", "count.mae<=0.8", "--draws", "300").stdout
        self.assertIn("the cheapest plan is counts / count-map", table)
        self.assertIn("Caution:", table)

    def test_bad_targets_and_stores_are_clear_errors(self):
        store = os.path.join(SCRATCH, "errors.db")
        write_store(store, [("counts", "count-map", 4.0, 0.5, 0.2)])
        for target, words in [("count.mae>=0.8", "use <="), ("count.dice<=1", "unknown metric"),
                              ("affected_fraction.mae<=0.1", "it holds: count.mae")]:
            result = frugal_testing.run_frugal(FRUGAL, "plan", store, "--target", target, expect=2)
            self.assertIn(words, result.stderr)
        missing = frugal_testing.run_frugal(FRUGAL, "plan", os.path.join(SCRATCH, "none.db"), "--target",
                                            "count.mae<=1", expect=2)
        self.assertIn("none.db", missing.stderr)


class ReportCommand(unittest.TestCase):
    def test_figures_and_their_csvs_hold_the_plotted_series(self):
        store = os.path.join(SCRATCH, "report.db")
        write_store(store, [("counts", "count-map", 4.0, 0.5, 0.2), ("outlines", "mask", 6.0, 0.5, 0.2)])
        out = os.path.join(SCRATCH, "report")
        frugal_testing.run_frugal(FRUGAL, "report", store, "--target", "count.mae<=0.8", "--out", out, "--draws", "200")
        figures = os.path.join(out, "figures")
        for stem in ["cost-error", "learning-curve-counts-count-map", "learning-curve-outlines-mask",
                     "estimate-vs-truth", "bland-altman"]:
            for extension in ["svg", "png", "pdf", "csv"]:
                path = os.path.join(figures, f"{stem}.{extension}")
                self.assertGreater(os.path.getsize(path), 200, path)
        rows = frugal_testing.read_table(os.path.join(figures, "learning-curve-counts-count-map.csv"))
        each = [r for r in rows if r["series"] == "each repeat"]
        self.assertEqual(len(each), REPEATS * len(BUDGETS))
        self.assertEqual(len([r for r in rows if r["series"] == "mean over repeats"]), len(BUDGETS))
        fitted = [r for r in rows if r["series"] == "fitted curve"]
        with open(os.path.join(out, "plan.json")) as file:
            fit = json.load(file)["arms"][0]["curves"][0]["fit"]
        for row in fitted:  # the plotted line is the fitted curve itself
            h = float(row["x"])
            self.assertAlmostEqual(float(row["y"]), fit["a"] * h ** -fit["b"] + fit["c"], delta=1e-9)
        target = [r for r in rows if r["style"] == "horizontal_line"]
        self.assertEqual([float(r["y"]) for r in target], [0.8])
        subjects = frugal_testing.read_table(os.path.join(figures, "bland-altman.csv"))
        self.assertEqual(len([r for r in subjects if r["series"] == "subjects"]), REPEATS * 10)
        with open(os.path.join(out, "report.html")) as file:
            html = file.read()
        self.assertIn("cheapest plan is counts / count-map", html)
        self.assertIn("do not validate a method for clinical use", html)
        self.assertNotIn("http://", html.replace("http://www.w3.org/", ""))  # SVG namespaces are names, not fetches
        self.assertNotIn("https://", html)


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, SCRATCH
    FRUGAL, SOURCE, SCRATCH = frugal, source, scratch


if __name__ == "__main__":
    frugal_testing.run_suite(__doc__, "frugal-plan-", configure)

#!/usr/bin/env python3
"""Checks `frugal labels` and `frugal calibrate` from the outside: every label kind with every
bundled rater file (raters/*.yaml, so the examples cannot rot), the files they write, their costs,
determinism over thread counts, and clear errors for bad input.

Run by CTest as: /usr/bin/python3 labels_cli_test.py --frugal PATH --source REPO_DIR
"""

import glob
import json
import os
import unittest

import nibabel as nib
import numpy as np

from frugal_testing import read_table, run_frugal, run_suite

FRUGAL = None
SOURCE = None
WORK = None
SEED = 11
COUNT = 6
KINDS = ["presence", "count", "grade", "points", "partial", "outline"]



def run(*args, expect=0):
    return run_frugal(FRUGAL, *args, expect=expect)


def small_scenario(family):
    """The bundled demo scenario at 64x64, written next to the test's files."""
    name = {"streaks": "ageing-cohort-streaks.yaml", "voids": "screening-voids.yaml"}[family]
    with open(os.path.join(SOURCE, "scenarios", name)) as source:
        text = source.read().replace("size_2d: [128, 128]", "size_2d: [64, 64]")
    path = os.path.join(WORK, f"small-{family}.yaml")
    with open(path, "w") as target:
        target.write(text)
    return path


def bundled_raters():
    return sorted(glob.glob(os.path.join(SOURCE, "raters", "*.yaml")))


class LabelsTest(unittest.TestCase):
    def labels(self, family, kind, rater, folder, *extra):
        out = os.path.join(WORK, folder)
        run("labels", small_scenario(family), "--rater", rater, "--kind", kind, "--count", COUNT, "--seed", SEED,
            "--out", out, "--overwrite", *extra)
        return out

    def test_every_kind_with_every_bundled_rater(self):
        raters = bundled_raters()
        self.assertGreaterEqual(len(raters), 1, "raters/ holds no example rater files")
        for rater in raters:
            for kind in KINDS:
                family = "voids" if kind == "grade" else "streaks"
                with self.subTest(rater=os.path.basename(rater), kind=kind):
                    out = self.labels(family, kind, rater, f"{os.path.basename(rater)}-{kind}")
                    manifest = json.load(open(os.path.join(out, "manifest.json")))
                    rows = read_table(os.path.join(out, "labels.csv"))
                    # One label per subject and panel member.
                    self.assertEqual(len(rows), COUNT * manifest["raters"])
                    self.assertTrue(all(r["kind"] == kind for r in rows))
                    # The manifest's annotator-hours are the sum of the labels' costs.
                    seconds = sum(float(r["cost_seconds"]) for r in rows)
                    self.assertTrue(all(float(r["cost_seconds"]) > 0 for r in rows))
                    self.assertAlmostEqual(manifest["annotator_hours"], seconds / 3600.0, places=6)
                    if kind in ("partial", "outline"):
                        for r in rows:
                            mask = nib.load(os.path.join(out, r["mask"]))
                            self.assertEqual(mask.shape, (64, 64))
                            self.assertTrue(set(np.unique(np.asarray(mask.dataobj))) <= {0, 1})
                    if kind == "points":
                        clicks = read_table(os.path.join(out, "clicks.csv"))
                        self.assertEqual(len(clicks), sum(int(r["clicks"]) for r in rows))
                    if kind == "presence":
                        self.assertTrue(all(r["value"] in ("0", "1") for r in rows))

    def test_outlines_overlap_the_truth_of_the_same_phantom_set(self):
        # Labels belong to the phantom set drawn with the same scenario and seed: outlines overlap
        # that set's lesion masks (mean Dice > 0.5; common practice, no source), while a set drawn
        # with another seed would not overlap at all.
        scenario = small_scenario("streaks")
        phantoms = os.path.join(WORK, "phantoms")
        run("phantoms", scenario, "--count", COUNT, "--seed", SEED, "--out", phantoms, "--overwrite")
        out = self.labels("streaks", "outline", bundled_raters()[0], "overlap")
        dices = []
        for row in read_table(os.path.join(out, "labels.csv")):
            truth = np.asarray(nib.load(os.path.join(phantoms, "labels", f"subject_{int(row['subject']):06d}.nii.gz")).dataobj) == 2
            outline = np.asarray(nib.load(os.path.join(out, row["mask"])).dataobj) == 1
            if truth.sum() == 0:
                continue
            dices.append(2.0 * (truth & outline).sum() / (truth.sum() + outline.sum()))
        self.assertGreater(np.mean(dices), 0.5, f"Dice per subject: {np.round(dices, 3)}")

    def test_threads_do_not_change_the_files(self):
        rater = bundled_raters()[0]
        one = self.labels("streaks", "outline", rater, "one-thread", "--threads", 1)
        two = self.labels("streaks", "outline", rater, "two-threads", "--threads", 2)
        for name in ["labels.csv", "manifest.json"] + sorted(os.listdir(os.path.join(one, "masks"))):
            path = name if name.endswith((".csv", ".json")) else os.path.join("masks", name)
            with open(os.path.join(one, path), "rb") as a, open(os.path.join(two, path), "rb") as b:
                self.assertEqual(a.read(), b.read(), path)

    def test_bad_input_exits_with_2_and_names_the_problem(self):
        scenario, rater = small_scenario("streaks"), bundled_raters()[0]
        result = run("labels", scenario, "--rater", rater, "--kind", "scribble", "--count", 2, "--out",
                     os.path.join(WORK, "bad"), expect=2)
        self.assertIn("scribble", result.stderr)
        self.assertIn("allowed", result.stderr)
        broken = os.path.join(WORK, "broken-rater.yaml")
        with open(broken, "w") as f:
            f.write("name: x\ndetection:\n  size50: 3\n")
        result = run("labels", scenario, "--rater", broken, "--kind", "count", "--count", 2, "--out",
                     os.path.join(WORK, "bad2"), expect=2)
        self.assertIn("broken-rater.yaml:3", result.stderr)
        result = run("labels", scenario, "--rater", rater, "--kind", "count", "--scope", "reference-slice",
                     "--count", 2, "--out", os.path.join(WORK, "bad3"), expect=2)
        self.assertIn("3D", result.stderr)


class CalibrateTest(unittest.TestCase):
    def test_calibrated_rater_file_is_accepted_by_labels(self):
        out = os.path.join(WORK, "calibrated.yaml")
        result = run("calibrate", small_scenario("voids"), "--rater", bundled_raters()[0], "--statistic", "kappa",
                     "--target", 0.6, "--subjects", 80, "--out", out, "--json")
        report = json.loads(result.stdout)
        # The search stops within its tolerance of the target (0.002, calibration.h).
        self.assertAlmostEqual(report["achieved"], 0.6, delta=0.002)
        self.assertLessEqual(report["lower_95"], 0.6)
        self.assertGreaterEqual(report["upper_95"], 0.6)
        run("labels", small_scenario("voids"), "--rater", out, "--kind", "grade", "--count", 3, "--out",
            os.path.join(WORK, "after-calibration"), "--overwrite")

    def test_unreachable_target_exits_with_2(self):
        result = run("calibrate", small_scenario("voids"), "--rater", bundled_raters()[0], "--statistic", "kappa",
                     "--target", 1.5, "--out", os.path.join(WORK, "never.yaml"), expect=2)
        self.assertIn("--target", result.stderr)


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, WORK
    FRUGAL, SOURCE, WORK = frugal, source, scratch



if __name__ == "__main__":
    run_suite(__doc__.splitlines()[0], "frugal-labels-", configure)

#!/usr/bin/env python3
"""Checks `frugal train`, `frugal predict` and `frugal score` from the outside on a tiny problem:
phantoms -> labels -> train (count-map on counts, mask on outlines) -> predict -> score, the files
and columns they write, the scores against numpy/scipy/sklearn recomputed from the same files, a
predictions table written here as a user's own method would, and clear errors for bad input.

Run by CTest as: /usr/bin/python3 train_predict_score_cli_test.py --frugal PATH --source REPO_DIR
"""

import json
import os
import unittest

import nibabel as nib
import numpy as np
from scipy import stats
from sklearn.metrics import roc_auc_score

from frugal_testing import read_table, run_frugal, run_suite

FRUGAL = None
SOURCE = None
WORK = None
SEED = 13
TRAIN = 40
TEST = 12
OUTLINED = 16
# Tiny training: the test checks plumbing and scoring, not how well a network learns.
TINY = ["--epochs", 2, "--width", 4, "--depth", 2, "--batch-size", 8, "--threads", 1]


def run(*args, expect=0):
    return run_frugal(FRUGAL, *args, expect=expect)


def path(*parts):
    return os.path.join(WORK, *parts)


def schema_columns(table):
    with open(os.path.join(SOURCE, "results_schema", "predictions_v1.json")) as schema:
        return [column["name"] for column in json.load(schema)["tables"][table]]


def header_of(csv_path):
    with open(csv_path) as table:
        lines = [line for line in table if not line.startswith("#")]
    return lines[0].strip().split(",")


def nan_or(value):
    return float("nan") if value == "NA" else float(value)


class Pipeline:
    """Builds the tiny problem once: two phantom sets, two label sets, two models, two predictions."""
    built = False

    @classmethod
    def build(cls):
        if cls.built:
            return
        with open(os.path.join(SOURCE, "scenarios", "ageing-cohort-streaks-small.yaml")) as source:
            text = source.read().replace("size_2d: [64, 64]", "size_2d: [32, 32]")
        cls.scenario = path("tiny.yaml")
        with open(cls.scenario, "w") as target:
            target.write(text)
        run("phantoms", cls.scenario, "--count", TRAIN, "--seed", SEED, "--out", path("train"), "--preview-tiles", 0)
        run("phantoms", cls.scenario, "--count", TEST, "--first", 1000, "--seed", SEED, "--out", path("test"),
            "--preview-tiles", 0)
        run("labels", cls.scenario, "--rater", os.path.join(SOURCE, "raters", "quick-reader.yaml"), "--kind", "count",
            "--count", TRAIN, "--seed", SEED, "--out", path("counts"))
        run("labels", cls.scenario, "--rater", os.path.join(SOURCE, "raters", "careful-reader.yaml"), "--kind",
            "outline", "--count", OUTLINED, "--seed", SEED, "--out", path("outlines"))
        cls.train_output = {
            "count-map": run("train", "--phantoms", path("train"), "--labels", path("counts"), "--strategy",
                             "count-map", "--out", path("count-map.pt"), *TINY).stdout,
            "mask": run("train", "--phantoms", path("train"), "--labels", path("outlines"), "--rater", 0,
                        "--strategy", "mask", "--out", path("mask.pt"), *TINY).stdout,
        }
        for strategy in ("count-map", "mask"):
            run("predict", path(f"{strategy}.pt"), "--images", path("test"), "--out", path(f"predicted-{strategy}"),
                "--threads", 1)
            run("score", path(f"predicted-{strategy}", "predictions.csv"), "--phantoms", path("test"), "--json",
                path(f"score-{strategy}.json"))
        cls.built = True


class TrainPredictScoreTest(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        Pipeline.build()

    def test_train_writes_a_model_and_a_sidecar_with_the_costs(self):
        for strategy, labels, rows in (("count-map", "counts", TRAIN * 2), ("mask", "outlines", OUTLINED)):
            with self.subTest(strategy=strategy):
                self.assertTrue(os.path.getsize(path(f"{strategy}.pt")) > 0)
                with open(path(f"{strategy}.pt.json")) as f:
                    sidecar = json.load(f)
                with open(path(labels, "manifest.json")) as f:
                    manifest = json.load(f)
                self.assertEqual(sidecar["strategy"], strategy)
                self.assertEqual(sidecar["options"]["epochs"], 2)
                self.assertEqual(sidecar["options"]["width"], 4)
                self.assertEqual(sidecar["summary"]["epochs_run"], 2)
                # The quick panel has 2 readers (raters/quick-reader.yaml); the mask keeps rater 0 only.
                self.assertEqual(sidecar["training_images"], rows)
                self.assertAlmostEqual(sidecar["annotator_hours"], manifest["annotator_hours"], places=9)
                used = sum(float(r["cost_seconds"]) for r in read_table(path(labels, "labels.csv"))
                           if strategy == "count-map" or r["rater"] == "0") / 3600.0
                self.assertAlmostEqual(sidecar["annotator_hours_used"], used, places=9)
                self.assertIn("epochs", Pipeline.train_output[strategy])
                self.assertFalse(any(name.endswith(".partial") for name in os.listdir(WORK)))

    def test_predictions_follow_the_schema_and_the_truth_order(self):
        truth = read_table(path("test", "truth.csv"))
        for strategy, kind in (("count-map", "density"), ("mask", "probability")):
            with self.subTest(strategy=strategy):
                table = path(f"predicted-{strategy}", "predictions.csv")
                self.assertEqual(header_of(table), schema_columns("predictions.csv"))
                with open(table) as f:
                    self.assertTrue(f.readline().startswith("# frugal "))
                rows = read_table(table)
                self.assertEqual([(r["subject"], r["rescan"]) for r in rows],
                                 [(t["subject"], t["rescan"]) for t in truth])
                for row, truth_row in zip(rows, truth):
                    self.assertEqual(row["map_kind"], kind)
                    image = nib.load(path("test", truth_row["image"]))
                    prediction = nib.load(path(f"predicted-{strategy}", row["map"]))
                    self.assertEqual(prediction.shape, image.shape)
                    self.assertEqual(prediction.get_data_dtype(), np.float32)
                    np.testing.assert_allclose(prediction.affine, image.affine, atol=1e-6)
                    values = prediction.get_fdata()
                    self.assertGreaterEqual(float(values.min()), 0.0)
                    if strategy == "count-map":
                        # learner.h: count = the density map's sum; presence = 1 - exp(-count).
                        self.assertAlmostEqual(float(row["count"]), float(values.sum()), delta=1e-4 * max(1, values.sum()))
                        self.assertAlmostEqual(float(row["presence_probability"]), 1 - np.exp(-float(row["count"])),
                                               places=6)
                        self.assertEqual(row["affected_fraction"], "NA")
                    else:
                        self.assertLessEqual(float(values.max()), 1.0)
                        self.assertAlmostEqual(float(row["presence_probability"]), float(values.max()), places=6)

    def test_scores_agree_with_numpy_scipy_and_sklearn(self):
        truth = {(r["subject"], r["rescan"]): r for r in read_table(path("test", "truth.csv"))}
        for strategy in ("count-map", "mask"):
            with self.subTest(strategy=strategy):
                with open(path(f"score-{strategy}.json")) as f:
                    score = json.load(f)
                rows = read_table(path(f"predicted-{strategy}", "predictions.csv"))
                predicted = np.array([float(r["count"]) for r in rows])
                actual = np.array([float(truth[(r["subject"], r["rescan"])]["count"]) for r in rows])
                difference = predicted - actual
                count = score["quantities"]["count"]
                self.assertEqual(count["n"], TEST)
                # numpy means; Bland & Altman (1999) limits with the SD at ddof = 1.
                self.assertAlmostEqual(count["mae"], np.mean(np.abs(difference)), places=6)
                self.assertAlmostEqual(count["bias"], np.mean(difference), places=6)
                self.assertAlmostEqual(count["rmse"], np.sqrt(np.mean(difference ** 2)), places=6)
                sd = np.std(difference, ddof=1)
                self.assertAlmostEqual(count["bland_altman_lower_limit"], np.mean(difference) - 1.96 * sd, places=6)
                self.assertAlmostEqual(count["bland_altman_upper_limit"], np.mean(difference) + 1.96 * sd, places=6)
                if np.ptp(predicted) > 0:
                    # scipy.stats.pearsonr / spearmanr.
                    self.assertAlmostEqual(count["pearson_r"], stats.pearsonr(predicted, actual)[0], places=6)
                    self.assertAlmostEqual(count["spearman_rho"], stats.spearmanr(predicted, actual)[0], places=6)
                presence = np.array([float(r["presence_probability"]) for r in rows])
                present = (actual > 0).astype(int)
                if 0 < present.sum() < len(present):
                    # sklearn.metrics.roc_auc_score (ties count one half).
                    self.assertAlmostEqual(score["presence"]["auc"], roc_auc_score(present, presence), places=9)
                self.assertAlmostEqual(score["presence"]["accuracy"], np.mean((presence > 0.5) == present), places=9)

    def test_pooled_dice_of_the_mask_maps_agrees_with_numpy(self):
        with open(path("score-mask.json")) as f:
            maps = json.load(f)["maps"]
        intersection = truth_voxels = predicted_voxels = 0
        for row in read_table(path("predicted-mask", "predictions.csv")):
            labels = np.asarray(nib.load(path("test", "labels", f"subject_{int(row['subject']):06d}.nii.gz")).dataobj)
            lesion = labels == 2  # docs/phantom-set.md: code 2 is a lesion
            marked = nib.load(path("predicted-mask", row["map"])).get_fdata() > 0.5
            intersection += int((lesion & marked).sum())
            truth_voxels += int(lesion.sum())
            predicted_voxels += int(marked.sum())
        self.assertEqual(maps["images"], TEST)
        # Dice (1945): 2|A and B| / (|A| + |B|), pooled over the images.
        expected = 1.0 if truth_voxels + predicted_voxels == 0 else 2 * intersection / (truth_voxels + predicted_voxels)
        self.assertAlmostEqual(maps["pooled_dice"], expected, places=9)

    def test_an_image_in_other_units_is_predicted_with_a_warning(self):
        # A test image stored as integers x 1000 (another tool's export), beside an untouched copy:
        # the first is far from the training intensities, the second is not (learner.h's rule:
        # mean more than 3 training SDs away, or spread more than 4-fold different).
        source = path("test", "images", "subject_001000.nii.gz")
        image = nib.load(source)
        scaled = nib.Nifti1Image(np.round(np.asarray(image.dataobj) * 1000).astype(np.int16), image.affine)
        nib.save(scaled, path("scaled_x1000.nii.gz"))
        result = run("predict", path("count-map.pt"), "--images", path("scaled_x1000.nii.gz"), source, "--out",
                     path("predicted-scaled"))
        self.assertIn("warning: 1 of 2 images have intensities far from those", result.stderr)
        self.assertIn("scaled_x1000.nii.gz", result.stderr)
        with open(path("predicted-scaled", "manifest.json")) as manifest:
            self.assertEqual(json.load(manifest)["images_with_far_intensities"], 1)
        untouched = run("predict", path("count-map.pt"), "--images", source, "--out", path("predicted-untouched"))
        self.assertNotIn("warning", untouched.stderr)

    def test_a_users_own_table_is_scored(self):
        # A method in another language writes only subject and count, in its own order, plus a column
        # frugal does not know.
        truth = read_table(path("test", "truth.csv"))
        generator = np.random.default_rng(SEED)
        # Clipped at 0: score refuses a negative count (a lesion count cannot be below 0).
        counts = np.maximum(0.0, np.array([float(t["count"]) for t in truth]) + generator.normal(0, 1.5, len(truth)))
        table = path("mine.csv")
        with open(table, "w") as f:
            f.write("subject,count,method\n")
            for t, c in reversed(list(zip(truth, counts))):
                f.write(f"{t['subject']},{c!r},threshold-and-guess\n")
        result = run("score", table, "--phantoms", path("test"), "--json", path("mine.json"))
        self.assertIn("count", result.stdout)
        self.assertIn("method", result.stdout)  # named as ignored
        with open(path("mine.json")) as f:
            score = json.load(f)
        difference = counts - np.array([float(t["count"]) for t in truth])
        self.assertEqual(score["quantities"]["count"]["n"], len(truth))
        self.assertAlmostEqual(score["quantities"]["count"]["mae"], np.mean(np.abs(difference)), places=9)
        self.assertAlmostEqual(score["quantities"]["count"]["bias"], np.mean(difference), places=9)
        self.assertEqual(list(score["quantities"]), ["count"])
        self.assertNotIn("maps", score)

    def test_bad_input_exits_with_2_and_names_the_file(self):
        missing = path("no-such-labels")
        result = run("train", "--phantoms", path("train"), "--labels", missing, "--strategy", "count-map", "--out",
                     path("never.pt"), *TINY, expect=2)
        self.assertIn("no-such-labels", result.stderr)
        self.assertFalse(os.path.exists(path("never.pt")))

        result = run("train", "--phantoms", path("test"), "--labels", path("counts"), "--strategy", "count-map",
                     "--out", path("never.pt"), *TINY, expect=2)
        self.assertIn("subject 0", result.stderr)  # labels of subjects the test set does not hold

        result = run("train", "--phantoms", path("train"), "--labels", path("counts"), "--labels", path("outlines"),
                     "--strategy", "count-map", "--out", path("never.pt"), *TINY, expect=2)
        self.assertIn("mixed", result.stderr)

        rows = read_table(path("predicted-mask", "predictions.csv"))
        unknown = path("unknown-subject.csv")
        with open(unknown, "w") as f:
            f.write("subject,count\n")
            f.write(f"{rows[0]['subject']},1\n")
            f.write("999999,2\n")
        result = run("score", unknown, "--phantoms", path("test"), expect=2)
        self.assertIn("unknown-subject.csv line 3", result.stderr)
        self.assertIn("999999", result.stderr)

        text = path("non-numeric.csv")
        with open(text, "w") as f:
            f.write("subject,count\n")
            f.write(f"{rows[0]['subject']},two\n")
        result = run("score", text, "--phantoms", path("test"), expect=2)
        self.assertIn("non-numeric.csv line 2, column count", result.stderr)
        self.assertIn("not a number", result.stderr)

        duplicate = path("duplicate.csv")
        with open(duplicate, "w") as f:
            f.write(f"subject,count\n{rows[0]['subject']},1\n{rows[0]['subject']},2\n")
        result = run("score", duplicate, "--phantoms", path("test"), expect=2)
        self.assertIn("duplicate.csv line 3", result.stderr)

        result = run("predict", path("no-model.pt"), "--images", path("test"), "--out", path("never"), expect=2)
        self.assertIn("no-model.pt", result.stderr)
        result = run("predict", path("mask.pt"), "--images", path("test"), "--out", path("predicted-mask"), expect=2)
        self.assertIn("--overwrite", result.stderr)


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, WORK
    FRUGAL, SOURCE, WORK = frugal, source, scratch


if __name__ == "__main__":
    run_suite(__doc__.splitlines()[0], "frugal-train-", configure)

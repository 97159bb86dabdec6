#!/usr/bin/env python3
"""Checks that `frugal train` never reads truth: a copy of a phantom set whose truth (truth.csv's
truth columns, the truth label images and objects.csv) is shuffled among subjects must give a
model whose predictions are identical to those of the model trained on the set itself. The
training set is built by the command line's own path (phantom set folder + label set folder), so a
truth value that leaked into training would change the predictions and fail the test.

Run by CTest as: /usr/bin/python3 shuffled_truth_cli_test.py --frugal PATH --source REPO_DIR
"""

import csv
import os
import shutil
import unittest

from frugal_testing import read_table, run_frugal, run_suite

FRUGAL = None
SOURCE = None
WORK = None
SEED = 17
COUNT = 24
# Tiny training: only the equality of the two models' predictions matters, not their quality.
TINY = ["--epochs", 2, "--width", 4, "--depth", 2, "--batch-size", 8, "--threads", 1]
# Columns of truth.csv that identify the image rather than describe its truth.
KEPT = {"subject", "rescan", "family", "image"}


def run(*args, expect=0):
    return run_frugal(FRUGAL, *args, expect=expect)


def path(*parts):
    return os.path.join(WORK, *parts)


def rewrite_table(csv_path, change):
    """Rewrites a frugal CSV table, keeping its '#' version line, with change(rows) -> rows."""
    with open(csv_path, newline="") as table:
        lines = table.readlines()
    comments = [line for line in lines if line.startswith("#")]
    reader = csv.DictReader(line for line in lines if not line.startswith("#"))
    columns = reader.fieldnames
    rows = change(list(reader))
    with open(csv_path, "w", newline="") as table:
        table.writelines(comments)
        writer = csv.DictWriter(table, fieldnames=columns, lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)


def shuffle_truth(folder):
    """Gives each subject another subject's truth: a fixed derangement (subject i gets the truth of
    subject i + 5 mod n), so no row keeps its own."""
    def shuffled(rows):
        n = len(rows)
        return [{key: (row[key] if key in KEPT else rows[(i + 5) % n][key]) for key in row}
                for i, row in enumerate(rows)]

    rows = read_table(os.path.join(folder, "truth.csv"))
    subjects = [int(row["subject"]) for row in rows]
    rewrite_table(os.path.join(folder, "truth.csv"), shuffled)
    # The truth label images move with their rows (truth.csv names them in column "labels").
    moved = {}
    for i, row in enumerate(rows):
        source = os.path.join(folder, rows[(i + 5) % len(rows)]["labels"])
        with open(source, "rb") as image:
            moved[row["labels"]] = image.read()
    for name, content in moved.items():
        with open(os.path.join(folder, name), "wb") as image:
            image.write(content)
    # Each object is assigned to the subject that now carries its truth.
    new_subject = {subjects[(i + 5) % len(subjects)]: subjects[i] for i in range(len(subjects))}
    rewrite_table(os.path.join(folder, "objects.csv"),
                  lambda objects: sorted(({**o, "subject": str(new_subject[int(o["subject"])])} for o in objects),
                                         key=lambda o: int(o["subject"])))


class ShuffledTruthTest(unittest.TestCase):
    def test_shuffled_truth_changes_no_prediction(self):
        scenario = os.path.join(SOURCE, "tests", "data", "scenarios", "reference-streaks.yaml")
        run("phantoms", scenario, "--count", COUNT, "--seed", SEED, "--out", path("set"), "--preview-tiles", 0)
        run("labels", scenario, "--rater", os.path.join(SOURCE, "raters", "quick-reader.yaml"), "--kind", "count",
            "--count", COUNT, "--seed", SEED, "--out", path("counts"))
        shutil.copytree(path("set"), path("shuffled"))
        shuffle_truth(path("shuffled"))
        before = read_table(path("set", "truth.csv"))
        after = read_table(path("shuffled", "truth.csv"))
        # The shuffle must really change truth, or the comparison below proves nothing.
        self.assertNotEqual([r["count"] for r in before], [r["count"] for r in after])
        for name in ("set", "shuffled"):
            run("train", "--phantoms", path(name), "--labels", path("counts"), "--strategy", "count-map", "--out",
                path(f"{name}.pt"), "--seed", SEED, *TINY)
            run("predict", path(f"{name}.pt"), "--images", path("set"), "--out", path(f"predicted-{name}"),
                "--threads", 1)
        original = read_table(path("predicted-set", "predictions.csv"))
        shuffled = read_table(path("predicted-shuffled", "predictions.csv"))
        self.assertEqual(len(original), COUNT)
        # Bit-identical: training is deterministic for a seed (docs/learning.md), so any difference
        # can only come from truth (common practice, no source).
        self.assertEqual(original, shuffled)


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, WORK
    FRUGAL, SOURCE, WORK = frugal, source, scratch


if __name__ == "__main__":
    run_suite(__doc__.splitlines()[0], "frugal-shuffled-truth-", configure)

#!/usr/bin/env python3
"""Every writing command on a full disk: a 1 MiB tmpfs is mounted and filled to within a few KiB,
and each command writes its output there. Each must exit 2 with a message naming its output and
the lack of space, leave no temporary (.partial) file and no output that looks finished (a
manifest, a checkpoint, a store or a report), and must not crash (exit 134) or report success.
Needs root to mount the tmpfs (the CI machine runs as root); skipped with a message otherwise.
"""

import glob
import os
import shutil
import subprocess
import sys
import unittest

sys.path.insert(0, os.path.dirname(__file__))
import frugal_testing  # noqa: E402

FRUGAL = SOURCE = SCRATCH = None
DISK = None  # mount point of the small tmpfs


def fill(leave_bytes):
    """Fills the tmpfs, leaving about `leave_bytes` free."""
    for name in os.listdir(DISK):
        shutil.rmtree(os.path.join(DISK, name), ignore_errors=True) if os.path.isdir(os.path.join(DISK, name)) \
            else os.remove(os.path.join(DISK, name))
    free = shutil.disk_usage(DISK).free
    with open(os.path.join(DISK, "ballast"), "wb") as ballast:
        ballast.write(b"\0" * max(0, free - leave_bytes))


class FullDisk(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        global DISK
        if os.geteuid() != 0:
            raise unittest.SkipTest("mounting a small tmpfs needs root")
        DISK = os.path.join(SCRATCH, "disk")
        os.makedirs(DISK)
        mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=1m", "tmpfs", DISK], capture_output=True, text=True)
        if mounted.returncode != 0:
            raise unittest.SkipTest("cannot mount a tmpfs here: " + mounted.stderr.strip())
        run = lambda *args: frugal_testing.run_frugal(FRUGAL, *args)  # noqa: E731
        with open(os.path.join(SOURCE, "scenarios", "ageing-cohort-streaks-small.yaml")) as source:
            text = source.read().replace("size_2d: [64, 64]", "size_2d: [32, 32]")
        cls.scenario = os.path.join(SCRATCH, "tiny.yaml")
        with open(cls.scenario, "w") as target:
            target.write(text)
        cls.rater = os.path.join(SOURCE, "raters", "quick-reader.yaml")
        p = lambda name: os.path.join(SCRATCH, name)  # noqa: E731
        run("phantoms", cls.scenario, "--count", 60, "--seed", 1, "--out", p("phantoms"), "--preview-tiles", 0)
        run("labels", cls.scenario, "--rater", cls.rater, "--kind", "count", "--count", 60, "--seed", 1, "--out",
            p("counts"))
        tiny = ["--epochs", 1, "--width", 4, "--depth", 2, "--threads", 1]
        run("train", "--phantoms", p("phantoms"), "--labels", p("counts"), "--strategy", "count-map", "--out",
            p("model.pt"), *tiny)
        run("predict", p("model.pt"), "--images", p("phantoms"), "--out", p("predicted"))
        with open(p("study.yaml"), "w") as study:
            study.write(f"""name: full-disk
seed: 1
scenario: {cls.scenario}
cohort: {{pool: 20, test: 4}}
plans:
  counts: {{kind: count, rater: {cls.rater}, strategies: [count-map]}}
budgets: [4, 8, 16]
budget_unit: labels
repeats: 2
train: {{epochs: 1, width: 4, depth: 2}}
threads: 1
quantities: [count]
""")
        run("run", p("study.yaml"), "--out", p("results.db"))
        cls.p = staticmethod(p)

    @classmethod
    def tearDownClass(cls):
        if DISK and os.path.ismount(DISK):
            subprocess.run(["umount", DISK], check=False)

    def check_writer(self, name, args, output, kind, leave=16 * 1024):
        fill(leave)
        result = subprocess.run([FRUGAL, *map(str, args)], capture_output=True, text=True, timeout=300)
        with self.subTest(name):
            self.assertEqual(result.returncode, 2, f"{name}: {result.stdout}\n{result.stderr}")
            self.assertIn("frugal: error:", result.stderr)
            message = result.stderr.replace(SCRATCH, "SCRATCH").lower()  # the scratch path says "full-disk"
            self.assertTrue(any(w in message for w in ["no space", "disk is full"]), result.stderr)
            self.assertIn(os.path.basename(output.rstrip("/")), result.stderr)
            leftovers = [f for f in glob.glob(os.path.join(DISK, "**", "*"), recursive=True) if ".partial" in f]
            self.assertEqual(leftovers, [], "temporary files left behind")
            self.assertFalse(glob.glob(os.path.join(DISK, "**", "manifest.json"), recursive=True), "looks finished")
            self.assertFalse(os.path.exists(os.path.join(output, "report.html")), "looks finished")
            if kind == "file":
                self.assertFalse(os.path.exists(output), "a file that failed to be written must not be left")

    def test_every_writer(self):
        d = lambda name: os.path.join(DISK, name)  # noqa: E731
        p = self.p
        cases = [
            ("phantoms", ["phantoms", self.scenario, "--count", 60, "--seed", 1, "--out", d("phantoms")], d("phantoms")),
            ("labels", ["labels", self.scenario, "--rater", self.rater, "--kind", "outline", "--count", 60, "--seed", 1,
                        "--out", d("labels")], d("labels")),
            ("train", ["train", "--phantoms", p("phantoms"), "--labels", p("counts"), "--strategy", "count-map",
                       "--out", d("model.pt"), "--epochs", 1, "--width", 8, "--depth", 2, "--threads", 1], d("model.pt")),
            ("predict", ["predict", p("model.pt"), "--images", p("phantoms"), "--out", d("predicted")], d("predicted")),
            ("score", ["score", p("predicted/predictions.csv"), "--phantoms", p("phantoms"), "--json", d("score.json")],
             d("score.json")),
            ("calibrate", ["calibrate", self.scenario, "--rater", self.rater, "--statistic", "icc", "--target", 0.5,
                           "--subjects", 30, "--out", d("rater.yaml")], d("rater.yaml")),
            ("run", ["run", p("study.yaml"), "--out", d("results.db")], d("results.db")),
            ("merge", ["merge", p("results.db"), "--out", d("merged.db")], d("merged.db")),
            ("export-csv", ["export", p("results.db"), "--csv", d("tables")], d("tables")),
            ("export-json", ["export", p("results.db"), "--json", d("export.json")], d("export.json")),
            ("report", ["report", p("results.db"), "--target", "count.mae<=1", "--out", d("report"), "--draws", 200],
             d("report")),
        ]
        # Outputs that are one file (the others are folders, and the results store, which a study
        # resumes from whatever cells it holds).
        files = {"train", "score", "calibrate", "merge", "export-json"}
        for name, args, output in cases:
            # Tiny files fit in 16 KiB; give those commands 1 KiB so they too meet the full disk.
            self.check_writer(name, args, output, "file" if name in files else "folder",
                              leave=1024 if name in ("score", "calibrate") else 16 * 1024)


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, SCRATCH
    FRUGAL, SOURCE, SCRATCH = frugal, source, scratch


if __name__ == "__main__":
    frugal_testing.run_suite(__doc__, "frugal-full-disk-", configure)

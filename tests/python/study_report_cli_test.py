#!/usr/bin/env python3
"""frugal run, then frugal report, on a tiny real study: the report holds an example panel per plan
(held-out image, exact lesion mask, the model's map, the first bought label) whose tiles are the
pictures the store kept, and the whole report renders offline in headless Chromium
(report_render_test.py --html; skipped with its message where Chromium is not installed).

Run by CTest as: /usr/bin/python3 study_report_cli_test.py --frugal PATH --source DIR --screenshot OUT.png
"""

import argparse
import os
import re
import sqlite3
import struct
import subprocess
import sys
import unittest

sys.path.insert(0, os.path.dirname(__file__))
import frugal_testing  # noqa: E402

FRUGAL = SOURCE = SCRATCH = SCREENSHOT = None
TILE = 192  # image_panel.h's default tile size, in pixels


def png_size(path):
    # Width and height from the IHDR chunk (PNG specification, ISO/IEC 15948 §11.2.2).
    with open(path, "rb") as file:
        header = file.read(24)
    assert header[:8] == b"\x89PNG\r\n\x1a\n", path
    return struct.unpack(">II", header[16:24])


def tiny_study(source):
    # 32 x 32 slices and a few epochs, so the run takes seconds (invented numbers).
    return f"""name: tiny-report
seed: 5
scenario:
  family: streaks
  geometry: {{dims: 2, size_2d: [32, 32]}}
  streaks:
    count: {{distribution: poisson, mean: 2}}
    lines: {{distribution: poisson, mean: 1}}
cohort: {{pool: 60, test: 8}}
plans:
  counts:
    kind: count
    rater: {source}/raters/quick-reader.yaml
    strategies: [count-map]
  outlines:
    kind: outline
    rater: {source}/raters/careful-reader.yaml
    raters_per_image: 1
    strategies: [mask]
  filter:
    kind: none
    strategies: [line-filter]
budgets: [4, 8, 16]
budget_unit: labels
repeats: 3
train: {{epochs: 2, width: 4, depth: 2, batch_size: 4}}
threads: 1
quantities: [count]
"""


class StudyReport(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        study = os.path.join(SCRATCH, "study.yaml")
        with open(study, "w") as file:
            file.write(tiny_study(SOURCE))
        cls.store = os.path.join(SCRATCH, "results.db")
        frugal_testing.run_frugal(FRUGAL, "run", study, "--out", cls.store)
        cls.out = os.path.join(SCRATCH, "report")
        frugal_testing.run_frugal(FRUGAL, "report", cls.store, "--target", "count.mae<=0.5", "--out", cls.out,
                                  "--draws", "200")
        with open(os.path.join(cls.out, "report.html")) as file:
            cls.html = file.read()

    def test_every_plan_has_an_example_panel_of_the_stored_pictures(self):
        with sqlite3.connect(f"file:{self.store}?mode=ro", uri=True) as db:
            rows = db.execute("SELECT c.plan, count(*) FROM example_maps m JOIN cells c ON c.key = m.cell_key "
                              "WHERE c.repeat = 0 GROUP BY c.key ORDER BY c.budget DESC").fetchall()
        tiles = {}
        for plan, pictures in rows:
            tiles.setdefault(plan, pictures)  # the largest budget comes first
        # test image, truth, map; then a count label names its value, an outline is drawn.
        self.assertEqual(tiles, {"counts": 4, "outlines": 5, "filter": 3})
        for plan, strategy in [("counts", "count-map"), ("outlines", "mask"), ("filter", "line-filter")]:
            panel = os.path.join(self.out, "figures", f"example-{plan}-{strategy}.png")
            width, height = png_size(panel)
            self.assertEqual(width, tiles[plan] * TILE, panel)
            self.assertGreater(height, TILE, panel)
            self.assertIn(f"Example: {plan} / {strategy}", self.html)
        self.assertEqual(len(re.findall(r'src="data:image/png;base64,', self.html)), 3)
        # The panel's CSV holds exactly the stored pixels of the cell it shows (float32 read back).
        rows = frugal_testing.read_table(os.path.join(self.out, "figures", "example-outlines-mask.csv"))
        with sqlite3.connect(f"file:{self.store}?mode=ro", uri=True) as db:
            stored = db.execute("SELECT m.role, m.width, m.pixels FROM example_maps m JOIN cells c ON c.key = m.cell_key "
                                "WHERE c.plan = 'outlines' AND c.repeat = 0 ORDER BY c.budget DESC, m.rowid "
                                "LIMIT 5").fetchall()
        for role, width, blob in stored:
            pixels = struct.unpack(f"<{len(blob) // 4}f", blob)
            values = [float(r["value"]) for r in rows if r["role"] == role]
            self.assertEqual(len(values), len(pixels), role)
            for row in (r for r in rows if r["role"] == role):
                self.assertEqual(float(row["value"]), pixels[int(row["y"]) * width + int(row["x"])], role)
        self.assertNotIn("holds no example pictures", self.html)

    def test_the_report_renders_offline_in_chromium(self):
        done = subprocess.run([sys.executable, os.path.join(SOURCE, "tests", "python", "report_render_test.py"),
                               "--html", os.path.join(self.out, "report.html"), "--screenshot", SCREENSHOT],
                              capture_output=True, text=True, timeout=600)
        if done.returncode == 77:
            self.skipTest(done.stdout + done.stderr)
        self.assertEqual(done.returncode, 0, done.stdout + done.stderr)


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, SCRATCH
    FRUGAL, SOURCE, SCRATCH = frugal, source, scratch


if __name__ == "__main__":
    parser = argparse.ArgumentParser(add_help=False)
    parser.add_argument("--screenshot", required=True)
    known, remaining = parser.parse_known_args()
    SCREENSHOT = os.path.abspath(known.screenshot)
    os.makedirs(os.path.dirname(SCREENSHOT), exist_ok=True)
    sys.argv = [sys.argv[0]] + remaining
    frugal_testing.run_suite(__doc__, "frugal-study-report-", configure)

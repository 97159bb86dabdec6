#!/usr/bin/env python3
"""Runs `frugal phantoms` on every bundled scenario (scenarios/*.yaml) at a tiny size, in 2D and
in 3D, so that the examples cannot rot: exit code 0, a manifest naming the scenario, one truth row
per subject and readable NIfTI files of the requested shape.

Run by CTest as: /usr/bin/python3 example_scenarios_test.py --frugal PATH --source REPO_DIR
"""

import glob
import json
import os
import re
import subprocess
import unittest

import nibabel as nib

from frugal_testing import read_table, run_suite

FRUGAL = None
SOURCE = None
WORK = None
SEED = 7
COUNT = 3
SIZE_3D = [32, 32, 24]  # small 3D size so that the whole suite stays fast on two cores


def bundled_scenarios():
    return sorted(glob.glob(os.path.join(SOURCE, "scenarios", "*.yaml")))



def scenario_name(text):
    found = re.search(r"^name:\s*['\"]?([^'\"#\n]+?)['\"]?\s*(#.*)?$", text, flags=re.MULTILINE)
    return found.group(1) if found else None


def with_small_3d_size(text):
    """The scenario text with geometry.size_3d set to SIZE_3D. A textual edit, since PyYAML may be
    absent: replace an existing size_3d line, or add one under geometry (or a geometry block)."""
    size = "[" + ", ".join(str(n) for n in SIZE_3D) + "]"
    edited, n = re.subn(r"^(\s+)size_3d:.*$", lambda m: f"{m.group(1)}size_3d: {size}", text, flags=re.MULTILINE)
    if n:
        return edited
    edited, n = re.subn(r"^geometry:[ \t]*\n", f"geometry:\n  size_3d: {size}\n", text, count=1, flags=re.MULTILINE)
    if n:
        return edited
    return text.rstrip("\n") + f"\ngeometry:\n  size_3d: {size}\n"


class ExampleScenariosTest(unittest.TestCase):
    def test_there_are_bundled_scenarios(self):
        self.assertGreaterEqual(len(bundled_scenarios()), 2)

    def run_scenario(self, scenario, out, *extra):
        command = [FRUGAL, "phantoms", scenario, "--count", str(COUNT), "--out", out, "--seed", str(SEED), *extra]
        done = subprocess.run(command, capture_output=True, text=True, timeout=120)
        self.assertEqual(done.returncode, 0, f"{' '.join(command)}\n{done.stderr}")
        with open(os.path.join(out, "manifest.json")) as document:
            manifest = json.load(document)
        # The manifest names the scenario file and carries the resolved scenario.
        self.assertEqual(manifest["scenario_file"], scenario)
        self.assertEqual(manifest["count"], COUNT)
        # One truth row per subject.
        truth = read_table(os.path.join(out, "truth.csv"))
        self.assertEqual(len(truth), COUNT)
        self.assertEqual([row["subject"] for row in truth], [str(n) for n in range(COUNT)])
        return manifest, truth

    def test_every_scenario_in_2d_and_3d(self):
        for path in bundled_scenarios():
            base = os.path.splitext(os.path.basename(path))[0]
            with open(path) as source:
                text = source.read()
            name = scenario_name(text)
            with self.subTest(scenario=base, dims=2, seed=SEED):
                self.assertIsNotNone(name, f"{path} has a name")
                out = os.path.join(WORK, base + "-2d")
                manifest, truth = self.run_scenario(path, out, "--dims", "2")
                self.assertEqual(manifest["scenario"]["name"], name)
                self.assertEqual(manifest["dims"], 2)
                geometry = manifest["scenario"]["geometry"]
                for row in truth:
                    image = nib.load(os.path.join(out, row["image"]))
                    self.assertEqual(list(image.shape), list(geometry["size_2d"]))
            with self.subTest(scenario=base, dims=3, seed=SEED):
                small = os.path.join(WORK, base + "-small3d.yaml")
                with open(small, "w") as out_file:
                    out_file.write(with_small_3d_size(text))
                try:
                    import yaml  # optional: confirm the textual edit with a YAML parser
                except ImportError:
                    yaml = None
                if yaml is not None:
                    with open(small) as edited:
                        self.assertEqual(yaml.safe_load(edited)["geometry"]["size_3d"], SIZE_3D)
                out = os.path.join(WORK, base + "-3d")
                manifest, truth = self.run_scenario(small, out, "--dims", "3", "--threads", "2")
                self.assertEqual(manifest["scenario"]["name"], name)
                self.assertEqual(manifest["dims"], 3)
                self.assertEqual(list(manifest["scenario"]["geometry"]["size_3d"]), SIZE_3D)
                for row in truth:
                    for column in ("image", "labels"):
                        image = nib.load(os.path.join(out, row[column]))
                        self.assertEqual(list(image.shape), SIZE_3D)

    def test_size_edit(self):
        # The textual edit handles the three layouts a scenario may have.
        small = "[" + ", ".join(str(n) for n in SIZE_3D) + "]"
        self.assertIn(f"  size_3d: {small}", with_small_3d_size("geometry:\n  dims: 2\n  size_3d: [64, 64, 48]\n"))
        self.assertIn(f"geometry:\n  size_3d: {small}\n  dims: 2", with_small_3d_size("geometry:\n  dims: 2\n"))
        self.assertTrue(with_small_3d_size("family: voids\n").endswith(f"geometry:\n  size_3d: {small}\n"))


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, WORK
    FRUGAL, SOURCE, WORK = frugal, source, scratch



if __name__ == "__main__":
    run_suite(__doc__.splitlines()[0], "frugal-example-scenarios-", configure)

#!/usr/bin/env python3
"""SIGKILL each writing command (phantoms, labels, train, predict) at random moments: afterwards its
output is absent, refused as unfinished by the command that reads it, or complete and byte for byte
the output of an uninterrupted run; and running the command again into the same place finishes and
gives that same output. (The study runner and the results store have their own kill test in
study_runner_test.cpp.) Kill moments are drawn from a fixed seed, as fractions of the command's own
uninterrupted duration, so the test covers start-up, the bulk of the writing and the final rename.
"""

import filecmp
import json
import os
import random
import signal
import subprocess
import sys
import time
import unittest

sys.path.insert(0, os.path.dirname(__file__))
import frugal_testing  # noqa: E402

FRUGAL = SOURCE = SCRATCH = None
KILLS = 6  # kill moments per command
SEED = 3
COUNT = 1500  # subjects: enough that writing takes a good part of a second at 32 x 32
TINY = ["--epochs", 3, "--width", 4, "--depth", 2, "--batch-size", 16, "--threads", 1, "--seed", 1]


def path(*parts):
    return os.path.join(SCRATCH, *parts)


# Sidecar entries that differ between two uninterrupted runs by design: the checkpoint's own file
# name and the wall-clock timing of training.
RUN_SPECIFIC = {"model", "seconds", "images_per_second"}


def without_run_specific(value):
    if isinstance(value, dict):
        return {k: without_run_specific(v) for k, v in value.items() if k not in RUN_SPECIFIC}
    if isinstance(value, list):
        return [without_run_specific(v) for v in value]
    return value


def same_output(name, out, reference, partial_sidecar_allowed=False):
    if name != "train":
        return same_tree(out, reference)
    problems = same_tree(out, reference)
    sidecars = [out + ".json", reference + ".json"]
    if not os.path.isfile(sidecars[0]) and not partial_sidecar_allowed:
        return problems + [sidecars[0]]
    if not os.path.isfile(sidecars[0]):
        return problems  # killed between the checkpoint and its sidecar: the checkpoint alone is whole
    with open(sidecars[0]) as a, open(sidecars[1]) as b:
        if without_run_specific(json.load(a)) != without_run_specific(json.load(b)):
            problems.append(sidecars[0])
    return problems


def same_tree(a, b):
    """Differences between two files or folders: names present in one only, or files whose bytes differ."""
    if os.path.isfile(a) or os.path.isfile(b):
        return [] if os.path.isfile(a) and os.path.isfile(b) and filecmp.cmp(a, b, shallow=False) else [a]
    problems = []
    comparison = filecmp.dircmp(a, b)
    problems += [os.path.join(a, n) for n in comparison.left_only + comparison.right_only + comparison.funny_files]
    _, mismatch, errors = filecmp.cmpfiles(a, b, comparison.common_files, shallow=False)
    problems += [os.path.join(a, n) for n in mismatch + errors]
    for sub in comparison.common_dirs:
        problems += same_tree(os.path.join(a, sub), os.path.join(b, sub))
    return problems


class KilledCommands(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        with open(os.path.join(SOURCE, "scenarios", "ageing-cohort-streaks-small.yaml")) as source:
            text = source.read().replace("size_2d: [64, 64]", "size_2d: [32, 32]")
        cls.scenario = path("tiny.yaml")
        with open(cls.scenario, "w") as target:
            target.write(text)
        cls.random = random.Random(20261203)
        # Uninterrupted references, each timed (the median of the run below and its repeat).
        cls.commands = {
            "phantoms": lambda out: ["phantoms", cls.scenario, "--count", COUNT, "--seed", SEED, "--out", out,
                                     "--preview-tiles", 4],
            "labels": lambda out: ["labels", cls.scenario, "--rater", os.path.join(SOURCE, "raters", "quick-reader.yaml"),
                                   "--kind", "count", "--count", COUNT, "--seed", SEED, "--out", out],
            "train": lambda out: ["train", "--phantoms", path("phantoms-reference"), "--labels",
                                  path("labels-reference"), "--strategy", "count-map", "--out", out, *TINY],
            "predict": lambda out: ["predict", path("train-reference.pt"), "--images", path("phantoms-reference"),
                                    "--out", out, "--threads", 1],
        }
        cls.seconds = {}
        for name in ["phantoms", "labels", "train", "predict"]:
            out = path(f"{name}-reference" + (".pt" if name == "train" else ""))
            durations = []
            for attempt in range(2):
                target = out if attempt == 0 else path(f"{name}-again" + (".pt" if name == "train" else ""))
                start = time.monotonic()
                frugal_testing.run_frugal(FRUGAL, *cls.commands[name](target))
                durations.append(time.monotonic() - start)
            cls.seconds[name] = sorted(durations)[0]
            # Two uninterrupted runs agree byte for byte, or the comparisons below would mean nothing.
            assert not same_output(name, out, target), \
                f"{name}: two uninterrupted runs differ: {same_output(name, out, target)}"

    def refused(self, name, out):
        """Runs the reader of `name`'s output on a killed, unfinished output; returns its stderr."""
        reader = {
            "phantoms": ["predict", path("train-reference.pt"), "--images", out, "--out", path("never")],
            "labels": ["train", "--phantoms", path("phantoms-reference"), "--labels", out, "--strategy", "count-map",
                       "--out", path("never.pt"), *TINY],
            "predict": ["score", os.path.join(out, "predictions.csv"), "--phantoms", path("phantoms-reference")],
        }[name]
        return frugal_testing.run_frugal(FRUGAL, *reader, expect=2).stderr

    def kill_and_resume(self, name):
        reference = path(f"{name}-reference" + (".pt" if name == "train" else ""))
        outcomes = []
        for k in range(KILLS):
            out = path(f"{name}-killed-{k}" + (".pt" if name == "train" else ""))
            delay = self.random.uniform(0.02, 1.0) * self.seconds[name]
            process = subprocess.Popen([FRUGAL, *map(str, self.commands[name](out))], stdout=subprocess.DEVNULL,
                                       stderr=subprocess.DEVNULL)
            time.sleep(delay)
            process.send_signal(signal.SIGKILL)
            process.wait()
            with self.subTest(command=name, kill=k, after_seconds=round(delay, 3)):
                if not os.path.exists(out):
                    outcomes.append("absent")
                elif name != "train" and not os.path.exists(os.path.join(out, "manifest.json")):
                    message = self.refused(name, out)
                    self.assertIn("manifest.json", message)
                    outcomes.append("refused")
                else:
                    self.assertEqual(same_output(name, out, reference, partial_sidecar_allowed=True), [],
                                     "a finished output must be the reference")
                    outcomes.append("complete")
                # Running again into the same place finishes and gives the reference.
                frugal_testing.run_frugal(FRUGAL, *self.commands[name](out),
                                          *(["--overwrite"] if outcomes[-1] == "complete" and name != "train" else []))
                self.assertEqual(same_output(name, out, reference), [])
        print(f"{name}: {KILLS} kills within {self.seconds[name]:.2f} s: {outcomes}", file=sys.stderr)

    def test_phantoms(self):
        self.kill_and_resume("phantoms")

    def test_labels(self):
        self.kill_and_resume("labels")

    def test_train(self):
        self.kill_and_resume("train")

    def test_predict(self):
        self.kill_and_resume("predict")


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, SCRATCH
    FRUGAL, SOURCE, SCRATCH = frugal, source, scratch


if __name__ == "__main__":
    frugal_testing.run_suite(__doc__, "frugal-kill-", configure)

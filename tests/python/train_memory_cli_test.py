#!/usr/bin/env python3
"""frugal train's memory estimate (experiments/learn/memory_estimate.h) against the peak resident
memory the operating system measures for the same training (getrusage ru_maxrss of the child,
in KiB on Linux: getrusage(2)), in 2D and 3D: the estimate must cover the measured peak without
overstating it more than 2.5 times (a loose bound: common practice, no source). A network far too
large for the machine is refused before anything is allocated, with the estimate and the machine's
memory in the message.
"""

import json
import os
import resource
import subprocess
import sys
import unittest

sys.path.insert(0, os.path.dirname(__file__))
import frugal_testing  # noqa: E402

FRUGAL = SOURCE = SCRATCH = None

PEAK = ("import resource, subprocess, sys\n"
        "done = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL)\n"
        "print(done.returncode, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)\n")


def phantoms_and_counts(name, dims, size):
    with open(os.path.join(SOURCE, "scenarios", "ageing-cohort-streaks-small.yaml")) as source:
        text = source.read().replace("size_2d: [64, 64]", f"size_2d: [{size}, {size}]").replace(
            "dims: 2", f"dims: {dims}")
    scenario = os.path.join(SCRATCH, name + ".yaml")
    with open(scenario, "w") as target:
        target.write(text)
    phantoms, labels = os.path.join(SCRATCH, name + "-phantoms"), os.path.join(SCRATCH, name + "-counts")
    frugal_testing.run_frugal(FRUGAL, "phantoms", scenario, "--count", 24, "--seed", 1, "--out", phantoms,
                              "--preview-tiles", 0)
    frugal_testing.run_frugal(FRUGAL, "labels", scenario, "--rater", os.path.join(SOURCE, "raters", "quick-reader.yaml"),
                              "--kind", "count", "--count", 24, "--seed", 1, "--out", labels)
    return phantoms, labels


class TrainMemory(unittest.TestCase):
    def measured_and_estimated(self, name, dims, size, network):
        phantoms, labels = phantoms_and_counts(name, dims, size)
        model = os.path.join(SCRATCH, name + ".pt")
        command = [FRUGAL, "train", "--phantoms", phantoms, "--labels", labels, "--strategy", "count-map",
                   "--out", model, "--epochs", "1", "--threads", "2", *map(str, network)]
        # A fresh interpreter whose only child is the training, so ru_maxrss is that training's peak.
        done = subprocess.run([sys.executable, "-c", PEAK, *command], capture_output=True, text=True, timeout=600)
        code, peak_kib = map(int, done.stdout.split())
        self.assertEqual(code, 0, done.stderr)
        with open(model + ".json") as sidecar:
            estimate = json.load(sidecar)["summary"]["estimated_memory_bytes"]
        return peak_kib * 1024.0, estimate

    def test_the_estimate_covers_the_measured_peak_in_2d_and_3d(self):
        for name, dims, size, network in [("plane", 2, 128, ["--width", 16, "--depth", 3, "--batch-size", 16]),
                                          ("volume", 3, 64, ["--width", 16, "--depth", 3, "--batch-size", 8])]:
            with self.subTest(name):
                measured, estimate = self.measured_and_estimated(name, dims, size, network)
                print(f"{name}: peak {measured / 1e6:.0f} MB, estimate {estimate / 1e6:.0f} MB", file=sys.stderr)
                self.assertGreaterEqual(estimate, measured)
                self.assertLessEqual(estimate, 2.5 * measured)

    def test_a_network_too_large_for_the_machine_is_refused_up_front(self):
        phantoms, labels = phantoms_and_counts("huge", 2, 256)
        model = os.path.join(SCRATCH, "huge.pt")
        result = frugal_testing.run_frugal(FRUGAL, "train", "--phantoms", phantoms, "--labels", labels, "--strategy",
                                           "count-map", "--out", model, "--width", 256, "--depth", 3,
                                           "--batch-size", 32, expect=2)
        for words in ["training needs about", "GB of memory", "this machine's", "allowed: a smaller batch size"]:
            self.assertIn(words, result.stderr)
        self.assertFalse(os.path.exists(model))
        self.assertLess(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, 2 * 1024 * 1024)  # KiB: < 2 GiB


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, SCRATCH
    FRUGAL, SOURCE, SCRATCH = frugal, source, scratch


if __name__ == "__main__":
    frugal_testing.run_suite(__doc__, "frugal-train-memory-", configure)

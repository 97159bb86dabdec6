"""frugal validate --quick: the testbed's self-check runs whole, every check it reproduces passes,
and the table's arithmetic holds — each check's mean and interval are recomputed from its per-repeat effects with
scipy.stats.t (a general-purpose reference), and the pass rule (mean >= threshold and the
interval's lower end > 0) is applied again here."""

import json
import math
import os
import signal
import sqlite3
import subprocess
import sys
import time
import unittest

from scipy import stats

sys.path.insert(0, os.path.dirname(__file__))
import frugal_testing  # noqa: E402

FRUGAL = SOURCE = SCRATCH = None
RUN = {}
# Checks the quick run does not reproduce (docs/validate.md, "What fails and why"): count-map's
# density is spread over the image instead of on the lesions (4, 7, and the consistency term has
# little to act on: 5a, 5b); grade-bounds' small-n gain over scalar regression, which the full
# run reproduces, stays under its threshold at the quick run's 48² (3a, 3b). They are run and
# reported, not required; every other check must pass.
KNOWN_OPEN = {"3a", "3b", "4", "5a", "5b", "7"}


def quick_run():
    if not RUN:
        path = os.path.join(SCRATCH, "checks.json")
        result = frugal_testing.run_frugal(FRUGAL, "validate", "--quick", "--json", path, expect=None)
        with open(path) as file:
            RUN.update(result=result, report=json.load(file))
    return RUN["result"], RUN["report"]


class ValidateQuick(unittest.TestCase):
    def test_every_phenomenon_is_checked(self):
        _, report = quick_run()
        ids = [check["id"] for check in report["checks"]]
        self.assertEqual(ids, ["1", "2", "3a", "3b", "4", "5a", "5b", "6", "7", "8"])
        for check in report["checks"]:
            self.assertTrue(check["claim"] and check["effect"] and check["basis"], check["id"])
            self.assertEqual(len(check["effects"]), report["repeats"], check["id"])

    def test_intervals_and_verdicts_follow_from_the_effects(self):
        _, report = quick_run()
        for check in report["checks"]:
            effects = check["effects"]
            n = len(effects)
            mean = sum(effects) / n
            sd = math.sqrt(sum((e - mean) ** 2 for e in effects) / (n - 1))
            half = stats.t.ppf((1 + report["confidence"]) / 2, n - 1) * sd / math.sqrt(n)
            # frugal's Student-t quantile is a numerical inverse, good to about 1e-9 of scipy's.
            self.assertAlmostEqual(check["mean"], mean, places=9, msg=check["id"])
            self.assertAlmostEqual(check["lower"], mean - half, places=7, msg=check["id"])
            self.assertAlmostEqual(check["upper"], mean + half, places=7, msg=check["id"])
            self.assertEqual(check["passed"], mean >= check["threshold"] and mean - half > 0, check["id"])

    def test_every_settled_check_passes_and_the_exit_status_says_so(self):
        result, report = quick_run()
        failed = [check["id"] for check in report["checks"] if not check["passed"]]
        self.assertEqual([i for i in failed if i not in KNOWN_OPEN], [], result.stdout)
        self.assertEqual(result.returncode, 3 if failed else 0, result.stderr)
        self.assertEqual(report["passed"], not failed)
        if failed:
            self.assertIn("did not reproduce check", result.stderr)
        self.assertIn("they do not validate any method for clinical use", result.stdout)
        print("open checks that failed:", ", ".join(failed) or "none")

    def test_bad_phenomenon_number_is_refused(self):
        result = frugal_testing.run_frugal(FRUGAL, "validate", "--quick", "--phenomenon", "9", expect=2)
        self.assertIn("--phenomenon = 9: allowed 1 to 8", result.stderr)


def done_cells(path):
    """Finished cells in a results store, or 0 while the store does not exist yet."""
    if not os.path.exists(path):
        return 0
    try:
        with sqlite3.connect(f"file:{path}?mode=ro", uri=True) as connection:
            return connection.execute("SELECT count(*) FROM cells WHERE status = 'done'").fetchone()[0]
    except sqlite3.OperationalError:  # the schema is not written yet
        return 0


class ValidateStore(unittest.TestCase):
    """--store keeps every finished cell: a run killed part-way resumes and prints what an
    uninterrupted run prints (the quick run above, which has no store)."""

    def test_a_killed_run_resumes_with_the_same_numbers(self):
        _, uninterrupted = quick_run()
        store = os.path.join(SCRATCH, "killed.db")
        arguments = [FRUGAL, "validate", "--quick", "--phenomenon", "1", "--store", store]
        running = subprocess.Popen(arguments, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        deadline = time.monotonic() + 600
        while done_cells(store) < 2 and running.poll() is None and time.monotonic() < deadline:
            time.sleep(0.2)
        self.assertIsNone(running.poll(), "the run ended before it could be killed")
        running.send_signal(signal.SIGKILL)
        running.wait()
        kept = done_cells(store)
        self.assertGreaterEqual(kept, 2)
        self.assertLess(kept, 5)  # phenomenon 1 has one cell per repeat, 5 repeats

        report_path = os.path.join(SCRATCH, "resumed.json")
        result = frugal_testing.run_frugal(FRUGAL, *arguments[1:], "--json", report_path)
        with open(report_path) as file:
            resumed = json.load(file)
        self.assertEqual(resumed["cells_resumed"], kept)
        self.assertEqual(done_cells(store), 5)
        self.assertIn(f"Cells kept in {store} ({kept} were there before this run", result.stdout)
        expected = next(check for check in uninterrupted["checks"] if check["id"] == "1")
        self.assertEqual(resumed["checks"][0]["effects"], expected["effects"])
        self.assertEqual(resumed["checks"][0]["parts"], expected["parts"])

        # A store belongs to one size, seed and thread count: its cells would give other numbers.
        refused = frugal_testing.run_frugal(FRUGAL, *arguments[1:], "--seed", "2", expect=2)
        self.assertIn(f"{store}: holds study 'validate-quick-seed1-threads2'", refused.stderr)


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, SCRATCH
    FRUGAL, SOURCE, SCRATCH = frugal, source, scratch


if __name__ == "__main__":
    frugal_testing.run_suite(__doc__, "frugal-validate-", configure)

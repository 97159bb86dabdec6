#!/usr/bin/env python3
"""Checks `frugal agree` end to end: both table layouts, every statistic against numpy/scipy
(and sklearn when installed), the saved human-readable table, and exit code 2 with file and line
for malformed tables. Run by CTest with --frugal PATH --source DIR."""

import argparse
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import stats

FAILURES = []


def check(condition, what):
    if not condition:
        FAILURES.append(what)
        print("FAIL:", what)


def close(actual, expected, what, tolerance=1e-9):
    check(abs(actual - expected) <= tolerance * max(1.0, abs(expected)),
          f"{what}: got {actual!r}, expected {expected!r}")


def run(frugal, workdir, *args):
    return subprocess.run([frugal, "agree", *args], cwd=workdir, capture_output=True, text=True, timeout=60)


def agree_json(frugal, workdir, *args):
    done = run(frugal, workdir, *args, "--json")
    check(done.returncode == 0, f"agree {' '.join(args)} exited {done.returncode}: {done.stderr}")
    if done.returncode != 0:
        return None
    document = json.loads(done.stdout)
    check(document["tool"] == "frugal" and "version" in document and "schema_version" in document,
          "JSON records tool, version and schema version")
    return document["result"]


def write_wide(path, header, rows):
    with open(path, "w") as out:
        out.write(",".join(header) + "\n")
        for subject, values in rows:
            out.write(",".join([str(subject)] + [repr(v) if isinstance(v, float) else str(v) for v in values]) + "\n")


def write_long(path, raters, matrix):
    with open(path, "w") as out:
        out.write("subject,rater,value\n")
        # Raters interleaved in reverse so the reader must not rely on order.
        for j in reversed(range(len(raters))):
            for i, row in enumerate(matrix):
                out.write(f"s{i + 1},{raters[j]},{row[j]}\n")


def icc_reference(y):
    # Shrout & Fleiss (1979) mean squares and the six forms, with numpy.
    n, k = y.shape
    g = y.mean()
    ssr = k * ((y.mean(1) - g) ** 2).sum()
    ssc = n * ((y.mean(0) - g) ** 2).sum()
    sst = ((y - g) ** 2).sum()
    bms, wms, jms = ssr / (n - 1), (sst - ssr) / (n * (k - 1)), ssc / (k - 1)
    ems = (sst - ssr - ssc) / ((n - 1) * (k - 1))
    return {"ICC(1,1)": (bms - wms) / (bms + (k - 1) * wms),
            "ICC(2,1)": (bms - ems) / (bms + (k - 1) * ems + k * (jms - ems) / n),
            "ICC(3,1)": (bms - ems) / (bms + (k - 1) * ems), "ICC(1,k)": (bms - wms) / bms,
            "ICC(2,k)": (bms - ems) / (bms + (jms - ems) / n), "ICC(3,k)": (bms - ems) / bms}


def kappa_reference(a, b, categories, weights):
    try:
        from sklearn.metrics import cohen_kappa_score
        return cohen_kappa_score(a, b, weights=None if weights == "none" else weights, labels=categories)
    except ImportError:  # Cohen (1968) with disagreement weights, numpy only
        index = {c: i for i, c in enumerate(categories)}
        o = np.zeros((len(categories),) * 2)
        for x, y in zip(a, b):
            o[index[x], index[y]] += 1
        i, j = np.indices(o.shape)
        w = {"none": (i != j) * 1.0, "linear": abs(i - j) * 1.0, "quadratic": (i - j) ** 2 * 1.0}[weights]
        e = np.outer(o.sum(1), o.sum(0)) / o.sum()
        return 1 - (w * o).sum() / (w * e).sum()


def fleiss_reference(ratings, categories):
    # Fleiss (1971) with numpy.
    counts = np.array([[np.sum(row == c) for c in categories] for row in ratings], float)
    n, m = counts.shape[0], counts[0].sum()
    p_i = ((counts ** 2).sum(1) - m) / (m * (m - 1))
    p_j = counts.sum(0) / (n * m)
    return (p_i.mean() - (p_j ** 2).sum()) / (1 - (p_j ** 2).sum())


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--frugal", required=True)
    parser.add_argument("--source", required=True)
    args = parser.parse_args()
    frugal = os.path.abspath(args.frugal)
    expected_dir = os.path.join(args.source, "tests", "data", "agree")

    with tempfile.TemporaryDirectory() as work:
        # --- ICC on the Shrout & Fleiss (1979) 6 x 4 table, wide and long layouts.
        sf = np.array([[9, 2, 5, 8], [6, 1, 3, 2], [8, 4, 6, 8], [7, 1, 2, 6], [10, 5, 6, 9], [6, 2, 4, 7]], float)
        write_wide(os.path.join(work, "shrout_fleiss.csv"), ["target", "J1", "J2", "J3", "J4"],
                   [(i + 1, [int(v) for v in row]) for i, row in enumerate(sf)])
        write_long(os.path.join(work, "shrout_fleiss_long.csv"), ["J1", "J2", "J3", "J4"], sf.astype(int).tolist())
        reference = icc_reference(sf)
        for table in ("shrout_fleiss.csv", "shrout_fleiss_long.csv"):
            result = agree_json(frugal, work, table, "--stat", "icc")
            if result:
                for form in result["forms"]:
                    close(form["icc"], reference[form["shrout_fleiss"]], f"{table} {form['shrout_fleiss']}")
                one_way = result["forms"][0]
                f0 = one_way["f"]
                close(one_way["p_value"], stats.f.sf(f0, 5, 18), "ICC(1,1) p-value vs scipy.stats.f.sf")
                # ICC(3,1) lower bound via scipy.stats.f.ppf (Shrout & Fleiss 1979).
                f3 = result["forms"][2]["f"]
                fl = f3 / stats.f.ppf(0.975, 5, 15)
                close(result["forms"][2]["lower"], (fl - 1) / (fl + 3), "ICC(3,1) lower bound", 1e-7)

        # Saved human-readable output (compare byte for byte; FRUGAL_UPDATE_EXPECTED=1 rewrites).
        done = run(frugal, work, "shrout_fleiss.csv", "--stat", "icc")
        expected_path = os.path.join(expected_dir, "shrout_fleiss_icc.txt")
        if os.environ.get("FRUGAL_UPDATE_EXPECTED") == "1":
            with open(expected_path, "w") as out:
                out.write(done.stdout)
        with open(expected_path) as saved:
            check(done.stdout == saved.read(), "ICC table differs from tests/data/agree/shrout_fleiss_icc.txt")

        # --- Cohen's kappa, with a grade nobody used (2) among categories 0..3.
        a = [0, 0, 1, 1, 3, 3, 3, 0, 1, 0]
        b = [0, 1, 1, 3, 3, 1, 3, 0, 1, 1]
        write_wide(os.path.join(work, "grades.csv"), ["case", "first", "second"],
                   [(f"c{i}", [x, y]) for i, (x, y) in enumerate(zip(a, b))])
        for weights in ("none", "linear", "quadratic"):
            result = agree_json(frugal, work, "grades.csv", "--stat", "kappa", "--weights", weights,
                                "--categories", "0,1,2,3")
            if result:
                close(result["kappa"], kappa_reference(a, b, [0, 1, 2, 3], weights), f"kappa {weights}")
        # Default categories fill the integer range, so grade 2 still counts.
        result = agree_json(frugal, work, "grades.csv", "--stat", "kappa", "--weights", "linear")
        if result:
            close(result["kappa"], kappa_reference(a, b, [0, 1, 2, 3], "linear"), "kappa default categories")

        # --- Fleiss' kappa on 8 subjects x 4 raters, long layout.
        ratings = np.array([[1, 1, 1, 2], [2, 2, 2, 2], [3, 3, 2, 3], [1, 2, 1, 1], [3, 3, 3, 3],
                            [2, 1, 2, 2], [1, 1, 1, 1], [3, 2, 3, 3]])
        write_long(os.path.join(work, "fleiss_long.csv"), ["r1", "r2", "r3", "r4"], ratings.tolist())
        result = agree_json(frugal, work, "fleiss_long.csv", "--stat", "fleiss")
        if result:
            close(result["kappa"], fleiss_reference(ratings, [1, 2, 3]), "Fleiss kappa")

        # --- Bland-Altman and correlation on the 1986 peak-flow data (Wright vs Mini, first reading).
        wright = [494, 395, 516, 434, 476, 557, 413, 442, 650, 433, 417, 656, 267, 478, 178, 423, 427]
        mini = [512, 430, 520, 428, 500, 600, 364, 380, 658, 445, 432, 626, 260, 477, 259, 350, 451]
        write_wide(os.path.join(work, "pefr.csv"), ["subject", "wright", "mini"],
                   [(i + 1, [x, y]) for i, (x, y) in enumerate(zip(wright, mini))])
        d = np.array(wright, float) - np.array(mini, float)
        result = agree_json(frugal, work, "pefr.csv", "--stat", "bland-altman")
        if result:
            close(result["bias"], d.mean(), "Bland-Altman bias")
            close(result["lower_limit"], d.mean() - 1.96 * d.std(ddof=1), "lower limit of agreement")
            half = stats.t.ppf(0.975, 16) * d.std(ddof=1) / np.sqrt(17)
            close(result["bias_upper"], d.mean() + half, "bias interval", 1e-8)
        result = agree_json(frugal, work, "pefr.csv", "--stat", "correlation")
        if result:
            close(result["pearson"]["r"], stats.pearsonr(wright, mini)[0], "Pearson r vs scipy")
            close(result["spearman"]["r"], stats.spearmanr(wright, mini)[0], "Spearman rho vs scipy")
            close(result["spearman"]["p_value"], stats.spearmanr(wright, mini)[1], "Spearman p vs scipy", 1e-7)

        # --- Repeatability: two Wright readings per subject.
        second = [490, 397, 512, 401, 470, 611, 415, 431, 638, 429, 420, 633, 275, 492, 165, 372, 421]
        write_wide(os.path.join(work, "rescan.csv"), ["subject", "scan1", "scan2"],
                   [(i + 1, [x, y]) for i, (x, y) in enumerate(zip(wright, second))])
        result = agree_json(frugal, work, "rescan.csv", "--stat", "repeatability")
        if result:
            dd = np.array(wright, float) - np.array(second, float)
            s_w = np.sqrt((dd ** 2).sum() / (2 * len(dd)))
            close(result["within_subject_sd"], s_w, "within-subject SD")
            close(result["repeatability_coefficient"], 1.96 * np.sqrt(2) * s_w, "repeatability coefficient")

        # --- Malformed tables: exit code 2 and a message naming the file and the line.
        bad = {
            "ragged.csv": ("id,A,B\ns1,1,2\ns2,3\n", "line 3"),
            "text.csv": ("id,A,B\ns1,1,2\ns2,3,high\n", "line 3, column 3"),
            "single.csv": ("id,A\ns1,1\ns2,2\n", "line 1"),
            "constant.csv": ("id,A,B\ns1,2,2\ns2,2,2\n", "lines 2-3"),
            "missing.csv": ("subject,rater,value\ns1,A,1\ns1,B,2\ns2,A,3\n", "line 4"),
        }
        for name, (text, place) in bad.items():
            with open(os.path.join(work, name), "w") as out:
                out.write(text)
            done = run(frugal, work, name, "--stat", "icc")
            check(done.returncode == 2, f"{name}: exit code {done.returncode}, expected 2")
            check(name in done.stderr and place in done.stderr, f"{name}: message lacks file/{place}: {done.stderr!r}")
            check("allowed" in done.stderr or "every subject" in done.stderr, f"{name}: message says what is allowed")
        done = run(frugal, work, "grades.csv", "--stat", "kappa", "--categories", "0,1")
        check(done.returncode == 2 and "grades.csv line" in done.stderr, "rating outside --categories")
        done = run(frugal, work, "shrout_fleiss.csv", "--stat", "kappa")
        check(done.returncode == 2 and "fleiss" in done.stderr, "kappa on 4 raters points to fleiss")
        done = subprocess.run([frugal, "agree", "--help"], capture_output=True, text=True, timeout=60)
        check(done.returncode == 0 and "--stat" in done.stdout and "long" in done.stdout, "--help explains layouts")

        # --- Ratings whose squares overflow (1e300^2 > 1.8e308, the largest IEEE 754 double) are
        # rejected with their cell and the allowed range, never an abort or a printed inf.
        with open(os.path.join(work, "huge.csv"), "w") as out:
            out.write("id,A,B\ns1,1,2\ns2,1e300,-1e300\ns3,-1e300,1e300\n")
        for stat in ("icc", "bland-altman", "repeatability", "correlation"):
            done = run(frugal, work, "huge.csv", "--stat", stat)
            check(done.returncode == 2, f"huge.csv --stat {stat}: exit code {done.returncode}, expected 2")
            check("huge.csv line 3, column 2" in done.stderr and "-1e150 to 1e150" in done.stderr,
                  f"huge.csv --stat {stat}: message lacks cell or range: {done.stderr!r}")
            check("inf" not in done.stdout, f"huge.csv --stat {stat} prints inf: {done.stdout!r}")

        # --- ICC(2,k) with a negative denominator BMS + (JMS - EMS)/n (Shrout & Fleiss 1979;
        # McGraw & Wong 1996 ICC(A,k)): 1/6 + (1/6 - 7/6)/3 < 0 by hand, so n/a and null, not 6.0.
        negative = np.array([[1, 2], [2, 2], [3, 1]], float)
        write_wide(os.path.join(work, "negative.csv"), ["id", "A", "B"],
                   [(f"s{i + 1}", [int(v) for v in row]) for i, row in enumerate(negative)])
        result = agree_json(frugal, work, "negative.csv", "--stat", "icc")
        if result:
            reference = icc_reference(negative)
            for form in result["forms"]:
                name = form["shrout_fleiss"]
                if name == "ICC(2,k)":
                    check(form["icc"] is None and form["lower"] is None and form["upper"] is None,
                          f"ICC(2,k) with a negative denominator is null: {form!r}")
                else:
                    close(form["icc"], reference[name], f"negative.csv {name}")
        done = run(frugal, work, "negative.csv", "--stat", "icc")
        row = [line for line in done.stdout.splitlines() if line.startswith("ICC(2,k)")]
        check(done.returncode == 0 and len(row) == 1 and "n/a" in row[0] and "6.0000" not in row[0],
              f"ICC(2,k) row prints n/a: {row!r}")

        # --- Categories print exactly (shortest %.15g..%.17g that reads back; Python's repr of
        # the same doubles gives the same digits), never in 2e+06 style.
        write_wide(os.path.join(work, "large_grades.csv"), ["id", "A", "B"],
                   [("s1", [0, 2000000]), ("s2", [2000000, 2000000]), ("s3", [1234567.5, 0]), ("s4", [0, 0])])
        done = run(frugal, work, "large_grades.csv", "--stat", "kappa")
        check(done.returncode == 0 and "categories: 0,1234567.5,2000000 " in done.stdout and "e+06" not in done.stdout,
              f"categories printed exactly: {done.stdout!r}")
        done = run(frugal, work, "large_grades.csv", "--stat", "kappa", "--categories", "0,0.1,1234567.5,2000000")
        check(done.returncode == 0 and "categories: 0,0.1,1234567.5,2000000 " in done.stdout,
              f"--categories printed exactly: {done.stdout!r}")

        # --- Unknown statistic or weighting: exit 2, every allowed name listed, no empty report.
        for option, value, names in (("--stat", "kendall", ["icc", "kappa", "fleiss", "bland-altman",
                                                              "repeatability", "correlation"]),
                                     ("--weights", "cubic", ["none", "linear", "quadratic"])):
            extra = [] if option == "--stat" else ["--stat", "kappa"]
            done = run(frugal, work, "grades.csv", *extra, option, value)
            check(done.returncode == 2 and done.stdout == "" and value in done.stderr
                  and all(name in done.stderr for name in names),
                  f"{option} {value}: exit {done.returncode}, stderr {done.stderr!r}, stdout {done.stdout!r}")

        # --- A directory is named as such, not reported as an empty table.
        done = run(frugal, work, work, "--stat", "icc")
        check(done.returncode == 2 and work in done.stderr and "is a directory, not a ratings table" in done.stderr
              and "empty" not in done.stderr, f"directory as table: {done.stderr!r}")

    if FAILURES:
        print(f"{len(FAILURES)} check(s) failed")
        return 1
    print("agree CLI: all checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())

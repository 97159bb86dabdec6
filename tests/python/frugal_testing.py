"""Shared plumbing of the command-line reference checks: reading frugal's CSV tables and running a
script's unittest suite with the --frugal/--source arguments CTest passes and a scratch folder
that is removed afterwards."""

import argparse
import csv
import os
import subprocess
import sys
import tempfile
import unittest


def read_table(path):
    """Rows of a frugal CSV table as dicts; lines starting with '#' are version comments."""
    with open(path, newline="") as table:
        return list(csv.DictReader(line for line in table if not line.startswith("#")))


def run_frugal(frugal, *args, expect=0):
    """Runs the frugal executable with `args`; raises AssertionError with both output streams when
    the exit code is not `expect` (None: any exit code)."""
    result = subprocess.run([frugal, *map(str, args)], capture_output=True, text=True)
    if expect is not None and result.returncode != expect:
        raise AssertionError(f"frugal {' '.join(map(str, args))} exited {result.returncode}, expected {expect}:\n"
                             f"{result.stdout}\n{result.stderr}")
    return result


def run_suite(description, scratch_prefix, configure):
    """Parses --frugal and --source, calls configure(frugal, source, scratch_folder) so the script
    can set its globals, runs the script's tests and exits with their verdict."""
    parser = argparse.ArgumentParser(description=description)
    parser.add_argument("--frugal", required=True, help="path of the frugal executable")
    parser.add_argument("--source", required=True, help="repository root")
    arguments, rest = parser.parse_known_args()
    with tempfile.TemporaryDirectory(prefix=scratch_prefix) as scratch:
        configure(os.path.abspath(arguments.frugal), os.path.abspath(arguments.source), scratch)
        program = unittest.main(module="__main__", argv=[sys.argv[0]] + rest, exit=False, verbosity=2)
    sys.exit(0 if program.result.wasSuccessful() else 1)

#!/usr/bin/env python3
"""A catalogue of hostile inputs across frugal's commands: each case writes its files into a
scratch folder, runs frugal, and checks the exit code (2), that nothing hangs (a time limit per
case), and the key words of the one-line message: the file or option named, and what is allowed.

Expected wording: common practice, no source (frugal's "FILE:LINE: key path ...; allowed: ..."
messages). NIfTI header rules: the NIfTI-1 standard header nifti1.h.

Run by CTest as: /usr/bin/python3 bad_input_catalogue_test.py --frugal PATH --source REPO_DIR
"""

import gzip
import os
import shutil
import struct
import subprocess
import unittest

import nibabel as nib
import numpy as np

from frugal_testing import run_frugal, run_suite

FRUGAL = None
SOURCE = None
WORK = None
SECONDS_PER_CASE = 60  # a hang shows up as a failure, not a stuck suite

FIFO = object()    # a named pipe with no writer
FOLDER = object()  # an empty folder


def fixture(*parts):
    return os.path.join(WORK, "fixtures", *parts)


# --- NIfTI files (field offsets of struct nifti_1_header in nifti1.h) -------------------------

def nifti_bytes(data=None, patch=None):
    """A single-file NIfTI-1 image (.nii bytes) of float32 `data`, with header fields changed by
    `patch`: a list of (offset, struct format, value)."""
    if data is None:
        data = np.arange(32 * 32, dtype=np.float32).reshape(32, 32)
    image = nib.Nifti1Image(np.asarray(data, dtype=np.float32), np.eye(4))
    image.header["vox_offset"] = 352  # nibabel sets it only when saving
    raw = bytearray(image.header.binaryblock) + b"\0" * 4 + np.asarray(data, dtype="<f4").tobytes(order="F")
    for offset, fmt, value in patch or []:
        struct.pack_into(fmt, raw, offset, value)
    return bytes(raw)


def nan_image_like(path):
    """The image at `path` with every voxel NaN, same header."""
    image = nib.load(path)
    data = np.full(image.shape, np.nan, dtype=np.float32)
    return nib.Nifti1Image(data, image.affine, image.header)


def copy_set_with_nan_image(name):
    def write(target):
        shutil.copytree(fixture(name), target)
        image_path = os.path.join(target, "images", "subject_000000.nii.gz")
        nib.save(nan_image_like(image_path), image_path)
    return write


def copy_predictions_with_nan_map(target):
    shutil.copytree(fixture("predicted"), target)
    map_path = os.path.join(target, "maps", "subject_000001.nii.gz")
    nib.save(nan_image_like(map_path), map_path)


def one_infinite_voxel():
    data = np.zeros((32, 32), dtype=np.float32)
    data[3, 5] = np.inf  # voxel (x, y) = (3, 5): x varies fastest in the file
    return data


def gzipped(data):
    return gzip.compress(data)


# --- The catalogue --------------------------------------------------------------------------

class Case:
    def __init__(self, name, args, words, files=None):
        self.name = name
        self.args = args      # "{case}" is the case's folder, "{fix}" the shared fixtures, "{src}" the repository
        self.words = words    # fragments the message must contain
        self.files = files or {}


SCENARIO = "{fix}/tiny.yaml"
RATER = "{src}/raters/quick-reader.yaml"
PHANTOMS = ["phantoms", "{case}/s.yaml", "--count", "2", "--out", "{case}/out", "--preview-tiles", "0"]


def scenario_case(name, text, words):
    return Case(name, PHANTOMS, ["s.yaml"] + words + ["allowed:"], {"s.yaml": text})


DEEP_LIST = "[" * 100000 + "\n"
DEEP_BLOCK = "".join(" " * i + "k%d:\n" % i for i in range(100))

CASES = [
    # YAML strictness (phantoms reads the scenario through the shared loader).
    scenario_case("yaml_duplicate_key", "family: streaks\nname: a\nfamily: voids\n",
                  ["s.yaml:3:", "'family' appears twice", "first on line 1"]),
    scenario_case("yaml_duplicate_nested_key", "family: streaks\nnoise:\n  sigma: 1\n  sigma: 2\n",
                  ["s.yaml:4:", "'noise.sigma' appears twice"]),
    scenario_case("yaml_second_document", "family: streaks\n---\nfamily: voids\n",
                  ["s.yaml:2:", "a second YAML document", "one document per file"]),
    scenario_case("yaml_quoted_number", "family: streaks\ngeometry: {dims: \"2\"}\n",
                  ["s.yaml:2:", "'geometry.dims'", "in quotes", "without quotes"]),
    scenario_case("yaml_hex_number", "family: streaks\nnoise: {sigma: 0x10}\n",
                  ["s.yaml:2:", "'noise.sigma'", "'0x10'", "not a decimal number"]),
    scenario_case("yaml_infinite_number", "family: streaks\nnoise: {sigma: .inf}\n",
                  ["s.yaml:2:", "'noise.sigma'", "not a decimal number"]),
    scenario_case("yaml_integer_overflow", "family: streaks\ngeometry: {dims: 99999999999}\n",
                  ["s.yaml:2:", "'geometry.dims'", "2147483647"]),
    scenario_case("yaml_list_as_key", "[1]: 2\n", ["s.yaml:1:", "a list as a key", "plain text keys"]),
    scenario_case("yaml_deep_flow_nesting", DEEP_LIST, ["s.yaml:1:", "more than 64 levels", "at most 64"]),
    scenario_case("yaml_deep_block_nesting", DEEP_BLOCK, ["s.yaml:65:", "'k0.k1.k2", "at most 64"]),
    scenario_case("yaml_block_key_line", "family: streaks\nstreakz:\n  count: 3\n",
                  ["s.yaml:2:", "'streakz' is not a key"]),
    scenario_case("yaml_empty_file", "", ["the file is empty", "a YAML mapping"]),
    scenario_case("yaml_syntax_error", "family: streaks\nnoise: {sigma: [1, 2\n", ["YAML syntax error"]),
    # Input files that are not regular files (a pipe with no writer used to block forever).
    Case("scenario_is_a_pipe", PHANTOMS, ["s.yaml", "not a regular file", "allowed: a YAML file"], {"s.yaml": FIFO}),
    Case("scenario_is_a_folder", PHANTOMS, ["s.yaml", "is a folder", "allowed: a YAML file"], {"s.yaml": FOLDER}),
    Case("scenario_is_missing", PHANTOMS, ["s.yaml", "no such file", "allowed: a YAML file"]),
    Case("scenario_is_a_device", ["phantoms", "/dev/null", "--count", "2", "--out", "{case}/out"],
         ["/dev/null", "not a regular file", "allowed: a YAML file"]),
    # Command-line parsing.
    Case("count_not_a_number", ["phantoms", SCENARIO, "--count", "abc", "--out", "{case}/out"],
         ["--count", "'abc'", "not a whole number", "allowed:", "frugal phantoms --help"]),
    Case("count_fraction", ["phantoms", SCENARIO, "--count", "1.5", "--out", "{case}/out"],
         ["--count", "'1.5'", "allowed: a whole number"]),
    Case("count_too_large", ["phantoms", SCENARIO, "--count", "99999999999", "--out", "{case}/out"],
         ["--count", "out of range", "allowed:"]),
    Case("unknown_option", ["phantoms", SCENARIO, "--count", "2", "--out", "{case}/out", "--colour"],
         ["'--colour'", "allowed:", "frugal phantoms --help"]),
    Case("too_many_arguments", ["phantoms", SCENARIO, SCENARIO, "--count", "2", "--out", "{case}/out"],
         ["unexpected argument", "tiny.yaml", "allowed:"]),
    Case("option_without_value", ["phantoms", SCENARIO, "--out", "{case}/out", "--count"],
         ["--count needs a value", "allowed: a whole number"]),
    Case("required_option_missing", ["phantoms", SCENARIO, "--out", "{case}/out"],
         ["--count is required", "frugal phantoms --help"]),
    Case("seed_negative", ["phantoms", SCENARIO, "--count", "2", "--out", "{case}/out", "--seed", "-1"],
         ["--seed", "'-1'", "allowed: a whole number from 0 to 18446744073709551615"]),
    Case("seed_beyond_64_bits", ["phantoms", SCENARIO, "--count", "2", "--out", "{case}/out",
                                 "--seed", "18446744073709551616"],
         ["--seed", "'18446744073709551616'", "allowed: a whole number from 0 to 18446744073709551615"]),
    Case("no_command", [], ["no command given", "allowed: phantoms", "frugal --help"]),
    Case("unknown_command", ["phantom"], ["'phantom' is not a frugal command", "allowed: phantoms"]),
    # labels: the rater file goes through the same loader.
    Case("rater_duplicate_key", ["labels", SCENARIO, "--rater", "{case}/r.yaml", "--count", "2", "--out", "{case}/out"],
         ["r.yaml:2:", "'name' appears twice", "allowed:"], {"r.yaml": "name: a\nname: b\n"}),
    Case("rater_quoted_number", ["labels", SCENARIO, "--rater", "{case}/r.yaml", "--count", "2", "--out", "{case}/out"],
         ["r.yaml:3:", "'counting.cap'", "in quotes", "allowed:"], {"r.yaml": "name: a\ncounting:\n  cap: \"3\"\n"}),
    Case("rater_second_document", ["labels", SCENARIO, "--rater", "{case}/r.yaml", "--count", "2", "--out",
                                   "{case}/out"],
         ["r.yaml:2:", "a second YAML document", "allowed:"], {"r.yaml": "name: a\n---\nname: b\n"}),
    Case("rater_is_a_pipe", ["labels", SCENARIO, "--rater", "{case}/r.yaml", "--count", "2", "--out", "{case}/out"],
         ["r.yaml", "not a regular file", "allowed: a YAML file"], {"r.yaml": FIFO}),
    Case("rater_is_a_folder", ["labels", SCENARIO, "--rater", "{case}/r.yaml", "--count", "2", "--out", "{case}/out"],
         ["r.yaml", "is a folder", "allowed: a YAML file"], {"r.yaml": FOLDER}),
    Case("labels_seed_negative", ["labels", SCENARIO, "--rater", RATER, "--count", "2", "--out", "{case}/out",
                                  "--seed", "-1"],
         ["--seed", "'-1'", "allowed:", "frugal labels --help"]),
    Case("labels_count_not_a_number", ["labels", SCENARIO, "--rater", RATER, "--count", "two", "--out", "{case}/out"],
         ["--count", "'two'", "allowed: a whole number"]),
    # calibrate
    Case("calibrate_target_not_a_number", ["calibrate", SCENARIO, "--rater", RATER, "--target", "high", "--out",
                                           "{case}/r.yaml"],
         ["--target", "'high'", "allowed: a number", "frugal calibrate --help"]),
    Case("calibrate_subjects_fraction", ["calibrate", SCENARIO, "--rater", RATER, "--target", "0.5", "--subjects",
                                         "2.5", "--out", "{case}/r.yaml"],
         ["--subjects", "'2.5'", "allowed: a whole number"]),
    Case("calibrate_seed_beyond_64_bits", ["calibrate", SCENARIO, "--rater", RATER, "--target", "0.5", "--seed",
                                           "99999999999999999999", "--out", "{case}/r.yaml"],
         ["--seed", "allowed: a whole number from 0 to 18446744073709551615"]),
    Case("calibrate_rater_is_a_pipe", ["calibrate", SCENARIO, "--rater", "{case}/r.yaml", "--target", "0.5", "--out",
                                       "{case}/out.yaml"],
         ["r.yaml", "not a regular file", "allowed: a YAML file"], {"r.yaml": FIFO}),
    Case("calibrate_scenario_hex", ["calibrate", "{case}/s.yaml", "--rater", RATER, "--target", "0.5", "--out",
                                    "{case}/out.yaml"],
         ["s.yaml:2:", "'0x2'", "allowed:"], {"s.yaml": "family: streaks\ngeometry: {dims: 0x2}\n"}),
    # agree
    Case("agree_table_is_a_pipe", ["agree", "{case}/t.csv", "--stat", "icc"],
         ["t.csv", "not a regular file", "allowed: a CSV file"], {"t.csv": FIFO}),
    Case("agree_table_is_a_folder", ["agree", "{case}/t.csv", "--stat", "icc"],
         ["t.csv", "is a directory", "allowed: a CSV file"], {"t.csv": FOLDER}),
    Case("agree_confidence_not_a_number", ["agree", "{case}/t.csv", "--stat", "icc", "--confidence", "high"],
         ["--confidence", "'high'", "allowed: a number"], {"t.csv": "subject,a,b\n1,1,2\n2,2,2\n3,3,4\n"}),
    Case("agree_unknown_option", ["agree", "{case}/t.csv", "--stat", "icc", "--weight", "linear"],
         ["'--weight", "allowed:", "frugal agree --help"], {"t.csv": "subject,a,b\n1,1,2\n2,2,2\n3,3,4\n"}),
    Case("agree_too_many_arguments", ["agree", "{case}/t.csv", "{case}/t.csv", "--stat", "icc"],
         ["unexpected argument", "t.csv", "allowed:"], {"t.csv": "subject,a,b\n1,1,2\n2,2,2\n3,3,4\n"}),
    # train
    Case("train_epochs_not_a_number", ["train", "--phantoms", "{fix}/set", "--labels", "{fix}/labels", "--strategy",
                                       "count-map", "--out", "{case}/m.pt", "--epochs", "many"],
         ["--epochs", "'many'", "allowed: a whole number", "frugal train --help"]),
    Case("train_seed_negative", ["train", "--phantoms", "{fix}/set", "--labels", "{fix}/labels", "--strategy",
                                 "count-map", "--out", "{case}/m.pt", "--seed", "-7"],
         ["--seed", "'-7'", "allowed: a whole number from 0"]),
    Case("train_nan_image", ["train", "--phantoms", "{case}/set", "--labels", "{fix}/labels", "--strategy", "count-map",
                             "--out", "{case}/m.pt", "--epochs", "1", "--width", "4", "--depth", "2", "--threads", "1"],
         ["subject_000000.nii.gz", "1024 of 1024 voxels are not finite", "allowed: finite intensities"],
         {"set": copy_set_with_nan_image("set")}),
    # predict: NIfTI headers and content (NIfTI-1 standard, nifti1.h)
    Case("nifti_wrong_magic", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "magic is 'xyz'", "allowed: 'n+1'"], {"i.nii": nifti_bytes(patch=[(344, "4s", b"xyz\0")])}),
    Case("nifti_pair_magic", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "magic is 'ni1'", "allowed: 'n+1'"], {"i.nii": nifti_bytes(patch=[(344, "4s", b"ni1\0")])}),
    Case("nifti_bitpix_disagrees", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "bitpix is 16", "allowed: bitpix matching the datatype"], {"i.nii": nifti_bytes(patch=[(72, "<h", 16)])}),
    Case("nifti_datatype_unknown", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "datatype 77", "allowed: uint8"], {"i.nii": nifti_bytes(patch=[(70, "<h", 77)])}),
    Case("nifti_datatype_size_disagrees", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out",
                                           "{case}/out"],
         ["i.nii", "accounts for 1376", "allowed: a file whose size matches its header"],
         {"i.nii": nifti_bytes(patch=[(70, "<h", 2), (72, "<h", 8)])}),
    Case("nifti_truncated", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii.gz", "--out", "{case}/out"],
         ["i.nii.gz", "truncated", "allowed: a complete file"], {"i.nii.gz": gzipped(nifti_bytes()[:2000])}),
    Case("nifti_dim0_out_of_range", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "dim[0] is 8", "allowed: 1..7"], {"i.nii": nifti_bytes(patch=[(40, "<h", 8)])}),
    Case("nifti_dim_negative", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "dim[1] is -32", "allowed: a positive length"], {"i.nii": nifti_bytes(patch=[(42, "<h", -32)])}),
    Case("nifti_vox_offset_nan", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "vox_offset is nan", "allowed: a byte offset of at least 352"],
         {"i.nii": nifti_bytes(patch=[(108, "<f", float("nan"))])}),
    Case("nifti_pixdim_nan", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "pixdim[1]", "allowed: a finite spacing > 0"], {"i.nii": nifti_bytes(patch=[(80, "<f", float("nan"))])}),
    Case("nifti_pixdim_zero", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "pixdim[2]", "allowed: a finite spacing > 0"], {"i.nii": nifti_bytes(patch=[(84, "<f", 0.0)])}),
    Case("nifti_all_nan", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii.gz", "--out", "{case}/out"],
         ["i.nii.gz", "1024 of 1024 voxels are not finite", "allowed: finite intensities"],
         {"i.nii.gz": gzipped(nifti_bytes(np.full((32, 32), np.nan)))}),
    Case("nifti_one_infinite_voxel", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out",
                                      "{case}/out"],
         ["i.nii", "1 of 1024 voxels", "the first at voxel (3, 5, 0)", "allowed: finite intensities"],
         {"i.nii": nifti_bytes(one_infinite_voxel())}),
    Case("nifti_not_a_header", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "not a readable NIfTI-1 file", "allowed: a NIfTI-1 file"], {"i.nii": "not an image\n"}),
    Case("predict_image_is_a_pipe", ["predict", "{fix}/threshold.pt", "--images", "{case}/i.nii", "--out", "{case}/out"],
         ["i.nii", "allowed:"], {"i.nii": FIFO}),
    Case("predict_threads_not_a_number", ["predict", "{fix}/threshold.pt", "--images", "{fix}/set", "--out",
                                          "{case}/out", "--threads", "all"],
         ["--threads", "'all'", "allowed: a whole number", "frugal predict --help"]),
    # score
    Case("score_nan_map", ["score", "{case}/predicted/predictions.csv", "--phantoms", "{fix}/set"],
         ["subject_000001.nii.gz", "not finite", "allowed: finite intensities"],
         {"predicted": copy_predictions_with_nan_map}),
    Case("score_rater_file_duplicate_key", ["score", "{fix}/predicted/predictions.csv", "--phantoms", "{fix}/set",
                                            "--rater-file", "{case}/r.yaml"],
         ["r.yaml:4:", "'grading.bin_edges' appears twice", "first on line 3", "allowed:"],
         {"r.yaml": "name: a\ngrading:\n  bin_edges: [0, 0.1]\n  bin_edges: [0, 0.2]\n"}),
    Case("score_rater_file_is_a_pipe", ["score", "{fix}/predicted/predictions.csv", "--phantoms", "{fix}/set",
                                        "--rater-file", "{case}/r.yaml"],
         ["r.yaml", "not a regular file", "allowed: a YAML file"], {"r.yaml": FIFO}),
    Case("score_threshold_not_a_number", ["score", "{fix}/predicted/predictions.csv", "--phantoms", "{fix}/set",
                                          "--map-threshold", "half"],
         ["--map-threshold", "'half'", "allowed: a number", "frugal score --help"]),
    Case("score_unknown_option", ["score", "{fix}/predicted/predictions.csv", "--phantoms", "{fix}/set", "--jsn",
                                  "{case}/s.json"],
         ["'--jsn", "allowed:", "frugal score --help"]),
]


def write_files(folder, files):
    for name, content in files.items():
        target = os.path.join(folder, name)
        if content is FIFO:
            os.mkfifo(target)
        elif content is FOLDER:
            os.makedirs(target)
        elif callable(content):
            content(target)
        else:
            with open(target, "wb") as out:
                out.write(content.encode() if isinstance(content, str) else content)


def build_fixtures():
    os.makedirs(fixture())
    with open(os.path.join(SOURCE, "scenarios", "ageing-cohort-streaks-small.yaml")) as source:
        text = source.read().replace("size_2d: [64, 64]", "size_2d: [32, 32]")
    with open(fixture("tiny.yaml"), "w") as target:
        target.write(text)
    run_frugal(FRUGAL, "phantoms", fixture("tiny.yaml"), "--count", 4, "--out", fixture("set"), "--preview-tiles", 0)
    run_frugal(FRUGAL, "labels", fixture("tiny.yaml"), "--rater", os.path.join(SOURCE, "raters", "quick-reader.yaml"),
               "--count", 4, "--out", fixture("labels"))
    run_frugal(FRUGAL, "train", "--phantoms", fixture("set"), "--labels", fixture("labels"), "--strategy", "threshold",
               "--out", fixture("threshold.pt"))
    run_frugal(FRUGAL, "predict", fixture("threshold.pt"), "--images", fixture("set"), "--out", fixture("predicted"))


class BadInputCatalogue(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        build_fixtures()

    def check(self, case):
        folder = os.path.join(WORK, "cases", case.name)
        os.makedirs(folder)
        write_files(folder, case.files)
        args = [a.format(case=folder, fix=fixture(), src=SOURCE) for a in case.args]
        try:
            result = subprocess.run([FRUGAL, *args], capture_output=True, text=True, timeout=SECONDS_PER_CASE)
        except subprocess.TimeoutExpired:
            self.fail(f"frugal {' '.join(args)} did not finish within {SECONDS_PER_CASE} s")
        message = result.stderr.strip()
        self.assertEqual(result.returncode, 2, f"frugal {' '.join(args)}:\n{result.stdout}\n{result.stderr}")
        self.assertTrue(message.startswith("frugal: error: "), message)
        self.assertEqual(len(message.splitlines()), 1, f"one line expected:\n{message}")
        for word in case.words:
            self.assertIn(word.format(case=folder, fix=fixture(), src=SOURCE), message)


class HelpAndVersion(unittest.TestCase):
    """The parser's own requests still succeed (exit 0, on standard output)."""

    def test_help_and_version_exit_0(self):
        for args in (["--help"], ["--version"], *([command, "--help"] for command in
                                                   ("phantoms", "labels", "calibrate", "agree", "train", "predict",
                                                    "score"))):
            with self.subTest(args=args):
                result = run_frugal(FRUGAL, *args)
                self.assertTrue(result.stdout.strip(), args)
                self.assertEqual(result.stderr, "", args)


def add_case(case):
    setattr(BadInputCatalogue, "test_" + case.name, lambda self: self.check(case))


for entry in CASES:
    add_case(entry)


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, WORK
    FRUGAL, SOURCE, WORK = frugal, source, scratch


if __name__ == "__main__":
    run_suite(__doc__, "frugal-bad-input-", configure)

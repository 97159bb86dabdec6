#!/usr/bin/env python3
"""A catalogue of hostile inputs across frugal's commands: each case writes its files into a
scratch folder, runs frugal, and checks the exit code (2), that nothing hangs (a time limit per
case), and the key words of the one-line message: the file or option named, and what is allowed.

Expected wording: common practice, no source (frugal's "FILE:LINE: key path ...; allowed: ..."
messages). NIfTI header rules: the NIfTI-1 standard header nifti1.h. A full disk is simulated
without privileges by a file-size limit (setrlimit(2) RLIMIT_FSIZE with SIGXFSZ ignored, so that
writes fail with EFBIG).

Run by CTest as: /usr/bin/python3 bad_input_catalogue_test.py --frugal PATH --source REPO_DIR
"""

import gzip
import json
import os
import resource
import shutil
import signal
import stat
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
    def __init__(self, name, args, words, files=None, file_size_limit=None, stdout_file=None):
        self.name = name
        self.args = args      # "{case}" is the case's folder, "{fix}" the shared fixtures, "{src}" the repository
        self.words = words    # fragments the message must contain
        self.files = files or {}
        self.file_size_limit = file_size_limit  # bytes per file (RLIMIT_FSIZE): a full disk without root
        self.stdout_file = stdout_file          # standard output goes to this file in the case's folder


def full_disk(limit_bytes):
    """A preexec_fn that makes writes beyond `limit_bytes` fail with EFBIG, as on a full disk:
    setrlimit(RLIMIT_FSIZE) with SIGXFSZ ignored (POSIX setrlimit(2); Python's resource module)."""
    def limit():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit_bytes, limit_bytes))
    return limit


def copy_of(name, change=None):
    """A copy of the fixture `name`, then `change(target)`."""
    def write(target):
        shutil.copytree(fixture(name), target)
        if change:
            change(target)
    return write


def remove_manifest(target):
    os.remove(os.path.join(target, "manifest.json"))


def truncate_manifest(target):
    path = os.path.join(target, "manifest.json")
    with open(path) as f:
        text = f.read()
    with open(path, "w") as f:
        f.write(text[:len(text) // 2])


def manifest_schema_version(version):
    def change(target):
        path = os.path.join(target, "manifest.json")
        with open(path) as f:
            manifest = json.load(f)
        manifest["schema_version"] = version
        with open(path, "w") as f:
            json.dump(manifest, f)
    return change


def prediction_cell(column, value, row=0):
    """Sets `column` of data row `row` of predictions.csv to `value`."""
    def change(target):
        path = os.path.join(target, "predictions.csv")
        with open(path) as f:
            lines = f.read().splitlines()
        header = 1 if lines[0].startswith("#") else 0
        names = lines[header].split(",")
        cells = lines[header + 1 + row].split(",")
        cells[names.index(column)] = value
        lines[header + 1 + row] = ",".join(cells)
        with open(path, "w") as f:
            f.write("\n".join(lines) + "\n")
    return change


def predictions_with(*changes):
    def write(target):
        shutil.copytree(fixture("predicted"), target)
        for change in changes:
            change(target)
    return write


SCENARIO = "{fix}/tiny.yaml"
RATER = "{src}/raters/quick-reader.yaml"
PHANTOMS = ["phantoms", "{case}/s.yaml", "--count", "2", "--out", "{case}/out", "--preview-tiles", "0"]


def scenario_case(name, text, words):
    return Case(name, PHANTOMS, ["s.yaml"] + words + ["allowed:"], {"s.yaml": text})


PHANTOMS_FIX = ["phantoms", SCENARIO, "--count", "2", "--out", "{case}/out", "--preview-tiles", "0"]
LABELS = ["labels", SCENARIO, "--rater", RATER, "--count", "2", "--out", "{case}/out"]
CALIBRATE = ["calibrate", SCENARIO, "--rater", RATER, "--target", "0.5", "--subjects", "30", "--out"]
TRAIN = ["train", "--phantoms", "{fix}/set", "--labels", "{fix}/labels", "--strategy", "threshold", "--out"]
PREDICT = ["predict", "{fix}/threshold.pt", "--images", "{fix}/set", "--out"]
SCORE = ["score", "{fix}/predicted/predictions.csv", "--phantoms", "{fix}/set"]
SCORE_CHANGED = ["score", "{case}/predicted/predictions.csv", "--phantoms", "{fix}/set"]


def copy_nan_map_into(target):
    map_path = os.path.join(target, "maps", "subject_000001.nii.gz")
    nib.save(nan_image_like(map_path), map_path)


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
    # Option values that parse but are out of range: the message names the option typed and the
    # key it sets, with what is allowed (learn's validate() names the key; cli/option_keys maps it).
    Case("train_batch_size_zero", ["train", "--phantoms", "{fix}/set", "--labels", "{fix}/labels", "--strategy",
                                   "count-map", "--out", "{case}/m.pt", "--batch-size", "0"],
         ["--batch-size = 0", "must be at least 1", "(train.batch_size)"]),
    Case("train_rotation_too_large", ["train", "--phantoms", "{fix}/set", "--labels", "{fix}/labels", "--strategy",
                                      "count-map", "--out", "{case}/m.pt", "--rotation-degrees", "90"],
         ["--rotation-degrees = 90", "allowed [0, 45]", "(train.augmentation.rotation_degrees)"]),
    Case("train_line_threshold_above_one", TRAIN[:6] + ["line-filter", "--out", "{case}/m.pt",
                                                        "--line-threshold", "2"],
         ["--line-threshold", "relative thresholds lie in (0, 1]", "(train.line_filter.threshold)"]),
    Case("train_field_inverted", TRAIN + ["{case}/m.pt", "--field-low", "5", "--field-high", "1"],
         ["--field-low = 5, high = 1", "low must be below high", "(train.field.low)"]),
    Case("score_minimum_iou_zero", SCORE + ["--minimum-iou", "0"],
         ["--minimum-iou is 0", "greater than 0 and at most 1", "(score.detection.minimum_iou)"]),
    Case("score_confidence_one", SCORE + ["--confidence", "1"],
         ["--confidence = 1", "allowed (0, 1)", "(score.confidence)"]),
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
    # Output paths (common practice, no source): nothing but a regular file or a folder of frugal's
    # own is replaced, and the refusal comes before anything is written.
    Case("phantoms_out_dev_full", ["phantoms", SCENARIO, "--count", "2", "--out", "/dev/full", "--preview-tiles", "0"],
         ["/dev/full", "a character device", "allowed: a new folder or a folder of frugal's own"]),
    Case("phantoms_out_is_a_pipe", PHANTOMS_FIX, ["out", "a named pipe", "allowed: a new folder"], {"out": FIFO}),
    Case("labels_out_is_a_pipe", LABELS, ["out", "a named pipe", "allowed: a new folder"], {"out": FIFO}),
    Case("labels_out_is_a_file", LABELS, ["out", "is a file, not a folder", "allowed: a new folder"],
         {"out": "a file\n"}),
    Case("calibrate_out_dev_full", CALIBRATE + ["/dev/full"],
         ["/dev/full", "a character device", "allowed: a new or regular file"]),
    Case("calibrate_out_is_a_pipe", CALIBRATE + ["{case}/r.yaml"], ["r.yaml", "a named pipe", "allowed:"],
         {"r.yaml": FIFO}),
    Case("calibrate_temporary_is_a_pipe", CALIBRATE + ["{case}/r.yaml"],
         ["r.yaml.partial", "a named pipe", "allowed: a regular file or none"], {"r.yaml.partial": FIFO}),
    Case("train_out_dev_full", TRAIN + ["/dev/full"],
         ["/dev/full", "a character device", "allowed: a new or regular file for the checkpoint"]),
    Case("train_out_is_a_pipe", TRAIN + ["{case}/m.pt"], ["m.pt", "a named pipe", "allowed:"], {"m.pt": FIFO}),
    Case("train_sidecar_is_a_pipe", TRAIN + ["{case}/m.pt"], ["m.pt.json", "a named pipe", "allowed:"],
         {"m.pt.json": FIFO}),
    Case("train_out_is_a_folder", TRAIN + ["{case}/m.pt"], ["m.pt", "is a folder", "allowed:"], {"m.pt": FOLDER}),
    Case("predict_out_is_a_pipe", PREDICT + ["{case}/out"], ["out", "a named pipe", "allowed: a new folder"],
         {"out": FIFO}),
    Case("predict_out_dev_full", PREDICT + ["/dev/full"], ["/dev/full", "a character device", "allowed:"]),
    Case("score_json_is_a_pipe", SCORE + ["--json", "{case}/s.json"],
         ["s.json", "a named pipe", "allowed: a new or regular file for the JSON report"], {"s.json": FIFO}),
    Case("score_json_dev_full", SCORE + ["--json", "/dev/full"], ["/dev/full", "a character device", "allowed:"]),
    # SQLite would open a device or a pipe and fail with an I/O error that reads like a failing disk.
    Case("run_out_dev_full", ["run", "{src}/studies/ageing-cohort.yaml", "--out", "/dev/full"],
         ["/dev/full", "a character device", "allowed: a new file or an existing frugal results store"]),
    Case("run_out_is_a_pipe", ["run", "{src}/studies/ageing-cohort.yaml", "--out", "{case}/r.db"],
         ["r.db", "a named pipe", "allowed: a new file or an existing frugal results store"], {"r.db": FIFO}),
    # A folder of another kind is not replaced, even with --overwrite; the message names its kind.
    Case("phantoms_out_holds_labels", ["phantoms", SCENARIO, "--count", "2", "--out", "{case}/out", "--overwrite"],
         ["already holds a finished label set", "not a finished phantom set", "allowed: a new folder"],
         {"out": copy_of("labels")}),
    Case("labels_out_holds_phantoms", LABELS + ["--overwrite"],
         ["already holds a finished phantom set", "not a finished label set", "allowed:"], {"out": copy_of("set")}),
    Case("predict_out_holds_phantoms", PREDICT + ["{case}/out", "--overwrite"],
         ["already holds a finished phantom set", "not finished predictions", "allowed:"], {"out": copy_of("set")}),
    Case("labels_out_finished", LABELS, ["already holds a finished label set", "--overwrite"],
         {"out": copy_of("labels")}),
    Case("predict_out_finished", PREDICT + ["{case}/out"], ["already holds finished predictions", "--overwrite"],
         {"out": copy_of("predicted")}),
    # Names longer than the file system takes (NAME_MAX 255 on Linux, less room for ".partial").
    Case("phantoms_out_name_too_long", ["phantoms", SCENARIO, "--count", "2", "--out", "{case}/" + "n" * 300],
         ["300 characters long", "name too long", "allowed: names of at most 239 characters"]),
    Case("train_out_name_too_long", TRAIN + ["{case}/" + "m" * 250], ["250 characters long", "name too long"]),
    Case("score_json_name_too_long", SCORE + ["--json", "{case}/" + "j" * 256], ["256 characters long", "allowed:"]),
    # A full disk (a file-size limit): exit 2, a clear message, no temporary file left.
    Case("phantoms_full_disk", PHANTOMS_FIX, ["subject_000000.nii.gz", "writing the NIfTI file failed", "disk is full"],
         file_size_limit=3000),
    Case("labels_full_disk", ["labels", SCENARIO, "--rater", RATER, "--count", "40", "--out", "{case}/out"],
         ["labels.csv", "writing failed", "disk is full", "nothing was replaced"], file_size_limit=1500),
    Case("train_full_disk_classical", TRAIN + ["{case}/m.pt"], ["m.pt", "writing failed", "disk is full"],
         file_size_limit=100),
    Case("train_full_disk_network", ["train", "--phantoms", "{fix}/set", "--labels", "{fix}/labels", "--strategy",
                                     "count-map", "--epochs", "1", "--width", "4", "--depth", "2", "--threads", "1",
                                     "--out", "{case}/m.pt"],
         ["m.pt", "writing failed", "disk is full"], file_size_limit=20000),
    Case("predict_full_disk", PREDICT + ["{case}/out"], ["writing failed", "disk is full"], file_size_limit=300),
    Case("score_json_full_disk", SCORE + ["--json", "{case}/s.json"], ["s.json", "writing failed", "disk is full"],
         file_size_limit=500),
    Case("score_stdout_full_disk", SCORE, ["standard output", "writing failed"], file_size_limit=200,
         stdout_file="report.txt"),
    # Scoring: absurd and non-finite values with row and column; every map must be there.
    Case("score_count_minus_1e308", SCORE_CHANGED, ["predictions.csv line 3, column count", "-1e308",
                                                    "allowed: a number from 0 to 1e9"],
         {"predicted": predictions_with(prediction_cell("count", "-1e308"))}),
    Case("score_count_infinite", SCORE_CHANGED, ["line 3, column count", '"inf"', "allowed: a finite decimal number"],
         {"predicted": predictions_with(prediction_cell("count", "inf"))}),
    Case("score_count_negative", SCORE_CHANGED, ["line 4, column count", "-1 is not a lesion count", "allowed:"],
         {"predicted": predictions_with(prediction_cell("count", "-1", row=1))}),
    Case("score_count_absurd", SCORE_CHANGED, ["column count", "1e300", "allowed: a number from 0 to 1e9"],
         {"predicted": predictions_with(prediction_cell("count", "1e300"))}),
    Case("score_burden_negative", SCORE_CHANGED, ["column burden_mm3", "-5", "allowed: a number from 0 to 1e12"],
         {"predicted": predictions_with(prediction_cell("burden_mm3", "-5"))}),
    Case("score_fraction_above_one", SCORE_CHANGED,
         ["column affected_fraction", "1.5", "allowed: a number from 0 to 1"],
         {"predicted": predictions_with(prediction_cell("affected_fraction", "1.5"))}),
    Case("score_fraction_negative", SCORE_CHANGED,
         ["column affected_fraction", "-0.1", "allowed: a number from 0 to 1"],
         {"predicted": predictions_with(prediction_cell("affected_fraction", "-0.1"))}),
    Case("score_probability_map_missing", SCORE_CHANGED, ["line 3", "map file", "missing.nii.gz", "allowed:"],
         {"predicted": predictions_with(prediction_cell("map", "maps/missing.nii.gz"))}),
    Case("score_density_map_missing", SCORE_CHANGED, ["line 3", "map file", "missing.nii.gz", "allowed:"],
         {"predicted": predictions_with(prediction_cell("map", "maps/missing.nii.gz"),
                                        prediction_cell("map_kind", "density"))}),
    Case("score_density_map_nan", SCORE_CHANGED, ["subject_000001.nii.gz", "not finite", "allowed: finite intensities"],
         {"predicted": predictions_with(copy_nan_map_into, prediction_cell("map_kind", "density", row=1))}),
    # Unfinished and foreign folders: the manifest is checked, and predictions must be the set's.
    Case("train_set_without_manifest", ["train", "--phantoms", "{case}/set", "--labels", "{fix}/labels", "--strategy",
                                        "threshold", "--out", "{case}/m.pt"],
         ["set: no manifest.json", "unfinished or not a phantom set", "allowed: a phantom set folder"],
         {"set": copy_of("set", remove_manifest)}),
    Case("train_set_truncated_manifest", ["train", "--phantoms", "{case}/set", "--labels", "{fix}/labels",
                                          "--strategy", "threshold", "--out", "{case}/m.pt"],
         ["manifest.json", "not valid JSON", "allowed: the manifest.json of a phantom set"],
         {"set": copy_of("set", truncate_manifest)}),
    Case("predict_set_without_manifest", ["predict", "{fix}/threshold.pt", "--images", "{case}/set", "--out",
                                          "{case}/out"],
         ["no manifest.json", "unfinished", "allowed: a phantom set folder"], {"set": copy_of("set", remove_manifest)}),
    Case("score_set_without_manifest", ["score", "{fix}/predicted/predictions.csv", "--phantoms", "{case}/set"],
         ["no manifest.json", "unfinished", "allowed: a phantom set folder"], {"set": copy_of("set", remove_manifest)}),
    Case("score_set_other_schema_version", ["score", "{fix}/predicted/predictions.csv", "--phantoms", "{case}/set"],
         ["manifest.json", "schema_version is 99", "allowed: 1"], {"set": copy_of("set", manifest_schema_version(99))}),
    Case("score_labels_as_phantom_set", ["score", "{fix}/predicted/predictions.csv", "--phantoms", "{fix}/labels"],
         ["holds a finished label set", "not a phantom set folder", "allowed: a phantom set folder"]),
    Case("score_predictions_of_another_seed", ["score", "{fix}/predicted_seed7/predictions.csv", "--phantoms",
                                               "{fix}/set"],
         ["predicted from the phantom set", "set_seed7", "another seed, size or scenario", "allowed:"]),
    Case("score_predictions_of_another_size", ["score", "{fix}/predicted_3/predictions.csv", "--phantoms", "{fix}/set"],
         ["predicted from the phantom set", "set_3", "allowed: the phantom set the images came from"]),
    Case("score_predictions_manifest_of_labels", SCORE_CHANGED,
         ["manifest.json", "holds a finished label set", "not a predictions folder"],
         {"predicted": predictions_with(lambda t: shutil.copy(fixture("labels", "manifest.json"), t))}),
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
    # Sets that share subject ids with "set" but not its truth: another seed, another size.
    for name, extra in (("seed7", ["--count", 4, "--seed", 7]), ("3", ["--count", 3])):
        run_frugal(FRUGAL, "phantoms", fixture("tiny.yaml"), *extra, "--out", fixture("set_" + name),
                   "--preview-tiles", 0)
        run_frugal(FRUGAL, "predict", fixture("threshold.pt"), "--images", fixture("set_" + name), "--out",
                   fixture("predicted_" + name))


class BadInputCatalogue(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        build_fixtures()

    def check(self, case):
        folder = os.path.join(WORK, "cases", case.name)
        os.makedirs(folder)
        write_files(folder, case.files)
        args = [a.format(case=folder, fix=fixture(), src=SOURCE) for a in case.args]
        limit = full_disk(case.file_size_limit) if case.file_size_limit else None
        stdout = open(os.path.join(folder, case.stdout_file), "w") if case.stdout_file else subprocess.PIPE
        try:
            result = subprocess.run([FRUGAL, *args], stdout=stdout, stderr=subprocess.PIPE, text=True,
                                    timeout=SECONDS_PER_CASE, preexec_fn=limit)
        except subprocess.TimeoutExpired:
            self.fail(f"frugal {' '.join(args)} did not finish within {SECONDS_PER_CASE} s")
        finally:
            if case.stdout_file:
                stdout.close()
        message = result.stderr.strip()
        self.assertEqual(result.returncode, 2, f"frugal {' '.join(args)}:\n{result.stdout}\n{result.stderr}")
        self.assertTrue(message.startswith("frugal: error: "), message)
        self.assertEqual(len(message.splitlines()), 1, f"one line expected:\n{message}")
        for word in case.words:
            self.assertIn(word.format(case=folder, fix=fixture(), src=SOURCE), message)
        # Nothing half-written is left, and no pipe given was replaced (common practice, no source).
        for root, _, names in os.walk(folder):
            for name in names:
                if os.path.relpath(os.path.join(root, name), folder) not in case.files:
                    self.assertNotIn(".partial", name, os.path.join(root, name))
        for name, content in case.files.items():
            if content is FIFO:
                self.assertTrue(stat.S_ISFIFO(os.stat(os.path.join(folder, name)).st_mode), name)
        self.assertTrue(stat.S_ISCHR(os.stat("/dev/full").st_mode), "/dev/full was replaced")


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

#!/usr/bin/env python3
"""Reference check of the augmentation's linear warp (experiments/learn/augmentation.cpp) against
scipy.ndimage.map_coordinates(order=1, mode='nearest'): bilinear/trilinear interpolation with
coordinates clamped to the image, i.e. edge replication.

Run by CTest as: /usr/bin/python3 augmentation_reference_test.py --frugal PATH --source REPO_DIR
    --augmentation-test PATH_OF_augmentation_test
It runs the gtest AugmentationReference.WritesScipyCases, which writes a fixed random 2D and 3D
image, sampling positions (a random grid, uniform positions up to 3 voxels outside the image,
exact edges and integers) and frugal's result as raw little-endian float32 into a scratch folder.
"""

import argparse
import os
import subprocess
import sys
import unittest

import numpy as np
from scipy import ndimage

from frugal_testing import run_suite

AUGMENTATION_TEST = None  # path of the augmentation_test gtest program (from --augmentation-test)
WORK = None  # scratch folder, removed at the end
TOLERANCE = 1e-5  # float32 blends of values in [-1, 1] against scipy's float64


def configure(frugal, source, scratch):
    del frugal, source  # the check needs neither the command line nor the sources
    global WORK
    WORK = scratch


class MapCoordinatesReference(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        environment = dict(os.environ, FRUGAL_AUGMENTATION_REFERENCE_DIR=WORK)
        done = subprocess.run([AUGMENTATION_TEST, "--gtest_filter=AugmentationReference.WritesScipyCases"],
                              capture_output=True, text=True, timeout=120, env=environment)
        if done.returncode != 0 or "[  PASSED  ] 1 test" not in done.stdout:
            raise AssertionError(f"{AUGMENTATION_TEST} exited {done.returncode}:\n{done.stdout}\n{done.stderr}")

    def load(self, name):
        with open(os.path.join(WORK, name + "_shape.txt")) as text:
            nx, ny, nz = (int(v) for v in text.read().split())
        dims = 3 if nz > 1 else 2

        def read(part):
            return np.fromfile(os.path.join(WORK, f"{name}_{part}.f32"), dtype="<f4")

        # frugal stores x fastest, so numpy's row-major array is indexed [z, y, x] (or [y, x]).
        image = read("image").reshape((nz, ny, nx) if dims == 3 else (ny, nx))
        positions = read("positions").reshape(-1, dims)
        result = read("linear")
        self.assertEqual(result.size, nx * ny * nz)
        self.assertEqual(positions.shape[0], result.size)
        return image, positions, result

    def check(self, name):
        image, positions, result = self.load(name)
        # scipy's coordinate rows follow its axis order: (y, x) or (z, y, x).
        coordinates = positions[:, ::-1].T.astype(np.float64)
        expected = ndimage.map_coordinates(image.astype(np.float64), coordinates, order=1, mode="nearest")
        shape = np.array(image.shape[::-1])
        outside = ((positions < 0) | (positions > shape - 1)).any(axis=1)
        self.assertGreater(outside.sum(), result.size // 10, "the case should sample outside the image")
        error = np.abs(result.astype(np.float64) - expected)
        worst = int(error.argmax())
        self.assertLessEqual(error.max(), TOLERANCE,
                             f"{name}: voxel {worst} at {positions[worst]} gave {result[worst]}, "
                             f"scipy.ndimage.map_coordinates {expected[worst]}")

    def test_bilinear_2d(self):
        self.check("plane")

    def test_trilinear_3d(self):
        self.check("volume")


if __name__ == "__main__":
    parser = argparse.ArgumentParser(add_help=False)
    parser.add_argument("--augmentation-test", required=True)
    own, rest = parser.parse_known_args()
    AUGMENTATION_TEST = os.path.abspath(own.augmentation_test)
    sys.argv = [sys.argv[0]] + rest
    run_suite("Linear warp of the augmentation against scipy.ndimage.map_coordinates", "frugal-augmentation-", configure)

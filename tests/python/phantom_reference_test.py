#!/usr/bin/env python3
"""Reference checks of `frugal phantoms` against outside libraries and definitions: the NIfTI
headers as nibabel reads them, the truth tables against connected components of the label images
(scipy.ndimage, scikit-image), densitometry and Hounsfield anchors, the Rician noise model against
scipy.stats, determinism, rescans and the exit code on bad input.

Run by CTest as: /usr/bin/python3 phantom_reference_test.py --frugal PATH --source REPO_DIR
Every set is drawn with an explicit seed, printed in the failure message of each check.
"""

import json
import math
import os
import re
import subprocess
import unittest

import nibabel as nib
import numpy as np
import skimage.measure
from scipy import ndimage, stats

from frugal_testing import read_table, run_suite

FRUGAL = None   # path of the frugal executable (from --frugal)
SOURCE = None   # repository root (from --source)
WORK = None     # scratch folder shared by the tests of this module, removed at the end
SEED = 20240611  # explicit seed of every set below unless a test says otherwise
DENSITOMETRY_THRESHOLD_HU = -950.0  # Gevenois et al. 1995, Am J Respir Crit Care Med 152:653
STREAKS_COUNT = {2: 4, 3: 10}  # subjects per streaks set; 3D is larger so the known 3D defect always shows
VOIDS_COUNT = 2
_SETS = {}


# ----------------------------------------------------------------------------------------------
# helpers


def scenario_path(name):
    return os.path.join(SOURCE, "tests", "data", "scenarios", name + ".yaml")


def run_frugal(*args, timeout=120):
    return subprocess.run([FRUGAL, *[str(a) for a in args]], capture_output=True, text=True, timeout=timeout)


def phantoms(scenario, out, count, *extra, seed=SEED):
    """Runs `frugal phantoms` and fails loudly (with the command) when it does not exit 0."""
    done = run_frugal("phantoms", scenario, "--count", count, "--out", out, "--seed", seed, *extra)
    if done.returncode != 0:
        raise AssertionError(f"frugal phantoms {scenario} --count {count} --seed {seed} {' '.join(map(str, extra))} "
                             f"exited {done.returncode}: {done.stderr}")
    return out


def phantom_set(key, scenario, count, *extra, seed=SEED):
    """A set drawn once per module run and shared by the tests that ask for the same arguments."""
    arguments = (key, scenario, count, tuple(str(e) for e in extra), seed)
    if arguments not in _SETS:
        folder = os.path.join(WORK, f"{key}-n{count}-seed{seed}-{len(_SETS)}")
        _SETS[arguments] = phantoms(scenario, folder, count, *extra, seed=seed)
    return _SETS[arguments]


def edited_scenario(name, replacements, new_name):
    """A temporary copy of a test scenario with textual replacements (PyYAML may be absent)."""
    with open(scenario_path(name)) as source:
        text = source.read()
    for pattern, replacement in replacements:
        text, n = re.subn(pattern, replacement, text, flags=re.MULTILINE)
        if n == 0:
            raise AssertionError(f"scenario edit {pattern!r} matched nothing in {name}")
    path = os.path.join(WORK, new_name + ".yaml")
    with open(path, "w") as out:
        out.write(text)
    return path



def manifest(folder):
    with open(os.path.join(folder, "manifest.json")) as document:
        return json.load(document)


def load(folder, relative):
    image = nib.load(os.path.join(folder, relative))
    return image, np.asanyarray(image.dataobj)


def geometry_of(folder):
    """(shape, spacing) the scenario recorded in the manifest asks for."""
    scenario = manifest(folder)["scenario"]
    geometry = scenario["geometry"]
    spacing = [float(s) for s in geometry["spacing_mm"]]
    shape = tuple(geometry["size_2d"]) if geometry["dims"] == 2 else tuple(geometry["size_3d"])
    return shape, spacing


def voxel_volume(spacing):
    # 2D images use the third spacing entry as slice thickness (phantoms/scenario.h).
    return spacing[0] * spacing[1] * spacing[2]


def world_of_voxels(shape, spacing):
    """World millimetres of every voxel centre: origin -(n-1)/2*spacing per axis, identity direction."""
    axes = [(np.arange(n) - (n - 1) / 2.0) * spacing[axis] for axis, n in enumerate(shape)]
    return np.meshgrid(*axes, indexing="ij")


def subjects_of(folder, rescan="0"):
    return [row for row in read_table(os.path.join(folder, "truth.csv")) if row["rescan"] == rescan]


def full_connectivity(ndim):
    # 8-connectivity in 2D, 26 in 3D: scipy.ndimage.label's structure np.ones((3,) * ndim).
    return np.ones((3,) * ndim, dtype=bool)


# ----------------------------------------------------------------------------------------------
# 1. NIfTI files as nibabel reads them


class NiftiHeaderTest(unittest.TestCase):
    # The same sets as the truth and densitometry checks below, so they are drawn once.
    SETS = [("streaks-2d", "reference-streaks", STREAKS_COUNT[2], ()),
            ("streaks-3d", "reference-streaks", STREAKS_COUNT[3], ("--dims", "3")),
            ("voids-2d", "reference-voids", VOIDS_COUNT, ()),
            ("voids-3d", "reference-voids", VOIDS_COUNT, ("--dims", "3"))]

    def test_every_file_opens_with_shape_zooms_affine_dtype_and_codes(self):
        for key, scenario, count, extra in self.SETS:
            folder = phantom_set(key, scenario_path(scenario), count, *extra)
            shape, spacing = geometry_of(folder)
            ndim = len(shape)
            for row in read_table(os.path.join(folder, "truth.csv")):
                for column, dtype in (("image", np.float32), ("labels", np.uint8)):
                    with self.subTest(set=key, seed=SEED, file=row[column]):
                        image, data = load(folder, row[column])  # nibabel opens it
                        header = image.header
                        # Shape and voxel size as the scenario asks (nibabel reads dim and pixdim).
                        self.assertEqual(image.shape, shape)
                        self.assertEqual(data.shape, shape)
                        np.testing.assert_allclose(header.get_zooms(), spacing[:ndim], rtol=0, atol=1e-5)
                        # Stored type, with no intensity scaling (NIfTI-1 scl_slope 0 or NaN = none).
                        self.assertEqual(header.get_data_dtype(), np.dtype(dtype))
                        self.assertEqual(data.dtype, np.dtype(dtype))
                        slope, intercept = header.get_slope_inter()
                        self.assertIn(slope, (None, 1.0))
                        self.assertIn(intercept, (None, 0.0))
                        # Affine: diag(spacing) with the origin -(n-1)/2*spacing (nibabel affine,
                        # from both qform and sform); a 2D image keeps the slice thickness on z.
                        expected = np.diag([spacing[0], spacing[1], spacing[2], 1.0])
                        for axis, n in enumerate(shape):
                            expected[axis, 3] = -(n - 1) / 2.0 * spacing[axis]
                        self.assertTrue(np.allclose(image.affine, expected, rtol=0, atol=1e-5),
                                        f"affine\n{image.affine}\nexpected\n{expected}")
                        self.assertTrue(np.allclose(header.get_qform(), expected, rtol=0, atol=1e-5))
                        self.assertTrue(np.allclose(header.get_sform(), expected, rtol=0, atol=1e-5))
                        # NIfTI-1 xform code 1 = NIFTI_XFORM_SCANNER_ANAT, units millimetres.
                        self.assertEqual(int(header["qform_code"]), 1)
                        self.assertEqual(int(header["sform_code"]), 1)
                        self.assertEqual(header.get_xyzt_units()[0], "mm")
                        if column == "labels":
                            # Label codes of phantoms/subject.h, as listed in the manifest.
                            self.assertTrue(set(np.unique(data)) <= {0, 1, 2, 3, 4})
                            self.assertEqual(sorted(manifest(folder)["label_codes"]), ["0", "1", "2", "3", "4"])


# ----------------------------------------------------------------------------------------------
# 2. Truth tables against the label images (streaks)


class StreaksTruthTest(unittest.TestCase):
    """The truth tables against the label image of each subject, 2D and 3D."""

    def subjects(self, dims):
        """(folder, shape, spacing, [(truth row, labels, lesion rows, all object rows)])."""
        key = f"streaks-{dims}d"
        extra = ("--dims", "3") if dims == 3 else ()
        folder = phantom_set(key, scenario_path("reference-streaks"), STREAKS_COUNT[dims], *extra)
        shape, spacing = geometry_of(folder)
        objects = read_table(os.path.join(folder, "objects.csv"))
        found = []
        for row in subjects_of(folder):
            rows = [o for o in objects if o["subject"] == row["subject"] and o["rescan"] == "0"]
            found.append((row, load(folder, row["labels"])[1], [o for o in rows if o["kind"] == "lesion"], rows))
        self.assertGreater(sum(int(row["count"]) for row, *_ in found), 5, f"{key} (seed {SEED}) should hold lesions")
        return folder, shape, spacing, found

    def check_tables(self, dims):
        _, shape, spacing, found = self.subjects(dims)
        volume = voxel_volume(spacing)
        for row, labels, lesions, rows in found:
            with self.subTest(dims=dims, seed=SEED, subject=row["subject"]):
                lesion = labels == 2
                field = labels >= 1
                # Affected fraction = lesion voxels / field voxels (phantoms/subject.h definition;
                # common practice, no source); the table has 9 significant digits.
                self.assertAlmostEqual(float(row["affected_fraction"]), lesion.sum() / field.sum(), delta=1e-6)
                self.assertAlmostEqual(float(row["field_volume_mm3"]), field.sum() * volume,
                                       delta=1e-8 * field.sum() * volume)
                self.assertEqual(len(lesions), int(row["count"]))
                self.assertEqual([int(o["object"]) for o in rows], list(range(1, len(rows) + 1)), "ids 1..n")
                # Burden = summed analytic lesion volume (phantoms/subject.h).
                burden = sum(float(o["volume_mm3"]) for o in lesions)
                self.assertAlmostEqual(float(row["burden_mm3"]), burden, delta=1e-6 * max(1.0, burden))
                # Every labelled voxel of a kind belongs to an object of that kind: summed mask
                # volumes per kind equal the voxel counts of the label codes times the voxel volume
                # (phantoms/subject.h label codes; common practice, no source).
                for code, kind in ((2, "lesion"), (3, "dot"), (4, "line")):
                    mask_sum = sum(float(o["mask_volume_mm3"]) for o in rows if o["kind"] == kind)
                    self.assertAlmostEqual(mask_sum, (labels == code).sum() * volume, delta=1e-6, msg=kind)
                reference = sum(o["in_reference_slice"] == "1" for o in lesions)
                self.assertEqual(int(row["count_reference_slice"]), reference)
                # scipy.ndimage.label with np.ones((3,)*ndim) and skimage.measure.label with
                # connectivity=ndim both use full connectivity and must agree (their documentation).
                n_scipy = ndimage.label(lesion, structure=full_connectivity(len(shape)))[1]
                n_skimage = skimage.measure.label(lesion, return_num=True, connectivity=len(shape))[1]
                self.assertEqual(n_scipy, n_skimage)

    def component_mismatches(self, dims):
        """Every way in which the lesion components of the label images differ from the lesion
        records, as readable strings (empty when each lesion is exactly one component)."""
        _, shape, spacing, found = self.subjects(dims)
        ndim = len(shape)
        volume = voxel_volume(spacing)
        world = world_of_voxels(shape, spacing)
        problems = []
        for row, labels, lesions, _ in found:
            where = f"{dims}D seed {SEED} subject {row['subject']}"
            lesion = labels == 2
            # Lesions are counted as connected components with full connectivity
            # (scipy.ndimage.label with np.ones((3,)*ndim)).
            components, n = ndimage.label(lesion, structure=full_connectivity(ndim))
            if n != int(row["count"]):
                problems.append(f"{where}: {n} components (scipy.ndimage.label) vs truth count {row['count']}")
            # Each lesion is matched to the component holding the lesion voxel nearest to its
            # centre; its mask volume is that component's voxel count times the voxel volume
            # (common practice, no source).
            matched = {}
            for o in lesions:
                if float(o["mask_volume_mm3"]) == 0.0 or n == 0:
                    problems.append(f"{where}: lesion {o['object']} (length {o['length_mm']} mm, width "
                                    f"{o['width_mm']} mm) has no labelled voxel")
                    continue
                centre = [float(o["centre_x_mm"]), float(o["centre_y_mm"]), float(o["centre_z_mm"])]
                distance = sum((world[a][lesion] - centre[a]) ** 2 for a in range(ndim))
                component = int(components[lesion][int(np.argmin(distance))])
                if component in matched:
                    problems.append(f"{where}: lesions {matched[component]} and {o['object']} share a component")
                matched[component] = o["object"]
                voxels = int((components == component).sum())
                if abs(float(o["mask_volume_mm3"]) - voxels * volume) > 1e-8 * max(1.0, voxels * volume):
                    problems.append(f"{where}: lesion {o['object']} mask_volume_mm3 {o['mask_volume_mm3']} vs "
                                    f"its component {voxels} voxels x {volume} mm3 (width {o['width_mm']} mm)")
            if ndim == 3:
                # A lesion counts in the reference slice when its labelled voxels touch it
                # (phantoms/subject.h); by components of the label image.
                k = int(row["reference_slice"])
                touching = len(set(np.unique(components[:, :, k])) - {0})
                if k != shape[2] // 2 or touching != int(row["count_reference_slice"]):
                    problems.append(f"{where}: {touching} components touch slice {k} vs count_reference_slice "
                                    f"{row['count_reference_slice']}")
        return problems

    def labelled_versus_analytic(self, dims):
        _, _, _, found = self.subjects(dims)
        mask = sum(float(o["mask_volume_mm3"]) for _, _, lesions, _ in found for o in lesions)
        analytic = sum(float(o["volume_mm3"]) for _, _, lesions, _ in found for o in lesions)
        return mask, analytic

    def check_volume(self, dims):
        # The labelled volume (voxels whose centre is inside, plus the voxels the long axis crosses)
        # matches the analytic volume in sum from -5% to +15%: a partial-volume tolerance for 1-2 mm
        # wide objects on 1 mm voxels, where the axis voxels can only add (common practice, no source).
        mask, analytic = self.labelled_versus_analytic(dims)
        self.assertTrue(0.95 * analytic <= mask <= 1.15 * analytic,
                        f"{dims}D, seed {SEED}: labelled {mask:.1f} mm3 vs analytic {analytic:.1f} mm3 "
                        f"(ratio {mask / analytic:.3f})")

    def test_tables_match_label_image_2d(self):
        self.check_tables(2)

    def test_tables_match_label_image_3d(self):
        self.check_tables(3)

    def test_one_component_per_lesion_2d(self):
        problems = self.component_mismatches(2)
        self.assertEqual(problems, [], "\n".join(problems))

    def test_one_component_per_lesion_3d(self):
        problems = self.component_mismatches(3)
        self.assertEqual(problems, [], "\n".join(problems))

    def test_labelled_volume_close_to_analytic_2d(self):
        self.check_volume(2)

    def test_labelled_volume_close_to_analytic_3d(self):
        self.check_volume(3)


# ----------------------------------------------------------------------------------------------
# 3. Densitometry (voids)


class DensitometryTest(unittest.TestCase):
    def check_set(self, key, *extra):
        folder = phantom_set(key, scenario_path("reference-voids"), VOIDS_COUNT, *extra)
        shape, spacing = geometry_of(folder)
        self.assertEqual(float(manifest(folder)["scenario"]["voids"]["threshold_hu"]), DENSITOMETRY_THRESHOLD_HU)
        for row in subjects_of(folder):
            with self.subTest(set=key, seed=SEED, subject=row["subject"]):
                _, image = load(folder, row["image"])
                _, labels = load(folder, row["labels"])
                field = labels >= 1
                # %LAA-950: share of field voxels strictly below -950 HU (Gevenois et al. 1995),
                # computed with NumPy on the stored float32 values.
                expected = float(np.mean(image[field] < np.float32(DENSITOMETRY_THRESHOLD_HU)))
                self.assertAlmostEqual(float(row["densitometry"]), expected, delta=1e-8)
                self.assertGreater(expected, 0.0, "the set should hold voxels below the threshold")
                # Voids truth from the label image (phantoms/subject.h definitions; common practice).
                lesion = labels == 2
                self.assertAlmostEqual(float(row["affected_fraction"]), lesion.sum() / field.sum(), delta=1e-6)
                self.assertAlmostEqual(float(row["field_volume_mm3"]), field.sum() * voxel_volume(spacing),
                                       delta=1e-6 * field.sum())
                self.assertAlmostEqual(float(row["burden_mm3"]), lesion.sum() * voxel_volume(spacing),
                                       delta=1e-6 * max(1.0, lesion.sum()))

    def test_2d(self):
        self.check_set("voids-2d")

    def test_3d(self):
        self.check_set("voids-3d", "--dims", "3")


# ----------------------------------------------------------------------------------------------
# 4. Hounsfield anchors


class HounsfieldAnchorTest(unittest.TestCase):
    # HU = 1000 (mu - mu_water) / (mu_water - mu_air): water 0 HU and air -1000 HU by definition
    # (ICRP Publication 129, 2015). The scenario has no blur, noise or texture, and
    # body_hu 0 (water), parenchyma -850 HU and regions at exactly -950 HU.
    AIR_HU, WATER_HU, PARENCHYMA_HU, REGION_HU = -1000.0, 0.0, -850.0, -950.0

    def check_anchors(self, key, *extra):
        folder = phantom_set(key, scenario_path("hounsfield-anchors"), 2, *extra)
        for row in subjects_of(folder):
            with self.subTest(set=key, seed=SEED, subject=row["subject"]):
                _, image = load(folder, row["image"])
                _, labels = load(folder, row["labels"])
                outside = labels == 0
                # Image corners lie outside the body: air.
                corners = image[tuple(np.ix_(*[[0, n - 1] for n in image.shape]))]
                self.assertTrue(np.all(corners == self.AIR_HU), f"corners {corners.ravel()}")
                # Outside the lungs every voxel is air or water (the body); the body is there and
                # its most common value is 0 HU.
                not_air = image[outside & (image != self.AIR_HU)]
                self.assertGreater(not_air.size, 0)
                values, counts = np.unique(not_air, return_counts=True)
                self.assertEqual(float(values[np.argmax(counts)]), self.WATER_HU)
                self.assertTrue(np.all(not_air == self.WATER_HU), f"body values {values[:10]}")
                # Inside the lungs: parenchyma, or a low-density region exactly at -950 HU.
                field = labels >= 1
                self.assertTrue(np.all(image[labels == 1] == self.PARENCHYMA_HU))
                self.assertTrue(np.all(image[labels == 2] == self.REGION_HU))
                self.assertGreater(float(row["affected_fraction"]), 0.05)
                # Densitometry counts voxels strictly below -950 HU (Gevenois et al. 1995, Am J
                # Respir Crit Care Med 152: 653-657); voxels exactly at -950 do not count: none here.
                self.assertEqual(float(np.mean(image[field] < np.float32(-950.0))), 0.0)
                self.assertEqual(float(row["densitometry"]), 0.0)

    def test_air_water_and_threshold_2d(self):
        self.check_anchors("anchors-2d")

    def test_air_water_and_threshold_3d(self):
        self.check_anchors("anchors-3d", "--dims", "3")

    def test_threshold_just_above_region_counts_every_region_voxel(self):
        # With the threshold at -949 HU every region voxel (-950) is below it and no parenchyma
        # voxel (-850) is: densitometry equals the affected fraction (definition, common practice).
        scenario = edited_scenario("hounsfield-anchors", [(r"threshold_hu: -950", "threshold_hu: -949")],
                                   "anchors-threshold-949")
        folder = phantom_set("anchors-949", scenario, 2)
        for row in subjects_of(folder):
            with self.subTest(seed=SEED, subject=row["subject"]):
                _, image = load(folder, row["image"])
                _, labels = load(folder, row["labels"])
                expected = float(np.mean(image[labels >= 1] < np.float32(-949.0)))
                self.assertAlmostEqual(expected, float(row["affected_fraction"]), delta=1e-6)
                self.assertAlmostEqual(float(row["densitometry"]), expected, delta=1e-8)


class TreeVolumeTest(unittest.TestCase):
    # The anchors scenario with a vessel and airway tree, drawn twice with vessels at two levels.
    # Each field voxel is mixed by partial volume, air x lumen share + vessel_hu x (tissue - lumen)
    # share + base x the rest (docs/scenarios.md, "The vessel and airway tree"), with no blur,
    # noise or texture: the two images' difference gives each voxel's tissue-minus-lumen share, and
    # then one image gives its lumen share. Their sums times the voxel volume must be the truth's
    # tree_volume_mm3 and tree_air_volume_mm3 (linear mixing; common practice, no source).
    AIR_HU, PARENCHYMA_HU, REGION_HU = -1000.0, -850.0, -950.0
    VESSEL_HU = (40.0, 240.0)

    def check_tree(self, key, *extra):
        tree = [(r"^voids:\n", "voids:\n  tree: {generations: 4, trunk_length_mm: 20, vessel_radius_mm: 2, "
                                "airway_radius_mm: 2.5, min_radius_mm: 0.4, vessel_hu: %g}\n" % level)
                for level in self.VESSEL_HU]
        # A rescan draws the tree again in its own pose: its row holds that scan's tree.
        folders = [phantom_set(f"{key}-{level:g}",
                               edited_scenario("hounsfield-anchors", [edit], f"anchors-tree-{key}-{level:g}"), 2,
                               "--rescans", 1, *extra)
                   for edit, level in zip(tree, self.VESSEL_HU)]
        _, spacing = geometry_of(folders[0])
        rows = [read_table(os.path.join(folder, "truth.csv")) for folder in folders]
        self.assertEqual(sorted({row["rescan"] for row in rows[0]}), ["0", "1"])
        for first, second in zip(*rows):
            with self.subTest(set=key, seed=SEED, subject=first["subject"], rescan=first["rescan"]):
                for column in ("tree_volume_mm3", "tree_air_volume_mm3"):
                    self.assertEqual(first[column], second[column], "the tree does not depend on its HU")
                _, low = load(folders[0], first["image"])
                _, high = load(folders[1], second["image"])
                _, labels = load(folders[0], first["labels"])
                field = labels >= 1
                low = low.astype(np.float64)[field]
                high = high.astype(np.float64)[field]
                base = np.where(labels[field] == 2, self.REGION_HU, self.PARENCHYMA_HU)
                wall = (high - low) / (self.VESSEL_HU[1] - self.VESSEL_HU[0])  # tissue - lumen share
                lumen = (low - self.VESSEL_HU[0] * wall - (1.0 - wall) * base) / (self.AIR_HU - base)
                self.assertGreater(wall.min(), -1e-4)
                self.assertGreater(lumen.min(), -1e-4)
                self.assertLess((wall + lumen).max(), 1.0 + 1e-4)
                volume = voxel_volume(spacing)
                expected_tree = (wall + lumen).sum() * volume
                expected_air = lumen.sum() * volume
                self.assertGreater(expected_air, 0.0, "the set should hold airways")
                self.assertGreater(expected_tree, expected_air, "the set should hold vessels or airway walls")
                # float32 images: each voxel's value is good to about 1e-4 HU.
                self.assertAlmostEqual(float(first["tree_volume_mm3"]), expected_tree,
                                       delta=1e-5 * field.sum() * volume)
                self.assertAlmostEqual(float(first["tree_air_volume_mm3"]), expected_air,
                                       delta=1e-5 * field.sum() * volume)
        # Without a tree both columns are 0; a streaks set has no lungs (NA).
        plain = phantom_set("anchors-2d", scenario_path("hounsfield-anchors"), 2)
        for row in subjects_of(plain):
            self.assertEqual(float(row["tree_volume_mm3"]), 0.0)
            self.assertEqual(float(row["tree_air_volume_mm3"]), 0.0)
        streaks = phantom_set("streaks-2d", scenario_path("reference-streaks"), STREAKS_COUNT[2])
        for row in subjects_of(streaks):
            self.assertEqual((row["tree_volume_mm3"], row["tree_air_volume_mm3"]), ("NA", "NA"))

    def test_2d(self):
        self.check_tree("tree-2d")

    def test_3d(self):
        self.check_tree("tree-3d", "--dims", "3")


# ----------------------------------------------------------------------------------------------
# 5. Rician noise


class RicianNoiseTest(unittest.TestCase):
    SIGMA = 0.25  # noise.sigma of tests/data/scenarios/rician-background.yaml

    @classmethod
    def setUpClass(cls):
        noisy = phantom_set("rician", scenario_path("rician-background"), 1)
        # The same subject without noise: the signal each voxel had before the noise was added.
        clean_scenario = edited_scenario("rician-background", [(r"model: rician", "model: none")], "rician-clean")
        clean = phantom_set("rician-clean", clean_scenario, 1)
        cls.labels = load(noisy, "labels/subject_000000.nii.gz")[1]
        cls.noisy = load(noisy, "images/subject_000000.nii.gz")[1].astype(np.float64)
        cls.clean = load(clean, "images/subject_000000.nii.gz")[1].astype(np.float64)

    def check_moments_and_ks(self, sample, distribution, what):
        n = sample.size
        mean, variance = distribution.mean(), distribution.var()
        excess_kurtosis = float(distribution.stats(moments="k"))
        # Tolerances of 5 standard errors: SE(mean) = sqrt(var/n), SE(var) = var*sqrt((kurt_excess+2)/n)
        # (large-sample formulas; common practice, no source).
        self.assertLess(abs(sample.mean() - mean), 5 * math.sqrt(variance / n),
                        f"{what}: mean {sample.mean():.5f} vs {mean:.5f} (n={n}, seed {SEED})")
        self.assertLess(abs(sample.var(ddof=1) - variance), 5 * variance * math.sqrt((excess_kurtosis + 2) / n),
                        f"{what}: variance {sample.var(ddof=1):.6f} vs {variance:.6f} (n={n}, seed {SEED})")
        # scipy.stats.kstest against the exact distribution.
        p = stats.kstest(sample, distribution.cdf).pvalue
        self.assertGreater(p, 0.001, f"{what}: KS p = {p:.2g} (n={n}, seed {SEED})")

    def test_air_follows_rayleigh(self):
        # Where the signal is exactly 0 the magnitude of complex Gaussian noise is Rayleigh
        # (Gudbjartsson & Patz 1995, Magn Reson Med 34: 910): mean sigma*sqrt(pi/2), var (2-pi/2)sigma^2.
        air = (self.labels == 0) & (self.clean == 0.0)
        self.assertGreater(air.sum(), 10000)
        sample = self.noisy[air]
        self.assertTrue(np.all(sample >= 0.0), "magnitude images are non-negative")
        rayleigh = stats.rayleigh(scale=self.SIGMA)
        # The Rayleigh closed forms (Gudbjartsson & Patz 1995) agree with scipy.stats.rayleigh.
        self.assertAlmostEqual(rayleigh.mean(), 1.2533141373 * self.SIGMA, delta=1e-9)
        self.assertAlmostEqual(rayleigh.var(), 0.4292036732 * self.SIGMA ** 2, delta=1e-9)
        self.check_moments_and_ks(sample, rayleigh, "air vs scipy.stats.rayleigh")
        # Rice with b = 0 is the same law (scipy.stats.rice).
        p = stats.kstest(sample, stats.rice(b=0.0, scale=self.SIGMA).cdf).pvalue
        self.assertGreater(p, 0.001, f"air vs scipy.stats.rice(b=0): KS p = {p:.2g} (seed {SEED})")

    def test_flat_white_matter_follows_rice(self):
        # With no bias field and no blur, deep white matter has a flat signal A = 1 (the
        # white-matter intensity); its magnitude is Rician with b = A/sigma (scipy.stats.rice;
        # Gudbjartsson & Patz 1995).
        flat = (self.labels == 1) & (np.abs(self.clean - 1.0) < 1e-6)
        self.assertGreater(flat.sum(), 5000)
        signal = float(self.clean[flat].mean())
        self.assertAlmostEqual(signal, 1.0, delta=1e-6)
        sample = self.noisy[flat]
        rice = stats.rice(b=signal / self.SIGMA, scale=self.SIGMA)
        self.check_moments_and_ks(sample, rice, "white matter vs scipy.stats.rice")
        # E[M^2] = A^2 + 2 sigma^2 exactly (Gudbjartsson & Patz 1995); 5 standard errors.
        second = sample ** 2
        self.assertLess(abs(second.mean() - (signal ** 2 + 2 * self.SIGMA ** 2)),
                        5 * second.std() / math.sqrt(second.size))


# ----------------------------------------------------------------------------------------------
# 6. Determinism


def folder_files(folder):
    found = {}
    for root, _, files in os.walk(folder):
        for name in files:
            path = os.path.join(root, name)
            with open(path, "rb") as content:
                found[os.path.relpath(path, folder)] = content.read()
    return found


class DeterminismTest(unittest.TestCase):
    # Same scenario, seed and thread count give the same files (DEVELOPERS.md, Determinism); the files do not
    # depend on the thread count (phantoms/phantom_set.h). Common practice, no source.
    def check_identical(self, first, second, what):
        a, b = folder_files(first), folder_files(second)
        self.assertEqual(sorted(a), sorted(b), what)
        differing = [name for name in a if a[name] != b[name]]
        self.assertEqual(differing, [], f"{what}: files differ (seed {SEED})")

    def test_same_seed_same_bytes_and_thread_independence(self):
        for scenario, extra in (("reference-streaks", ()), ("reference-voids", ("--dims", "3"))):
            with self.subTest(scenario=scenario, extra=extra, seed=SEED):
                base = os.path.join(WORK, "determinism-" + scenario + "-".join(extra))
                one = phantoms(scenario_path(scenario), base + "-a", 4, *extra, "--threads", 1)
                again = phantoms(scenario_path(scenario), base + "-b", 4, *extra, "--threads", 1)
                two = phantoms(scenario_path(scenario), base + "-c", 4, *extra, "--threads", 2)
                self.check_identical(one, again, "two runs, same seed")
                self.check_identical(one, two, "--threads 1 vs --threads 2")
                other = phantoms(scenario_path(scenario), base + "-d", 4, *extra, seed=SEED + 1)
                for row in subjects_of(one):
                    self.assertFalse(np.array_equal(load(one, row["image"])[1], load(other, row["image"])[1]),
                                     f"seed {SEED} and {SEED + 1} give the same {row['image']}")


# ----------------------------------------------------------------------------------------------
# 7. Rescans


def rigid_fit(before, after):
    """Least-squares rotation R and shift t with after ~ R before + t (Kabsch 1976, Acta Cryst
    A32:922, by numpy.linalg.svd), and the largest residual."""
    mean_before, mean_after = before.mean(axis=0), after.mean(axis=0)
    h = (before - mean_before).T @ (after - mean_after)
    u, _, vt = np.linalg.svd(h)
    d = np.sign(np.linalg.det(vt.T @ u.T))
    correction = np.eye(before.shape[1])
    correction[-1, -1] = d
    rotation = vt.T @ correction @ u.T
    shift = mean_after - rotation @ mean_before
    residual = np.abs(before @ rotation.T + shift - after).max()
    return rotation, shift, residual


class RescanTest(unittest.TestCase):
    def check_rescans(self, key, *extra):
        folder = phantom_set(key, scenario_path("reference-streaks"), 3, "--rescans", 1, *extra)
        shape, _ = geometry_of(folder)
        ndim = len(shape)
        limits = manifest(folder)["scenario"]["rescan"]
        max_angle = math.radians(float(limits["max_rotation_deg"]))
        max_shift = float(limits["max_shift_mm"])
        truth = read_table(os.path.join(folder, "truth.csv"))
        objects = read_table(os.path.join(folder, "objects.csv"))
        for subject in sorted({row["subject"] for row in truth}):
            with self.subTest(set=key, seed=SEED, subject=subject):
                rows = {row["rescan"]: row for row in truth if row["subject"] == subject}
                self.assertEqual(sorted(rows), ["0", "1"])
                # Same anatomy and lesions: same count and the same objects (phantoms/phantom_set.h).
                self.assertEqual(rows["0"]["count"], rows["1"]["count"])
                first = {o["object"]: o for o in objects if o["subject"] == subject and o["rescan"] == "0"}
                second = {o["object"]: o for o in objects if o["subject"] == subject and o["rescan"] == "1"}
                self.assertEqual(sorted(first), sorted(second), "object ids")
                for name, o in first.items():
                    for column in ("kind", "length_mm", "width_mm", "contrast", "volume_mm3"):
                        self.assertEqual(o[column], second[name][column], f"object {name} {column}")
                # Centres move by a rotation of at most max_rotation_deg about the image centre
                # (the world origin) and a shift of at most max_shift_mm per axis (pose.h), so by at
                # most sqrt(dims)*max_shift + angle*radius (triangle inequality, |Rc - c| <= angle*|c|).
                axes = ["centre_x_mm", "centre_y_mm", "centre_z_mm"][:ndim]
                c0 = np.array([[float(first[i][a]) for a in axes] for i in sorted(first)])
                c1 = np.array([[float(second[i][a]) for a in axes] for i in sorted(first)])
                bound = math.sqrt(ndim) * max_shift + max_angle * np.linalg.norm(c0, axis=1) + 1e-6
                moved = np.linalg.norm(c1 - c0, axis=1)
                self.assertTrue(np.all(moved <= bound), f"moved {moved} bound {bound}")
                # The motion is one rigid pose for every object (Kabsch fit; CSV has 9 digits).
                if len(first) >= ndim + 1:
                    rotation, shift, residual = rigid_fit(c0, c1)
                    self.assertLess(residual, 1e-4, "centres follow one rigid pose")
                    angle = math.acos(np.clip((np.trace(rotation) - (1 if ndim == 3 else 0)) / 2.0, -1.0, 1.0))
                    self.assertLessEqual(angle, max_angle + 1e-6)
                    self.assertTrue(np.all(np.abs(shift) <= max_shift + 1e-4), f"shift {shift}")
                    d0 = np.array([[float(first[i]["direction_" + a]) for a in "xyz"[:ndim]] for i in sorted(first)])
                    d1 = np.array([[float(second[i]["direction_" + a]) for a in "xyz"[:ndim]] for i in sorted(first)])
                    self.assertLess(np.abs(d0 @ rotation.T - d1).max(), 1e-4, "directions turn with the pose")
                # A new acquisition: the image differs.
                _, image0 = load(folder, rows["0"]["image"])
                _, image1 = load(folder, rows["1"]["image"])
                self.assertFalse(np.array_equal(image0, image1))
                self.assertTrue(rows["1"]["image"].endswith("_rescan1.nii.gz"))

    def test_2d(self):
        self.check_rescans("rescans-2d")

    def test_3d(self):
        self.check_rescans("rescans-3d", "--dims", "3")

    def test_voids_rescan_densitometry_has_no_systematic_difference(self):
        # Repeat acquisitions of one subject differ only by noise and pose, so their mean
        # difference (the Bland & Altman 1986 bias) is zero: scipy.stats.ttest_rel, p > 0.001.
        folder = phantom_set("voids-rescans", scenario_path("reference-voids"), 20, "--rescans", 1, "--threads", 2)
        truth = read_table(os.path.join(folder, "truth.csv"))
        first = np.array([float(r["densitometry"]) for r in truth if r["rescan"] == "0"])
        second = np.array([float(r["densitometry"]) for r in truth if r["rescan"] == "1"])
        p = stats.ttest_rel(second, first).pvalue
        self.assertGreater(p, 0.001, f"rescan 1 - rescan 0 densitometry mean {np.mean(second - first):+.4f} "
                                     f"(seed {SEED}, n = {first.size})")


# ----------------------------------------------------------------------------------------------
# 8. Bad input through the command line


class BadInputTest(unittest.TestCase):
    # A user error exits with code 2 and a message naming the file and the key (DEVELOPERS.md, Two
    # tiers of errors).

    def expect_user_error(self, args, must_mention, out):
        done = run_frugal("phantoms", *args, "--out", out, "--count", 1)
        self.assertEqual(done.returncode, 2, f"{args}: exit {done.returncode}, stderr {done.stderr!r}")
        for text in must_mention:
            self.assertIn(text, done.stderr, f"{args}: stderr {done.stderr!r}")
        self.assertNotIn("terminate called", done.stderr)
        return done

    def test_bad_scenarios(self):
        cases = [
            ("unknown-key", [(r"^psf_fwhm_mm:", "colour_scheme: pink\npsf_fwhm_mm:")], "colour_scheme"),
            ("unknown-nested-key", [(r"^  sigma: 0.04", "  sigma: 0.04\n  sigma_scale: 2")], "sigma_scale"),
            ("wrong-type", [(r"^  sigma: 0.04", "  sigma: lots")], "noise.sigma"),
            ("wrong-type-list", [(r"min_separation_mm: 2.0", "min_separation_mm: [1, 2]")], "min_separation_mm"),
            ("out-of-range", [(r"^  sigma: 0.04", "  sigma: -3")], "noise.sigma"),
            ("out-of-range-dims", [(r"^  dims: 2", "  dims: 5")], "geometry.dims"),
            ("bad-choice", [(r"model: rician", "model: salt_and_pepper")], "noise.model"),
        ]
        for name, edits, key in cases:
            with self.subTest(case=name):
                path = edited_scenario("reference-streaks", edits, "bad-" + name)
                out = os.path.join(WORK, "bad-out-" + name)
                self.expect_user_error([path], [os.path.basename(path), key], out)
                # Files are written whole or not at all: no output folder for a rejected scenario.
                self.assertFalse(os.path.exists(os.path.join(out, "manifest.json")))

    def test_dims_out_of_range(self):
        for dims in ("4", "1"):
            with self.subTest(dims=dims):
                self.expect_user_error([scenario_path("reference-streaks"), "--dims", dims], ["--dims"],
                                       os.path.join(WORK, "bad-dims-" + dims))

    def test_finished_folder_needs_overwrite(self):
        folder = phantoms(scenario_path("reference-streaks"), os.path.join(WORK, "finished"), 1)
        before = folder_files(folder)
        self.expect_user_error([scenario_path("reference-streaks"), "--seed", SEED + 5], ["finished", "--overwrite"],
                               folder)
        self.assertEqual(folder_files(folder), before, "a refused run leaves the finished set alone")
        phantoms(scenario_path("reference-streaks"), folder, 1, "--overwrite")


def configure(frugal, source, scratch):
    global FRUGAL, SOURCE, WORK
    FRUGAL, SOURCE, WORK = frugal, source, scratch



if __name__ == "__main__":
    run_suite(__doc__.splitlines()[0], "frugal-phantom-reference-", configure)

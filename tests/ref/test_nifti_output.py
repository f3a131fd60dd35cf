"""NIfTI-1 output (issue 16, docs/files.md): `kweave recon --out IMG.nii`.

References, all outside kweave:
- nibabel (Debian's python3-nibabel) reads every file: the data (equal, value
  for value, to the .npy output of the same run: NIfTI's first axis is x, so
  nibabel's array is the transpose of kweave's C-ordered one), the header
  (NIfTI-1 single file: sizeof_hdr 348, vox_offset 352, magic "n+1", float32
  or complex64), the voxel sizes and the affine (qform and sform agree).
- the NIfTI-1 standard's definitions: voxel sizes in mm = the sidecar's FOV
  over the matrix (here non-equal per axis); multi-slice: the distance
  between the sidecar's slice centres (thickness + gap) and the first
  slice's centre as the z offset.
- runs share one FFTW wisdom file so the .npy and .nii runs compute the same
  bytes (docs/reliability.md).
"""
import json
import os
import subprocess

import nibabel as nib
import numpy as np
import pytest

from conftest import KWEAVE, bad


def krun(d, *args):
    env = dict(os.environ, KWEAVE_WISDOM=str(d / "wisdom"), OMP_NUM_THREADS="1")
    p = subprocess.run([KWEAVE, *map(str, args)], capture_output=True, text=True, env=env, timeout=300)
    assert p.returncode == 0, f"kweave {' '.join(map(str, args))} exited {p.returncode}: {p.stderr}"
    return p


def pair(d, name, *args):
    """recon to .npy and to .nii with the same arguments; (npy array, nibabel image)."""
    krun(d, "recon", *args, "--out", d / f"out_{name}_warm.npy")
    krun(d, "recon", *args, "--out", d / f"out_{name}.npy")
    krun(d, "recon", *args, "--out", d / f"out_{name}.nii")
    return np.load(d / f"out_{name}.npy"), nib.load(str(d / f"out_{name}.nii"))


def raw_header(path):
    with open(path, "rb") as f:
        return nib.Nifti1Header.from_fileobj(f)


def check_affine(img, vox, origin):
    a = img.affine
    assert np.allclose(np.diag(a)[:3], [vox[0], -vox[1], vox[2]], rtol=1e-6)
    assert np.allclose(a[:3, 3], origin, atol=1e-4)
    assert np.allclose(img.get_qform(), img.get_sform(), atol=1e-5)
    assert np.allclose(np.sqrt((a[:3, :3] ** 2).sum(0)), vox, rtol=1e-6)


def test_2d_float_voxel_sizes_from_fov(tmp_path):
    d = tmp_path
    krun(d, "encode", "--phantom", "shepp-logan", "--matrix", "96x64", "--fov", "240mm,180mm", "--out", d / "ks.npy")
    arr, img = pair(d, "im", "--in", d / "ks.npy")
    h = raw_header(d / "out_im.nii")
    assert int(h["sizeof_hdr"]) == 348 and float(h["vox_offset"]) == 352 and h["magic"] == b"n+1"
    assert int(h["datatype"]) == 16 and int(h["bitpix"]) == 32
    assert h.get_xyzt_units()[0] == "mm"
    assert img.shape == (96, 64)
    assert img.get_data_dtype() == np.float32
    assert np.array_equal(np.asarray(img.dataobj), arr.T)
    vox = (240 / 96, 180 / 64, 240 / 96)  # a single plane: z nominal (the x size)
    assert np.allclose(img.header.get_zooms(), vox[:2], rtol=1e-6)
    check_affine(img, vox, (-vox[0] * 48, vox[1] * 32, 0))
    assert os.path.getsize(d / "out_im.nii") == 352 + 96 * 64 * 4


def test_complex_coil_images(tmp_path):
    d = tmp_path
    krun(d, "encode", "--phantom", "shepp-logan", "--matrix", "48x40", "--fov", "240mm,200mm", "--coils", 3,
         "--out", d / "ks.npy")
    arr, img = pair(d, "c", "--in", d / "ks.npy", "--keep-coils")
    assert arr.dtype == np.complex64 and arr.shape == (3, 40, 48)
    assert int(raw_header(d / "out_c.nii")["datatype"]) == 32  # complex64
    assert img.shape == (48, 40, 1, 3)  # coils on NIfTI's 4th axis
    assert np.array_equal(np.asarray(img.dataobj)[:, :, 0, :], arr.transpose(2, 1, 0))
    assert np.allclose(img.header.get_zooms()[:2], (5.0, 5.0))


def test_3d_volume(tmp_path):
    d = tmp_path
    krun(d, "encode", "--phantom", "weave3d", "--matrix", "32x24x16", "--fov", "240mm,192mm,64mm",
         "--out", d / "v.npy")
    arr, img = pair(d, "v", "--in", d / "v.npy")
    assert arr.shape == (16, 24, 32) and img.shape == (32, 24, 16)
    assert np.array_equal(np.asarray(img.dataobj), arr.T)
    vox = (7.5, 8.0, 4.0)
    assert np.allclose(img.header.get_zooms(), vox)
    check_affine(img, vox, (-7.5 * 16, 8.0 * 12, -4.0 * 8))


def test_multislice_slice_spacing(tmp_path):
    d = tmp_path
    krun(d, "encode", "--phantom", "weave3d", "--matrix", "40x32", "--fov", "200mm,160mm,120mm", "--slices", 3,
         "--slice-thickness", "4mm", "--slice-gap", "2mm", "--slice-points", 2, "--coils", 2, "--out", d / "ms.npy")
    sc = json.load(open(d / "ms.json"))["slices"]
    arr, img = pair(d, "ms", "--in", d / "ms.npy")
    assert arr.shape == (3, 32, 40) and img.shape == (40, 32, 3)
    assert np.array_equal(np.asarray(img.dataobj), arr.T)
    vox = (5.0, 5.0, 6.0)  # 200/40, 160/32, thickness 4 + gap 2
    assert np.allclose(img.header.get_zooms(), vox)
    assert np.isclose((sc["centres_m"][1] - sc["centres_m"][0]) * 1e3, 6.0)
    check_affine(img, vox, (-5.0 * 20, 5.0 * 16, sc["centres_m"][0] * 1e3))
    # coil images of every slice: (coils, slices, ny, nx) -> NIfTI (nx, ny, slices, coils)
    arr, img = pair(d, "msc", "--in", d / "ms.npy", "--keep-coils")
    assert img.shape == (40, 32, 3, 2)
    assert np.array_equal(np.asarray(img.dataobj), arr.transpose(3, 2, 1, 0))


def test_without_sidecar_the_units_are_unknown(tmp_path):
    d = tmp_path
    krun(d, "encode", "--phantom", "shepp-logan", "--matrix", "32x32", "--fov", "200mm", "--out", d / "ks.npy")
    os.rename(d / "ks.json", d / "elsewhere.json")
    arr, img = pair(d, "u", "--in", d / "ks.npy")
    h = raw_header(d / "out_u.nii")
    assert h.get_xyzt_units()[0] == "unknown"
    assert int(h["qform_code"]) == 0 and int(h["sform_code"]) == 0
    assert np.allclose(h.get_zooms(), (1, 1))
    assert np.array_equal(np.asarray(img.dataobj), arr.T)


def test_bad_targets(tmp_path):
    d = tmp_path
    krun(d, "encode", "--phantom", "shepp-logan", "--matrix", "32x32", "--fov", "200mm", "--out", d / "ks.npy")
    bad("recon", "--in", d / "ks.npy", "--out", d / "no" / "such" / "dir.nii", field="out")
    bad("recon", "--in", d / "ks.npy", "--out", d / "x.nia", field="out")
    assert not list(d.glob("*.ni*"))

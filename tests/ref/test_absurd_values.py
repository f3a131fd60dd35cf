"""Absurd numbers are refused naming the option, and no inf or NaN is ever
written (issue 18). Each test is named after a case of the adversarial pass
that used to exit 0 (or 1) with a non-finite or absurd result."""
import numpy as np
import pytest

from conftest import bad, run

BASE = ["encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "32", "--coils", "2"]


def test_encode_snr_1e_minus_39_is_refused(tmp_path):
    line = bad(*BASE, "--snr", "1e-39", "--out", tmp_path / "k.npy", field="snr")
    assert "beyond float range" in line
    assert list(tmp_path.iterdir()) == []


def test_encode_snr_1e300_names_snr_not_noise_corr(tmp_path):
    line = bad(*BASE, "--snr", "1e300", "--noise-corr", "0.2", "--out", tmp_path / "k.npy",
               field="snr")
    assert "noise-corr" not in line
    assert list(tmp_path.iterdir()) == []


def test_encode_snr_inside_the_stated_range_works(tmp_path):
    run(*BASE, "--snr", "1e-10", "--out", tmp_path / "k.npy")
    assert np.isfinite(np.load(tmp_path / "k.npy")).all()


def test_encode_sens_maps_of_3e38_write_no_inf(tmp_path):
    """Maps near the top of float range drive k-space to inf: refused at the
    write, nothing left behind."""
    s = np.full((2, 32, 32), 3e38, np.complex64)
    np.save(tmp_path / "s.npy", s)
    line = bad(*BASE[:-2], "--sens", tmp_path / "s.npy", "--out", tmp_path / "k.npy")
    assert "not finite" in line
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.npy"]


def test_encode_matrix_1x1_is_refused_as_recon_would(tmp_path):
    bad("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "1x1",
        "--out", tmp_path / "k.npy", field="matrix")


def test_plan_bandwidth_1e_minus_300_per_pixel_is_refused():
    line = bad("plan", "--bandwidth", "1e-300Hz/pixel", field="bandwidth")
    assert "absurd" in line


def test_spiral_with_an_unattainable_slew_is_bad_input_not_internal(tmp_path):
    line = bad("pattern", "--kind", "spiral", "--matrix", "64", "--slew", "1e-6T/m/s",
               "--out", tmp_path / "s.npy", field="slew")
    assert "spiral: spiral" not in line


def test_lattice_shift_of_2_63_minus_1_equals_its_residue(tmp_path):
    big = run("pattern", "--kind", "lattice", "--matrix", "32x32x32", "--accel", "2x2",
              "--shift", "9223372036854775807", "--out", tmp_path / "a.npy")
    small = run("pattern", "--kind", "lattice", "--matrix", "32x32x32", "--accel", "2x2",
                "--shift", str((2 ** 31 - 1) % 2), "--out", tmp_path / "b.npy")
    assert big.returncode == small.returncode == 0
    np.testing.assert_array_equal(np.load(tmp_path / "a.npy"), np.load(tmp_path / "b.npy"))

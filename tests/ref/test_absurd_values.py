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


def test_encode_coil_distance_1e6m_is_refused(tmp_path):
    bad(*BASE, "--coil-distance", "1e6m", "--out", tmp_path / "k.npy", field="coil-distance")


def test_encode_field_map_of_1e30_hz_is_refused(tmp_path):
    np.save(tmp_path / "fm.npy", np.full((32, 32), 1e30, np.float32))
    bad("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "32",
        "--field-map", tmp_path / "fm.npy", "--out", tmp_path / "k.npy", field="field-map")


def test_encode_times_of_1e30_s_are_refused(tmp_path):
    np.save(tmp_path / "t.npy", np.full((32,), 1e30, np.float32))
    bad("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "32",
        "--times", tmp_path / "t.npy", "--out", tmp_path / "k.npy", field="times")


@pytest.fixture(scope="module")
def noise_nc(tmp_path_factory):
    """Pure noise on a random 2-D trajectory (2 coils, 2000 samples)."""
    d = tmp_path_factory.mktemp("noise-nc")
    rng = np.random.default_rng(0)
    np.save(d / "t.npy", (rng.uniform(-0.5, 0.5, (2000, 2)) * 32).astype(np.float32))
    np.save(d / "k.npy", (rng.standard_normal((2, 2000)) +
                          1j * rng.standard_normal((2, 2000))).astype(np.complex64))
    (d / "k.json").write_text('{"matrix": [32, 32], "fov_m": [0.2, 0.2]}')
    return d


def test_recon_all_zero_dcf_is_refused(noise_nc, tmp_path):
    np.save(tmp_path / "w.npy", np.zeros(2000, np.float32))
    bad("recon", "--in", noise_nc / "k.npy", "--trajectory", noise_nc / "t.npy", "--method", "grid",
        "--dcf", tmp_path / "w.npy", "--out", tmp_path / "i.npy", field="dcf")


def test_cg_at_1000_iterations_on_noise_stops_cleanly(noise_nc, tmp_path):
    """It used to fail with "not positive definite (p^H N p = -458)" once float
    rounding had lost the search direction; it now stops there, x kept."""
    import json
    run("recon", "--in", noise_nc / "k.npy", "--trajectory", noise_nc / "t.npy",
        "--method", "cg-sense", "--iterations", "1000", "--stop", "0",
        "--out", tmp_path / "i.npy", "--json", tmp_path / "r.json")
    assert np.isfinite(np.load(tmp_path / "i.npy")).all()
    rep = json.loads((tmp_path / "r.json").read_text())
    assert 1 <= rep["iterations"] <= 1000


def test_plan_protocol_and_reference_both_from_stdin_is_refused():
    bad("plan", "--protocol", "-", "--reference", "-", input="fov = 200mm\n", field="reference")


def test_pattern_analyse_of_a_trajectory_at_1e30_is_refused(tmp_path):
    """It overflowed the analysis's grid arithmetic (signed overflow under
    UBSan); a sample beyond twice the matrix's extent is refused."""
    import json
    run("pattern", "--kind", "golden", "--matrix", "32", "--spokes", "8", "--out", tmp_path / "g.npy")
    t = np.load(tmp_path / "g.npy")
    t[5, 0] = 1e30
    np.save(tmp_path / "h.npy", t)
    (tmp_path / "h.json").write_text((tmp_path / "g.json").read_text())
    line = bad("pattern", "--analyse", tmp_path / "h.npy", field="trajectory")
    assert "outside" in line
    assert json.loads((tmp_path / "g.json").read_text())["matrix"] == [32, 32]


def test_noise_cov_without_snr_is_the_noise_as_given(tmp_path):
    """Issue 18 asked why --noise-cov works without --snr while --noise-corr
    does not: a covariance carries its level (the noise is drawn with it as
    given; measured here on an object-free background), a correlation
    coefficient does not (refused without --snr)."""
    cov = np.array([[4.0, 1.0], [1.0, 2.0]], np.complex64)
    np.save(tmp_path / "c.npy", cov)
    run("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "128", "--coils", "2",
        "--noise-cov", tmp_path / "c.npy", "--seed", "3", "--out", tmp_path / "k.npy")
    clean = tmp_path / "k0.npy"
    run("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "128", "--coils", "2",
        "--out", clean)
    n = (np.load(tmp_path / "k.npy") - np.load(clean)).reshape(2, -1)
    emp = n @ n.conj().T / n.shape[1]
    np.testing.assert_allclose(emp, cov, atol=0.1)   # 16384 samples: ~1% sampling error
    bad("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "32", "--coils", "2",
        "--noise-corr", "0.3", "--out", tmp_path / "k2.npy", field="noise-corr")

"""`kweave recon --method fft` against numpy (Debian's python3-numpy):
docs/api.md's centered unitary inverse DFT
fftshift(ifftn(ifftshift(k, axes), axes, norm="ortho"), axes), coils combined
by root-sum-of-squares; relative error <= 1e-5."""
import json

import numpy as np
import pytest

from conftest import bad, relerr, run


def ifft_c(k, nd):
    ax = tuple(range(-nd, 0))
    return np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(k.astype(np.complex128), axes=ax), axes=ax, norm="ortho"), axes=ax)


def rand_k(shape, seed):
    rng = np.random.default_rng(seed)
    return (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)).astype(np.complex64)


@pytest.mark.parametrize("shape,nd", [((32, 24), 2), ((4, 30, 17), 2), ((3, 6, 10, 12), 3)])
def test_fft_rss_matches_numpy(tmp_path, shape, nd):
    k = rand_k(shape, sum(shape))
    np.save(tmp_path / "k.npy", k)
    if nd == 3:  # a 3-D acquisition is told by its sidecar's matrix
        (tmp_path / "k.json").write_text(json.dumps({"kind": "kspace", "layout": "cartesian", "matrix": [12, 10, 6]}))
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "i.npy", "--json", tmp_path / "r.json")
    img = np.load(tmp_path / "i.npy")
    ref = ifft_c(k, nd)
    if len(shape) > nd:
        ref = np.sqrt((np.abs(ref) ** 2).sum(0))
    else:
        ref = np.abs(ref)
    assert img.dtype == np.float32 and img.shape == ref.shape
    assert relerr(img, ref) <= 1e-5
    rep = json.loads((tmp_path / "r.json").read_text())
    assert rep["method"] == "fft" and rep["combine"] == "rss"


def test_keep_coils_and_stdin(tmp_path):
    k = rand_k((3, 16, 20), 9)
    np.save(tmp_path / "k.npy", k)
    run("recon", "--in", "-", "--out", tmp_path / "c.npy", "--keep-coils", input=(tmp_path / "k.npy").read_bytes())
    c = np.load(tmp_path / "c.npy")
    assert c.dtype == np.complex64 and c.shape == k.shape
    assert relerr(c, ifft_c(k, 2)) <= 1e-5


def test_ref_scores_in_report(tmp_path):
    # a smooth object: fully sampled k-space reconstructs it exactly
    yy, xx = np.mgrid[-16:16, -16:16]
    obj = np.exp(-(xx ** 2 + yy ** 2) / 60.0).astype(np.float32)
    k = np.ascontiguousarray(np.fft.fftshift(np.fft.fftn(np.fft.ifftshift(obj), norm="ortho")), dtype=np.complex64)
    np.save(tmp_path / "k.npy", k)
    np.save(tmp_path / "t.npy", obj)
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "i.npy", "--ref", tmp_path / "t.npy",
        "--json", tmp_path / "r.json")
    s = json.loads((tmp_path / "r.json").read_text())["scores"]
    assert s["nrmse"] < 1e-5 and s["ssim"] > 0.99999


def test_recon_bad_input(tmp_path):
    k = rand_k((2, 16, 16), 3)
    np.save(tmp_path / "k.npy", k)
    out = tmp_path / "i.npy"
    kn = k.copy()
    kn[0, 1, 1] = np.inf
    np.save(tmp_path / "inf.npy", kn)
    bad("recon", "--in", tmp_path / "inf.npy", "--out", out, field="in")
    np.save(tmp_path / "r.npy", np.abs(k))
    bad("recon", "--in", tmp_path / "r.npy", "--out", out, field="in")
    np.save(tmp_path / "5d.npy", np.zeros((1, 2, 2, 4, 4), np.complex64))
    bad("recon", "--in", tmp_path / "5d.npy", "--out", out, field="in")
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, "--method", "magic", field="method")
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, "--combine", "max", field="combine")
    bad("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "i.txt", field="out")
    bad("recon", "--out", out, field="in")
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, "--kernel", "3", field="kernel")
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, "--lambda", "-1", field="lambda")
    bad("recon", "--in", tmp_path / "missing.npy", "--out", out, field="in")
    np.save(tmp_path / "s.npy", np.ones((3, 16, 16), np.complex64))
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, "--sens", tmp_path / "s.npy", field="sens")
    np.save(tmp_path / "nc.npy", np.eye(3, dtype=np.complex64))
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, "--noise-cov", tmp_path / "nc.npy", field="noise-cov")
    np.save(tmp_path / "nc2.npy", np.array([[1, 2], [2, 1]], np.complex64))  # not positive definite
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, "--noise-cov", tmp_path / "nc2.npy", field="noise-cov")
    (tmp_path / "k.json").write_text("{ not json")
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, field="sidecar")
    (tmp_path / "k.json").write_text(json.dumps({"kind": "kspace", "sens": "nowhere.npy"}))
    bad("recon", "--in", tmp_path / "k.npy", "--out", out, field="sens")
    assert not out.exists()


def test_optimal_with_estimated_maps_does_not_depend_on_sens_out(tmp_path):
    """Regression: --combine optimal estimates the maps from the k-space
    calibration block whether or not --sens-out asks for them to be written
    (the estimate once ran on the already transformed data). Reference: the
    optimal combination computed with numpy from the maps kweave wrote
    (Roemer et al. 1990: |S^H m| / (S^H S))."""
    from conftest import run
    run("encode", "--phantom", "weave", "--fov", "256mm", "--matrix", "96", "--coils", "4",
        "--sequence", "gre", "--te", "5ms", "--tr", "30ms", "--flip", "25",
        "--bandwidth", "250Hz/pixel", "--out", tmp_path / "k.npy", "--quiet")
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "a.npy", "--combine", "optimal",
        "--sens-out", tmp_path / "s.npy", "--quiet")
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "b.npy", "--combine", "optimal", "--quiet")
    a, b = np.load(tmp_path / "a.npy"), np.load(tmp_path / "b.npy")
    np.testing.assert_allclose(a, b, rtol=1e-5, atol=1e-7 * abs(a).max())
    k, s = np.load(tmp_path / "k.npy"), np.load(tmp_path / "s.npy")
    ax = (-2, -1)
    im = np.fft.fftshift(np.fft.ifft2(np.fft.ifftshift(k, axes=ax), norm="ortho"), axes=ax)
    den = (abs(s) ** 2).sum(0)
    ref = np.where(den > 0, abs((np.conj(s) * im).sum(0)) / np.where(den > 0, den, 1), 0)
    assert np.linalg.norm(b - ref) / np.linalg.norm(ref) < 1e-4


def test_random_pattern_sidecar_is_accepted(tmp_path):
    """Regression: a random (variable-density) pattern's nominal acceleration in
    the sidecar cannot be confirmed from the data (no lattice) and must not be
    refused; the zero-filled image equals numpy's optimal combination with the
    simulator's maps (Roemer et al. 1990)."""
    from conftest import run
    run("pattern", "--kind", "random", "--matrix", "64x64", "--accel", "4", "--acs", "12",
        "--seed", "3", "--out", tmp_path / "m.npy", "--quiet")
    run("encode", "--phantom", "weave", "--matrix", "64", "--fov", "256mm", "--coils", "4",
        "--pattern", tmp_path / "m.npy", "--sens-out", tmp_path / "s.npy",
        "--out", tmp_path / "k.npy", "--quiet")
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "z.npy", "--combine", "optimal",
        "--quiet")
    k, s, z = (np.load(tmp_path / f) for f in ("k.npy", "s.npy", "z.npy"))
    ax = (-2, -1)
    im = np.fft.fftshift(np.fft.ifft2(np.fft.ifftshift(k, axes=ax), norm="ortho"), axes=ax)
    den = (abs(s) ** 2).sum(0)
    ref = np.where(den > 0, abs((np.conj(s) * im).sum(0)) / np.where(den > 0, den, 1), 0)
    assert np.linalg.norm(z - ref) / np.linalg.norm(ref) < 1e-4


def test_uniform_lattice_with_acs_sidecar_is_accepted(tmp_path):
    """Regression: the simulator's sidecar gives the effective acceleration of
    a uniform lattice with calibration lines (1 / sampled fraction, here 2.9 for
    R = 4 with 16 lines), which agrees with the data and must not be refused."""
    from conftest import run
    run("pattern", "--kind", "uniform", "--matrix", "64x64", "--accel", "4", "--acs", "8",
        "--out", tmp_path / "u.npy", "--quiet")
    run("encode", "--phantom", "weave", "--matrix", "64", "--fov", "256mm", "--coils", "4",
        "--pattern", tmp_path / "u.npy", "--sens-out", tmp_path / "s.npy",
        "--out", tmp_path / "k.npy", "--quiet")
    side = json.load(open(tmp_path / "k.json"))
    m = np.load(tmp_path / "u.npy")
    assert abs(side["acceleration"] - m.size / m.astype(bool).sum()) < 1e-6
    run("recon", "--in", tmp_path / "k.npy", "--method", "sense", "--out", tmp_path / "x.npy", "--quiet")

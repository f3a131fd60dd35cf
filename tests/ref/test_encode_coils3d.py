"""Coils for 3-D phantoms (issue 5): one or two rings of circular loops,
sensitivities fitted by a 3-D trigonometric series, exact multi-coil 3-D
k-space (Guerquin-Kern et al. 2012 in three dimensions).

References: the Fourier modulation theorem (a series term
c exp(i 2 pi (p u + q v + r w) / P) moves the object's spectrum by
(p, q, r) / P), evaluated with kweave's coil-free exact spectra of the same
phantom at the shifted points (those spectra are checked against scipy
quadrature in test_phantom_ref.py); numpy for the series and sums."""
import json

import numpy as np
import pytest

from conftest import bad, run


def series3(coef, L, Lz, period, n):
    """maps (coils, n, n, n) of the series with coef[c, r+Lz, q+L, p+L];
    u, v, w = (index - n/2)/n along x (columns), y (rows), z (slices)."""
    t = (np.arange(n) - n // 2) / n
    ex = np.exp(2j * np.pi * np.outer(t, np.arange(-L, L + 1)) / period)
    ez = np.exp(2j * np.pi * np.outer(t, np.arange(-Lz, Lz + 1)) / period)
    return np.einsum("zr,yq,xp,crqp->czyx", ez, ex, ex, coef)


def test_3d_series_kspace_is_the_sum_of_shifted_spectra(tmp_path):
    """Maps that are exactly a 3-D series (orders 1 and 1, period 1.5 FOV,
    random coefficients) given with --sens: the fit recovers them, and every
    sample equals sum c_pqr F(k - (p, q, r)/P), F the coil-free spectrum of
    weave3d computed by kweave at the shifted points (a trajectory)."""
    n, L, Lz, P = 16, 1, 1, 1.5
    rng = np.random.default_rng(11)
    shape = (2, 2 * Lz + 1, 2 * L + 1, 2 * L + 1)
    coef = rng.standard_normal(shape) + 1j * rng.standard_normal(shape)
    np.save(tmp_path / "m.npy", series3(coef, L, Lz, P, n).astype(np.complex64))
    out = tmp_path / "k.npy"
    p = run("encode", "--phantom", "weave3d", "--matrix", str(n), "--fov", "240mm",
            "--sens", tmp_path / "m.npy", "--coil-order", str(L), "--coil-order-z", str(Lz),
            "--out", out)
    assert "27 terms" in p.stdout
    k = np.load(out)
    assert k.shape == (2, n, n, n)
    j = json.load(open(tmp_path / "k.json"))
    assert max(j["coil_model"]["fit_residual"]) < 1e-5
    pts = [(8, 8, 8), (8, 8, 9), (7, 9, 10), (3, 12, 5), (15, 0, 8), (10, 4, 2)]  # (z, y, x)
    shifts = [(p_, q, r) for r in range(-Lz, Lz + 1) for q in range(-L, L + 1) for p_ in range(-L, L + 1)]
    traj = []
    for z, y, x in pts:
        for p_, q, r in shifts:
            traj.append((x - n // 2 - p_ / P, y - n // 2 - q / P, z - n // 2 - r / P))
    np.save(tmp_path / "t.npy", np.array(traj, np.float32))
    run("encode", "--phantom", "weave3d", "--matrix", str(n), "--fov", "240mm",
        "--trajectory", tmp_path / "t.npy", "--out", tmp_path / "f.npy", "--quiet")
    F = np.load(tmp_path / "f.npy").reshape(len(pts), len(shifts))
    peak = np.abs(k).max()
    for i, (z, y, x) in enumerate(pts):
        for c in range(2):
            ref = sum(coef[c, r + Lz, q + L, p_ + L] * F[i, s]
                      for s, (p_, q, r) in enumerate(shifts))
            assert abs(k[c, z, y, x] - ref) <= 2e-6 * peak, (i, c, k[c, z, y, x], ref)


def test_two_rings_of_loops(tmp_path):
    """Two rings of 4 loops around a 3-D phantom: 8 channels; root-sum-of-
    squares 1 at the centre (our normalisation); a loop of the lower ring
    (z = -gap/2) sees the lower half of the volume more strongly than the
    upper half, one of the upper ring the reverse; the series of orders 3
    and 2 fits each map within 2%; k-space (coils, nz, ny, nx)."""
    n = 32
    out = tmp_path / "k.npy"
    p = run("encode", "--phantom", "weave3d", "--matrix", str(n), "--fov", "240mm", "--coils", "4",
            "--coil-rings", "2", "--sens-out", tmp_path / "s.npy", "--out", out)
    assert "245 terms" in p.stdout
    s = np.load(tmp_path / "s.npy")
    k = np.load(out)
    j = json.load(open(tmp_path / "k.json"))
    assert s.shape == (8, n, n, n) and k.shape == (8, n, n, n) and j["coils"] == 8
    c = n // 2
    assert np.sqrt(np.sum(np.abs(s[:, c, c, c]) ** 2)) == pytest.approx(1, rel=0.01)
    lower = np.abs(s[0, c - 8]).mean() / np.abs(s[0, c + 8]).mean()
    upper = np.abs(s[4, c + 8]).mean() / np.abs(s[4, c - 8]).mean()
    assert lower > 1.2 and upper > 1.2, (lower, upper)
    assert max(j["coil_model"]["fit_residual"]) < 0.02
    assert j["coil_model"]["rings"] == 2 and j["coil_model"]["order_z"] == 2


def test_bad_3d_coil_options(tmp_path):
    out = tmp_path / "k.npy"
    b3 = ["encode", "--phantom", "weave3d", "--matrix", "16", "--fov", "240mm", "--out", out]
    b2 = ["encode", "--phantom", "weave", "--matrix", "16", "--fov", "240mm", "--out", out]
    bad(*b2, "--coils", "4", "--coil-order-z", "2", field="coil-order-z")
    bad(*b3, "--coils", "4", "--coil-rings", "3", field="coil-rings")
    bad(*b3, "--coils", "4", "--coil-ring-gap", "50mm", field="coil-ring-gap")
    bad(*b3, "--coil-rings", "2", field="coil-rings")
    bad(*b3, "--coils", "4", "--coil-order", "8", "--coil-order-z", "8", field="coil-order")
    np.save(tmp_path / "s.npy", np.ones((2, 16, 16), np.complex64))
    bad(*b3, "--sens", tmp_path / "s.npy", field="sens")
    assert not out.exists()


def test_3d_trajectory_on_the_grid_equals_cartesian(tmp_path):
    """A 3-D trajectory through the Cartesian grid points (numpy) gives the
    same multi-coil samples as the Cartesian encode (two rings of 3 loops)."""
    n = 16
    kz, ky, kx = np.mgrid[0:n, 0:n, 0:n] - n // 2
    np.save(tmp_path / "t.npy", np.stack([kx.ravel(), ky.ravel(), kz.ravel()], 1).astype(np.float32))
    base = ["encode", "--phantom", "weave3d", "--matrix", str(n), "--fov", "240mm", "--coils", "3",
            "--coil-rings", "2", "--quiet"]
    run(*base, "--out", tmp_path / "c.npy")
    run(*base, "--trajectory", tmp_path / "t.npy", "--out", tmp_path / "t_k.npy")
    a = np.load(tmp_path / "c.npy").reshape(6, -1)
    b = np.load(tmp_path / "t_k.npy")
    assert b.shape == (6, n ** 3)
    assert np.abs(a - b).max() <= 1e-6 * np.abs(a).max()

"""Cartesian multi-coil reconstructions of `kweave recon` (coil combination,
prewhitening, sensitivity estimation) against numpy (Debian's python3-numpy)
and published formulas. The synthetic data here are made with numpy's FFT
(a rasterised object: fine for checking the algebra of the methods; the
simulator's exact k-space is used by samples/compare_cartesian.sh)."""
import ctypes
import json

import numpy as np
import pytest

from conftest import bad, c64, relerr, run


def fft2c(x):
    ax = (-2, -1)
    return np.fft.fftshift(np.fft.fftn(np.fft.ifftshift(x, axes=ax), axes=ax, norm="ortho"), axes=ax)


def ifft2c(x):
    ax = (-2, -1)
    return np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(x, axes=ax), axes=ax, norm="ortho"), axes=ax)


def grid(n):
    y, x = np.mgrid[:n, :n]
    return (x - n / 2) / (n / 2), (n / 2 - y) / (n / 2)


def smooth_object(n, blur=12.0):
    """A real object of ellipses, blurred by a Gaussian of about n/blur/2 pixels
    (blur=None: sharp edges)."""
    x, y = grid(n)
    o = ((x / 0.7) ** 2 + (y / 0.85) ** 2 < 1) * 1.0
    o += -0.4 * (((x + 0.25) / 0.2) ** 2 + ((y - 0.1) / 0.3) ** 2 < 1)
    o += 0.5 * (((x - 0.3) / 0.15) ** 2 + ((y + 0.3) / 0.15) ** 2 < 1)
    if blur is None:
        return o
    k = np.fft.fftfreq(n)
    g = np.exp(-(k[:, None] ** 2 + k[None, :] ** 2) * (n / blur) ** 2 * 2)
    return np.real(np.fft.ifft2(np.fft.fft2(o) * g))


def coil_maps(n, nc, normalise=True):
    """Gaussian loops on a ring with a smooth phase; RSS = 1 when normalised."""
    x, y = grid(n)
    S = []
    for c in range(nc):
        a = 2 * np.pi * c / nc
        r2 = (x - 1.3 * np.cos(a)) ** 2 + (y - 1.3 * np.sin(a)) ** 2
        S.append(np.exp(-r2 / (2 * 0.9 ** 2)) * np.exp(1j * (0.5 * x * np.cos(a) + 0.5 * y * np.sin(a) + a)))
    S = np.array(S)
    if normalise:
        S /= np.sqrt((np.abs(S) ** 2).sum(0))
    return S


def lattice(n, R, acs, offset=0):
    m = np.zeros(n, bool)
    m[offset::R] = True
    if acs:
        m[n // 2 - acs // 2:n // 2 + (acs + 1) // 2] = True
    return m


def save(path, a, dtype=np.complex64):
    np.save(path, np.ascontiguousarray(a, dtype=dtype))
    return path


def test_optimal_combination_with_true_maps_is_exact(tmp_path):
    # Roemer et al. 1990: S^H m / S^H S returns the object for m = S rho.
    n, nc = 48, 6
    rho = smooth_object(n)
    S = coil_maps(n, nc, normalise=False)
    k = save(tmp_path / "k.npy", fft2c(S * rho))
    s = save(tmp_path / "s.npy", S)
    run("recon", "--in", k, "--out", tmp_path / "o.npy", "--combine", "optimal", "--sens", s)
    assert relerr(np.load(tmp_path / "o.npy"), np.abs(rho)) <= 1e-5


def test_prewhitening_optimal_combination_matches_numpy(tmp_path):
    # Roemer et al. 1990 with noise correlation: rho = S^H Psi^-1 m / (S^H Psi^-1 S),
    # evaluated by numpy on the same noisy data.
    n, nc = 32, 4
    rng = np.random.default_rng(3)
    rho = smooth_object(n)
    S = coil_maps(n, nc, normalise=False)
    A = rng.standard_normal((nc, nc)) + 1j * rng.standard_normal((nc, nc))
    psi = A @ A.conj().T / nc + np.eye(nc)
    L = np.linalg.cholesky(psi)
    noise = np.einsum("ij,jyx->iyx", L, (rng.standard_normal((nc, n, n)) + 1j * rng.standard_normal((nc, n, n))) / np.sqrt(2))
    m = S * rho + 0.05 * noise
    k = save(tmp_path / "k.npy", fft2c(m))
    run("recon", "--in", k, "--out", tmp_path / "o.npy", "--combine", "optimal", "--sens", save(tmp_path / "s.npy", S),
        "--noise-cov", save(tmp_path / "p.npy", psi), "--keep-coils", check=True)
    run("recon", "--in", k, "--out", tmp_path / "o.npy", "--combine", "optimal", "--sens", tmp_path / "s.npy",
        "--noise-cov", tmp_path / "p.npy")
    pi = np.linalg.inv(psi)
    m64 = ifft2c(np.load(k).astype(np.complex128))
    num = np.einsum("cyx,cd,dyx->yx", S.conj(), pi, m64)
    den = np.einsum("cyx,cd,dyx->yx", S.conj(), pi, S).real
    assert relerr(np.load(tmp_path / "o.npy"), np.abs(num / den)) <= 1e-4


def test_prewhitened_noise_has_identity_covariance(lib):
    # Pruessmann et al. 2001 (MRM 46:638) / Roemer 1990: L^-1 n has identity
    # covariance when Psi = L L^H. 200000 draws: each entry of the sample
    # covariance has standard deviation about 1/sqrt(200000) = 0.0022; allow 6 sigma.
    nc, ns = 5, 200000
    rng = np.random.default_rng(11)
    A = rng.standard_normal((nc, nc)) + 1j * rng.standard_normal((nc, nc))
    psi = A @ A.conj().T / nc + 0.5 * np.eye(nc)
    L = np.linalg.cholesky(psi)
    z = (rng.standard_normal((nc, ns)) + 1j * rng.standard_normal((nc, ns))) / np.sqrt(2)
    n = L @ z
    cov, pc = c64(psi)
    w, pw = c64(np.zeros((nc, nc)))
    assert lib.kw_prewhiten_matrix(pc, ctypes.c_size_t(nc), pw) == 0
    buf, pb = c64(n)
    lib.kw_prewhiten_apply(pw, ctypes.c_size_t(nc), ctypes.c_size_t(ns), pb)
    sc = buf.astype(np.complex128) @ buf.conj().T.astype(np.complex128) / ns
    assert np.abs(sc - np.eye(nc)).max() < 6 / np.sqrt(ns)
    # and W is numpy's inverse Cholesky factor
    assert relerr(w, np.linalg.inv(L)) < 1e-5


def test_adaptive_combination_noise_free(tmp_path):
    # Walsh et al. 2000: with locally constant maps the dominant eigenvector of
    # the local correlation matrix is S/|S|, so |v^H m| = |S| |rho| = the
    # root-sum-of-squares image for noise-free data. The maps vary slowly, so
    # agreement is approximate: 1% (common practice, no source).
    n, nc = 64, 8
    rho = smooth_object(n) + 0.3
    S = coil_maps(n, nc)
    k = save(tmp_path / "k.npy", fft2c(S * rho))
    run("recon", "--in", k, "--out", tmp_path / "a.npy", "--combine", "adaptive")
    run("recon", "--in", k, "--out", tmp_path / "r.npy")
    assert relerr(np.load(tmp_path / "a.npy"), np.load(tmp_path / "r.npy")) < 0.01


def test_estimated_maps_match_true_maps(tmp_path):
    # Walsh eigenvector maps from a 24-line calibration block against the true
    # (RSS-normalised) maps, compared up to the common phase of coil 0 inside
    # the object: 5% (common practice, no source).
    n, nc = 64, 8
    rho = smooth_object(n) + 0.2 * (smooth_object(n) > 0.1)
    S = coil_maps(n, nc)
    k = fft2c(S * rho) * lattice(n, 2, 24)[None, :, None]
    save(tmp_path / "k.npy", k)
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "i.npy", "--method", "sense",
        "--sens-out", tmp_path / "se.npy", "--json", tmp_path / "r.json")
    se = np.load(tmp_path / "se.npy")
    assert se.shape == S.shape and se.dtype == np.complex64
    inside = rho > 0.5
    ref = S * np.exp(-1j * np.angle(S[0]))[None]
    assert relerr(se[:, inside], ref[:, inside]) < 0.05
    assert json.loads((tmp_path / "r.json").read_text())["sens_source"].startswith("estimated")


def test_bad_cartesian_input(tmp_path):
    n, nc = 32, 4
    S = coil_maps(n, nc)
    k = fft2c(S * smooth_object(n))
    m = np.zeros(n, bool)
    m[np.random.default_rng(1).choice(n, 12, replace=False)] = True
    m[14:18] = True
    save(tmp_path / "rand.npy", k * m[None, :, None])
    bad("recon", "--in", tmp_path / "rand.npy", "--out", tmp_path / "o.npy", "--method", "sense",
        "--sens", save(tmp_path / "s.npy", S), field="acceleration")
    bad("recon", "--in", tmp_path / "rand.npy", "--out", tmp_path / "o.npy", "--method", "grappa", field="acceleration")
    # acceleration in the sidecar that does not match the data
    save(tmp_path / "r2.npy", k * lattice(n, 2, 8)[None, :, None])
    (tmp_path / "r2.json").write_text(json.dumps({"kind": "kspace", "acceleration": 4}))
    bad("recon", "--in", tmp_path / "r2.npy", "--out", tmp_path / "o.npy", "--method", "sense", field="acceleration")
    # no calibration block and no maps
    save(tmp_path / "r2n.npy", k * lattice(n, 2, 0)[None, :, None])
    bad("recon", "--in", tmp_path / "r2n.npy", "--out", tmp_path / "o.npy", "--method", "sense", field="sens")
    bad("recon", "--in", tmp_path / "r2n.npy", "--out", tmp_path / "o.npy", "--method", "grappa", field="acs_lines")
    # homodyne on data that are not partial Fourier
    save(tmp_path / "full.npy", k)
    bad("recon", "--in", tmp_path / "full.npy", "--out", tmp_path / "o.npy", "--method", "homodyne", field="partial Fourier")
    bad("recon", "--in", tmp_path / "full.npy", "--out", tmp_path / "o.npy", "--sens-out", tmp_path / "x.png", field="sens-out")
    assert not (tmp_path / "o.npy").exists()


def test_prewhitened_rss_keeps_the_scale(tmp_path):
    # rss after whitening with Psi / mean(diag Psi) (docs/cartesian.md),
    # evaluated by numpy: same scale as the data when Psi is diagonal and equal.
    n, nc = 32, 4
    rng = np.random.default_rng(8)
    S = coil_maps(n, nc)
    m = S * smooth_object(n) + 0.01 * (rng.standard_normal((nc, n, n)) + 1j * rng.standard_normal((nc, n, n)))
    k = save(tmp_path / "k.npy", fft2c(m))
    A = rng.standard_normal((nc, nc)) + 1j * rng.standard_normal((nc, nc))
    psi = 3e-4 * (A @ A.conj().T / nc + np.eye(nc))
    run("recon", "--in", k, "--out", tmp_path / "w.npy", "--noise-cov", save(tmp_path / "p.npy", psi))
    pn = psi / np.trace(psi).real * nc
    w = np.linalg.inv(np.linalg.cholesky(pn))
    ref = np.sqrt((np.abs(np.einsum("ij,jyx->iyx", w, ifft2c(np.load(k).astype(complex)))) ** 2).sum(0))
    assert relerr(np.load(tmp_path / "w.npy"), ref) <= 1e-4
    # a scalar covariance changes nothing
    run("recon", "--in", k, "--out", tmp_path / "s.npy", "--noise-cov", save(tmp_path / "q.npy", 7e-3 * np.eye(nc)))
    run("recon", "--in", k, "--out", tmp_path / "r.npy")
    assert relerr(np.load(tmp_path / "s.npy"), np.load(tmp_path / "r.npy")) <= 1e-5


def test_fft_gfactor_is_one_and_png(tmp_path):
    # Robson et al. 2008: fully sampled data through the fft method with
    # root-sum-of-squares have g = 1 (the replica noise is the reference
    # noise); 100 replicas: mean over the object within 3%.
    n, nc = 32, 4
    rho = smooth_object(n)
    k = save(tmp_path / "k.npy", fft2c(coil_maps(n, nc) * rho))
    run("recon", "--in", k, "--out", tmp_path / "i.png", "--gfactor", tmp_path / "g.npy", "--replicas", 100,
        "--json", tmp_path / "r.json")
    g = np.load(tmp_path / "g.npy")
    assert abs(g[rho > 0.5].mean() - 1) < 0.03
    assert (tmp_path / "i.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    run("recon", "--in", k, "--out", tmp_path / "i.npy", "--gfactor", tmp_path / "g.png", "--replicas", 5)
    assert (tmp_path / "g.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

"""SENSE (Pruessmann, Weiger, Scheidegger & Boesiger 1999, MRM 42:952) in
`kweave recon --method sense`, checked against numpy and the paper's
formulas."""
import json

import numpy as np
import pytest

from conftest import relerr, run
from test_recon_cart import coil_maps, fft2c, ifft2c, lattice, save, smooth_object


def test_sense_r1_equals_optimal_combination(tmp_path):
    # Pruessmann 1999: at R = 1 the SENSE solution is S^H m / S^H S, the
    # optimal combination of Roemer et al. 1990.
    n, nc = 40, 5
    rng = np.random.default_rng(2)
    S = coil_maps(n, nc, normalise=False)
    m = S * smooth_object(n) + 0.02 * (rng.standard_normal((nc, n, n)) + 1j * rng.standard_normal((nc, n, n)))
    k = save(tmp_path / "k.npy", fft2c(m))
    s = save(tmp_path / "s.npy", S)
    run("recon", "--in", k, "--out", tmp_path / "a.npy", "--method", "sense", "--sens", s)
    run("recon", "--in", k, "--out", tmp_path / "b.npy", "--combine", "optimal", "--sens", s)
    assert relerr(np.load(tmp_path / "a.npy"), np.load(tmp_path / "b.npy")) <= 1e-5


@pytest.mark.parametrize("R,offset,lam", [(2, 0, 0.0), (2, 1, 0.0), (4, 3, 0.0), (2, 1, 0.05)])
def test_sense_matches_numpy_least_squares(tmp_path, R, offset, lam):
    # The whole encoding E = M F S written out as a matrix by numpy and solved
    # by least squares (Tikhonov: (E^H E + lambda' I) rho = E^H d with
    # lambda' = lambda * trace(A)/r per aliased pixel set, A being that set's
    # normal matrix). This checks the folding phases of sense.c.
    n, nc = 16, 8
    rng = np.random.default_rng(R + offset)
    S = coil_maps(n, nc, normalise=False)
    rho = rng.standard_normal((n, n)) + 1j * rng.standard_normal((n, n))
    m = lattice(n, R, 0, offset)
    k = fft2c(S * rho) * m[None, :, None]
    save(tmp_path / "k.npy", k)
    save(tmp_path / "s.npy", S)
    args = ["--lambda", lam] if lam else []
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "c.npy", "--method", "sense",
        "--sens", tmp_path / "s.npy", "--keep-coils", *args)
    got = np.load(tmp_path / "c.npy")
    # 1-D centered unitary DFT along y, sampled rows only
    idx = np.arange(n) - n // 2
    F = np.exp(-2j * np.pi * np.outer(idx, idx) / n) / np.sqrt(n)
    Fs = F[m]
    est = np.zeros((n, n), complex)
    hyb = np.fft.fftshift(np.fft.ifft(np.fft.ifftshift(k, axes=-1), axis=-1, norm="ortho"), axes=-1)
    d = hyb[:, m, :]  # (nc, sampled ky, x)
    for x in range(n):
        E = np.concatenate([Fs * S[c, :, x][None, :] for c in range(nc)])
        b = d[:, :, x].reshape(-1)
        if lam == 0:
            est[:, x] = np.linalg.lstsq(E, b, rcond=None)[0]
        else:
            # per aliased set (pixels y, y + n/R, ...), as sense.c regularises
            A = E.conj().T @ E
            for y0 in range(n // R):
                ys = [y0 + j * n // R for j in range(R)]
                Ab = A[np.ix_(ys, ys)]
                lp = lam * np.trace(Ab).real / R
                # E^H E is block-diagonal over aliased sets for a lattice
                est[ys, x] = np.linalg.solve(Ab + lp * np.eye(R), (E.conj().T @ b)[ys])
    assert relerr(got, est) <= 1e-4


def test_two_coil_gfactor_closed_form(tmp_path):
    # Pruessmann 1999 eq. 23: g = sqrt([(S^H Psi^-1 S)^-1]_ii [S^H Psi^-1 S]_ii).
    # For two coils and R = 2 this is g = 1 / sqrt(1 - |<s1, s2>|^2 / (|s1|^2 |s2|^2))
    # with <a, b> = a^H Psi^-1 b and s1, s2 the coil-sensitivity vectors of the
    # two pixels that fold onto each other (same for both pixels of the pair).
    n = 32
    x = (np.arange(n) - n / 2) / (n / 2)
    yy = x[::-1][:, None] * np.ones((1, n))
    S = np.array([np.exp(-(yy - 1.2) ** 2 / 1.5) * np.exp(0.3j * yy), np.exp(-(yy + 1.2) ** 2 / 1.5) + 0j])
    S = S * (1 + 0.1 * x[None, None, :])
    psi = np.array([[1.0, 0.3 + 0.1j], [0.3 - 0.1j, 1.5]])
    rho = smooth_object(n) + 1
    k = fft2c(S * rho) * lattice(n, 2, 0)[None, :, None]
    save(tmp_path / "k.npy", k)
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "i.npy", "--method", "sense",
        "--sens", save(tmp_path / "s.npy", S), "--noise-cov", save(tmp_path / "p.npy", psi),
        "--gfactor", tmp_path / "g.npy", "--json", tmp_path / "r.json")
    g = np.load(tmp_path / "g.npy")
    pi = np.linalg.inv(psi)
    ref = np.zeros((n, n))
    for y in range(n):
        y2 = (y + n // 2) % n
        for xx in range(n):
            s1, s2 = S[:, y, xx], S[:, y2, xx]
            ip = lambda a, b: a.conj() @ pi @ b
            c2 = abs(ip(s1, s2)) ** 2 / (ip(s1, s1).real * ip(s2, s2).real)
            ref[y, xx] = 1 / np.sqrt(1 - c2)
    assert relerr(g, ref) <= 1e-4
    assert json.loads((tmp_path / "r.json").read_text())["gfactor_method"].startswith("analytic")


def test_sense_2d_acceleration_3d_data(tmp_path):
    # 2-D acceleration R = 2 x 2 over (kz, ky) of a 3-D volume, maps given:
    # noise-free data unfold exactly (to single precision).
    nz, n, nc = 8, 16, 8
    S2 = coil_maps(n, nc, normalise=False)
    zz = (np.arange(nz) - nz / 2) / (nz / 2)
    S = np.array([S2[c][None] * np.exp(-(zz[:, None, None] - (0.8 if c % 2 else -0.8)) ** 2) for c in range(nc)])
    rho = np.stack([smooth_object(n) * (1 - 0.05 * z) for z in range(nz)])
    ax = (-3, -2, -1)
    k = np.fft.fftshift(np.fft.fftn(np.fft.ifftshift(S * rho, axes=ax), axes=ax, norm="ortho"), axes=ax)
    mz, my = lattice(nz, 2, 0), lattice(n, 2, 0)
    k = k * mz[None, :, None, None] * my[None, None, :, None]
    save(tmp_path / "k.npy", k)
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "i.npy", "--method", "sense",
        "--sens", save(tmp_path / "s.npy", S), "--json", tmp_path / "r.json")
    assert relerr(np.load(tmp_path / "i.npy"), np.abs(rho)) <= 1e-4
    assert json.loads((tmp_path / "r.json").read_text())["sampling"]["acceleration_axes"] == [2, 2, 1]

"""The physics of `kweave encode` (issue 5) against outside references, run by
/usr/bin/python3 with numpy (reconstruction by numpy.fft, the centered
unitary convention of docs/api.md)."""
import json

import numpy as np
import pytest

from conftest import bad, run
from conftest import centered_ifft2 as recon
from conftest import encode as enc

GAMMA_BAR = 42.577478518e6  # CODATA 2018, Hz/T
FAT_PPM = -3.4               # main fat peak vs water (Hamilton et al. 2011; recalled from memory)


def test_off_resonance_of_one_over_readout_shifts_one_pixel(tmp_path):
    """Readout along x, dwell 1/BW, k-space centre at TE: an off-resonance df
    adds the phase exp(-i 2 pi df (t - TE)) = exp(-i 2 pi df kx / BW), which by
    the DFT shift theorem moves the image by df / (BW / nx) pixels along x.
    BW = 25.6 kHz over 256 pixels: readout 10 ms; df = 1/10 ms = 100 Hz -> 1 px."""
    base = ["--phantom", "shepp-logan-modified", "--matrix", "256", "--fov", "256mm",
            "--bandwidth", "25.6kHz", "--quiet"]
    k0, _ = enc(tmp_path, "a", *base)
    k1, j = enc(tmp_path, "b", *base, "--df", "100Hz")
    assert j["protocol"]["readout_duration_s"] == pytest.approx(0.01)
    i0, i1 = recon(k0.astype(complex)), recon(k1.astype(complex))
    assert np.linalg.norm(i1 - np.roll(i0, 1, axis=1)) <= 1e-5 * np.linalg.norm(i0)


def test_fat_vial_displaced_by_predicted_pixels(tmp_path):
    """Fat at 3 T: -3.4 ppm x 42.577 MHz/T x 3 T = -434.29 Hz; at 100 Hz/pixel
    the prediction is -4.343 pixels along x (to the left). Measured: recon -
    truth = fat (vial(x - d) - vial(x)) around the fat vial (water does not
    move), whose first moment is d times the vial's fat content."""
    n, bwpp = 256, 100.0
    k, j = enc(tmp_path, "f", "--phantom", "weave", "--matrix", str(n), "--fov", "240mm",
               "--bandwidth", f"{bwpp}Hz/pixel", "--truth", tmp_path / "t.npy", "--quiet")
    want = FAT_PPM * 1e-6 * GAMMA_BAR * 3.0 / bwpp
    assert want == pytest.approx(-4.3429, abs=1e-4)
    assert j["protocol"]["fat_shift_pixels"] == pytest.approx(want, rel=1e-9)
    img = recon(k.astype(complex)).real
    t = np.load(tmp_path / "t.npy")
    # fat vial: centre 0.55 (cos 150, sin 150), radius 0.14 (docs/simulator.md)
    cx = n // 2 + 0.55 * np.cos(np.deg2rad(150)) * n / 2
    cy = n // 2 - 0.55 * np.sin(np.deg2rad(150)) * n / 2
    r0, r1 = int(cy - 0.14 * n / 2 - 4), int(cy + 0.14 * n / 2 + 5)
    c0, c1 = int(cx - 0.14 * n / 2 - 12), int(cx + 0.14 * n / 2 + 12)
    D = (img - t)[r0:r1, c0:c1]
    xs = np.arange(c0, c1)[None, :]
    fat_pd, muscle_pd = 0.90, 0.72
    inside = (t[r0:r1, c0:c1] - muscle_pd) / (fat_pd - muscle_pd)   # vial coverage 0..1
    d = np.sum(xs * D) / (fat_pd * np.sum(inside))
    assert d == pytest.approx(want, abs=0.1), d
    # where the planner says: `kweave plan` for the same protocol reports the
    # displacement's size along the readout (fat below water: towards -x here)
    run("plan", "--fov", "240mm", "--matrix", str(n), "--bandwidth", f"{bwpp}Hz/pixel", "--b0", "3T",
        "--json", tmp_path / "plan.json")
    plan = json.load(open(tmp_path / "plan.json"))
    assert -d == pytest.approx(plan["chemical_shift_pixels"], abs=0.1)


def test_gre_contrast_matches_ernst_equation(tmp_path):
    """Vial intensities of a spoiled gradient echo, computed here by hand from
    the Ernst steady state pd sin a (1 - E1)/(1 - cos a E1) exp(-TE/T2*), with
    T1 at 3 T from Stanisz et al. 2005 (white matter 1084 ms, grey matter
    1820 ms, liver 812 ms, blood 1932 ms; recalled from memory) and our PD and
    T2* values (libencode/tissue.c). TR 30 ms, flip 25 deg, TE 4 ms."""
    n = 256
    k, _ = enc(tmp_path, "g", "--phantom", "weave", "--matrix", str(n), "--fov", "240mm",
               "--sequence", "gre", "--te", "4ms", "--tr", "30ms", "--flip", "25")
    img = np.abs(recon(k.astype(complex)))
    tissues = {90: (0.69, 1.084, 0.045), 30: (0.80, 1.820, 0.055),
               -90: (0.70, 0.812, 0.022), -150: (0.85, 1.932, 0.060)}
    a, tr, te = np.deg2rad(25), 0.030, 0.004
    for ang, (pd, t1, t2s) in tissues.items():
        e1 = np.exp(-tr / t1)
        want = pd * np.sin(a) * (1 - e1) / (1 - np.cos(a) * e1) * np.exp(-te / t2s)
        x, y = 0.55 * np.cos(np.deg2rad(ang)), 0.55 * np.sin(np.deg2rad(ang))
        c, r = n // 2 + int(round(x * n / 2)), n // 2 - int(round(y * n / 2))
        got = img[r - 4:r + 5, c - 4:c + 5].mean()
        assert got == pytest.approx(want, rel=0.02), (ang, got, want)


def test_ir_nulls_white_matter(tmp_path):
    """Inversion recovery with TR >> T1 nulls a tissue at TI = T1 ln 2:
    white matter at 3 T, T1 = 1084 ms (Stanisz 2005): TI = 751.4 ms."""
    n = 128
    ti = 1.084 * np.log(2)
    k, _ = enc(tmp_path, "i", "--phantom", "weave", "--matrix", str(n), "--fov", "240mm",
               "--sequence", "ir", "--te", "10ms", "--tr", "20s", "--ti", f"{ti * 1e3:.4f}ms")
    img = recon(k.astype(complex)).real
    c, r = n // 2, n // 2 - int(round(0.55 * n / 2))
    wm = img[r - 2:r + 3, c - 2:c + 3].mean()
    muscle = img[n // 2 + int(0.35 * n / 2), n // 2]
    assert abs(wm) < 0.01 * abs(muscle) + 2e-3, (wm, muscle)
    # e^-20/1.084 is ~1e-8: the null is exact to the table's precision


def test_noise_covariance_statistics(tmp_path):
    """The sample covariance of the simulated noise (noisy - clean data, 16384
    samples per coil) matches sigma^2 R (R: 1 on the diagonal, rho off it)
    within 5 standard errors (entry standard error ~ sigma^2 / sqrt(n)),
    and the written noise_cov file holds exactly sigma^2 R."""
    base = ["--phantom", "shepp-logan-modified", "--matrix", "128", "--fov", "200mm",
            "--coils", "4", "--coil-order", "2", "--quiet"]
    k0, _ = enc(tmp_path, "c0", *base)
    k1, j = enc(tmp_path, "c1", *base, "--snr", "5", "--noise-corr", "0.4", "--seed", "9")
    sig = j["noise_sigma"]
    R = np.full((4, 4), 0.4) + 0.6 * np.eye(4)
    nz = (k1 - k0).reshape(4, -1).astype(complex)
    C = nz @ nz.conj().T / nz.shape[1]
    assert np.max(np.abs(C - sig ** 2 * R)) < 5 * sig ** 2 / np.sqrt(nz.shape[1])
    cov = np.load(tmp_path / j["noise_cov"])
    assert cov.shape == (4, 4) and cov.dtype == np.complex64
    np.testing.assert_allclose(cov, sig ** 2 * R, rtol=1e-6)
    # prewhitening with the written covariance gives white noise
    L = np.linalg.cholesky(cov.astype(complex))
    W = np.linalg.solve(L, nz)
    Cw = W @ W.conj().T / W.shape[1]
    assert np.max(np.abs(Cw - np.eye(4))) < 5 / np.sqrt(nz.shape[1])


def test_noise_cov_file_keeps_its_shape(tmp_path):
    rng = np.random.default_rng(2)
    A = rng.standard_normal((3, 3)) + 1j * rng.standard_normal((3, 3))
    S = (A @ A.conj().T + 3 * np.eye(3)).astype(np.complex64)
    np.save(tmp_path / "S.npy", S)
    _, j = enc(tmp_path, "n", "--phantom", "weave", "--matrix", "32", "--fov", "200mm",
               "--coils", "3", "--coil-order", "1", "--snr", "10", "--noise-cov", tmp_path / "S.npy",
               "--quiet")
    cov = np.load(tmp_path / j["noise_cov"])
    sig = j["noise_sigma"]
    scale = sig ** 2 / np.mean(np.real(np.diag(S)))
    np.testing.assert_allclose(cov, S * scale, rtol=1e-5)


def series_maps(coef, L, period, n):
    u = (np.arange(n) - n // 2) / n
    v = (np.arange(n) - n // 2) / n
    U, V = np.meshgrid(u, v)
    m = np.zeros((coef.shape[0], n, n), complex)
    for q in range(-L, L + 1):
        for p in range(-L, L + 1):
            m += coef[:, q + L, p + L, None, None] * np.exp(2j * np.pi * (p * U + q * V) / period)
    return m


def test_series_kspace_vs_brute_force_sum(tmp_path):
    """Small case: maps that are exactly a trigonometric series of order 2
    (period 1.5 FOV) are given with --sens; the fit recovers them, so the
    k-space must equal the Fourier integral of (series x phantom). Reference:
    a brute-force discrete sum on a fine grid (1024 x 1024 midpoints over the
    FOV) of s(u, v) f(u, v) exp(-i 2 pi k.u), f the modified Shepp-Logan
    ellipses (Toft's table, evaluated here independently). The midpoint rule
    on the discontinuous object is accurate to ~2e-4 of the peak at 1024
    (7e-5 at 2048: the difference shrinks with the grid, as it must)."""
    n, L, P = 32, 2, 1.5
    rng = np.random.default_rng(5)
    coef = (rng.standard_normal((2, 2 * L + 1, 2 * L + 1)) + 1j * rng.standard_normal((2, 2 * L + 1, 2 * L + 1)))
    coef /= np.arange(1, 2 * L + 2)[None, :, None]  # smooth-ish
    maps = series_maps(coef, L, P, n).astype(np.complex64)
    np.save(tmp_path / "m.npy", maps)
    out = tmp_path / "k.npy"
    p = run("encode", "--phantom", "shepp-logan-modified", "--matrix", str(n), "--fov", "200mm",
            "--sens", tmp_path / "m.npy", "--coil-order", str(L), "--out", out)
    assert "fit residual" in p.stdout
    k = np.load(out)
    assert k.shape == (2, n, n)
    # fine-grid reference
    N = 1024
    u = (np.arange(N) + 0.5) / N - 0.5
    U, V = np.meshgrid(u, u)           # V: row direction (down)
    X, Y = 2 * U, -2 * V               # phantom coordinates, y up
    geo = [(0, 0, 0.69, 0.92, 0, 1), (0, -0.0184, 0.6624, 0.874, 0, -0.8),
           (0.22, 0, 0.11, 0.31, -18, -0.2), (-0.22, 0, 0.16, 0.41, 18, -0.2),
           (0, 0.35, 0.21, 0.25, 0, 0.1), (0, 0.1, 0.046, 0.046, 0, 0.1),
           (0, -0.1, 0.046, 0.046, 0, 0.1), (-0.08, -0.605, 0.046, 0.023, 0, 0.1),
           (0, -0.605, 0.023, 0.023, 0, 0.1), (0.06, -0.605, 0.023, 0.046, 0, 0.1)]
    f = np.zeros((N, N))
    for cx, cy, a, b, ang, val in geo:
        t = np.deg2rad(ang)
        dx, dy = X - cx, Y - cy
        uu = dx * np.cos(t) + dy * np.sin(t)
        vv = -dx * np.sin(t) + dy * np.cos(t)
        f += val * ((uu / a) ** 2 + (vv / b) ** 2 <= 1)
    # the series on the fine grid, separably: S = Ey C Ex^T
    qs = np.arange(-L, L + 1)
    Ex = np.exp(2j * np.pi * np.outer(u, qs) / P)      # (N, 2L+1), columns p
    S = np.einsum("yq,cqp,xp->cyx", Ex, coef, Ex)       # rows use v = u
    g = S * f[None]
    pts = [(n // 2, n // 2), (n // 2 + 1, n // 2), (n // 2, n // 2 + 3), (n // 2 - 5, n // 2 + 2),
           (3, 7), (n - 2, 20), (10, n // 2)]
    scale = n / N ** 2                  # sqrt(nx ny) x du dv
    peak = np.max(np.abs(k))
    for r, c in pts:
        kx, kv = c - n // 2, r - n // 2
        ex, ey = np.exp(-2j * np.pi * kx * u), np.exp(-2j * np.pi * kv * u)
        for coil in range(2):
            ref = scale * (ey @ g[coil] @ ex)
            assert abs(k[coil, r, c] - ref) <= 3e-4 * peak, (r, c, coil, k[coil, r, c], ref)


def test_coil_maps(tmp_path):
    """Ring of 8 loops: root-sum-of-squares 1 at the centre (our
    normalisation); coil 0 (on +x) is strongest on the right edge; each map
    is smooth enough that the order-4 series fits it within 1%."""
    out = tmp_path / "k.npy"
    run("encode", "--phantom", "weave", "--matrix", "64", "--fov", "240mm", "--coils", "8",
        "--sens-out", tmp_path / "s.npy", "--out", out, "--quiet")
    s = np.load(tmp_path / "s.npy")
    j = json.load(open(tmp_path / "k.json"))
    assert s.shape == (8, 64, 64) and j["sens"] == "s.npy" and j["coils"] == 8
    assert np.sqrt(np.sum(np.abs(s[:, 32, 32]) ** 2)) == pytest.approx(1, rel=0.01)
    a = np.abs(s[0])
    assert a[32, 60] > 3 * a[32, 4]
    assert max(j["coil_model"]["fit_residual"]) < 0.01
    k = np.load(out)
    assert k.shape == (8, 64, 64)


def test_pattern_mask(tmp_path):
    n = 64
    mask = np.zeros(n, np.uint8)
    mask[::7] = 1           # rows 21 and 42 leave the block 28..35 alone
    mask[n // 2 - 4:n // 2 + 4] = 1
    np.save(tmp_path / "m.npy", mask)
    base = ["--phantom", "weave", "--matrix", str(n), "--fov", "240mm", "--quiet"]
    kf, _ = enc(tmp_path, "full", *base)
    km, j = enc(tmp_path, "mask", *base, "--pattern", tmp_path / "m.npy")
    assert km.shape == (n, n)
    assert np.all(km[mask == 0] == 0)
    np.testing.assert_array_equal(km[mask == 1], kf[mask == 1])
    assert j["pattern"] == "m.npy"
    assert j["acceleration"] == pytest.approx(n / mask.sum())
    assert j["acs_lines"] == 8
    m2 = np.zeros((n, n), np.float32)
    m2[:, ::2] = 1
    np.save(tmp_path / "pat2.npy", m2)
    k2, _ = enc(tmp_path, "m2", *base, "--pattern", tmp_path / "pat2.npy")
    assert np.all(k2[:, 1::2] == 0)


def test_trajectory_on_grid_points_equals_cartesian(tmp_path):
    """A trajectory through the Cartesian points (kx, ky) = (i - N/2, j - N/2)
    gives the Cartesian samples (coils, samples); a radial trajectory runs."""
    n = 32
    base = ["--phantom", "shepp-logan-modified", "--matrix", str(n), "--fov", "200mm",
            "--coils", "2", "--coil-order", "2", "--quiet"]
    kc, _ = enc(tmp_path, "cart", *base)
    j, i = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    traj = np.stack([(i - n // 2).ravel(), (j - n // 2).ravel()], 1).astype(np.float32)
    np.save(tmp_path / "t.npy", traj)
    kt, js = enc(tmp_path, "traj", *base, "--trajectory", tmp_path / "t.npy")
    assert kt.shape == (2, n * n) and js["layout"] == "noncartesian" and js["trajectory"] == "t.npy"
    np.testing.assert_allclose(kt, kc.reshape(2, -1), rtol=0, atol=1e-6 * np.abs(kc).max())
    spokes, m = 16, 48
    ang = np.pi * np.arange(spokes) / spokes
    r = np.arange(m) - m // 2
    rad = np.stack([np.outer(np.cos(ang), r).ravel(), np.outer(np.sin(ang), r).ravel()], 1)
    np.save(tmp_path / "r.npy", rad.astype(np.float32))
    kr, _ = enc(tmp_path, "rad", *base, "--trajectory", tmp_path / "r.npy")
    assert kr.shape == (2, spokes * m) and np.all(np.isfinite(kr))
    # the centre of every spoke is the same DC sample
    dc = kr[:, m // 2::m]
    assert np.allclose(dc, dc[:, :1], atol=1e-5 * np.abs(dc).max())


def test_weave3d(tmp_path):
    """3-D: ellipsoids and boxes; the central slice of the reconstruction
    shows the tissue proton densities (muscle 0.72 in the body)."""
    n = 48
    k, j = enc(tmp_path, "v", "--phantom", "weave3d", "--matrix", str(n), "--fov", "240mm",
               "--truth", tmp_path / "t.npy", "--quiet")
    assert k.shape == (n, n, n) and j["matrix"] == [n, n, n]
    img = np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(k.astype(complex)), norm="ortho")).real
    c = n // 2
    assert img[c, c + int(0.35 * n / 2), c] == pytest.approx(0.72, rel=0.03)
    t = np.load(tmp_path / "t.npy")
    assert t.shape == (n, n, n)


BASE = ["encode", "--phantom", "weave", "--matrix", "32", "--fov", "200mm"]


@pytest.mark.parametrize("extra,field", [
    (["--coils", "0"], "coils"),
    (["--coils", "4", "--coil-distance", "50mm"], "coil-distance"),
    (["--coils", "4", "--coil-order", "9"], "coil-order"),
    (["--sequence", "gre", "--te", "5ms", "--tr", "20ms"], "flip"),
    (["--sequence", "flash", "--te", "5ms", "--tr", "20ms"], "sequence"),
    (["--sequence", "se", "--tr", "1s"], "te"),
    (["--sequence", "ir", "--te", "10ms", "--tr", "1s"], "ti"),
    (["--bandwidth", "3.2kHz", "--te", "2ms"], "te"),       # readout 10 ms: TE >= 5 ms
    (["--bandwidth", "-5kHz"], "bandwidth"),
    (["--b0", "2T"], "b0"),
    (["--snr", "10", "--coils", "4", "--noise-corr", "1.5"], "noise-corr"),
    (["--noise-corr", "0.3", "--coils", "2"], "noise-corr"),
    (["--times", "x.npy"], "times"),            # no such file
])
def test_bad_physics(tmp_path, extra, field):
    out = tmp_path / "ks.npy"
    bad(*BASE, "--out", out, *extra, field=field)
    assert not out.exists()


def test_bad_files(tmp_path):
    out = tmp_path / "ks.npy"
    np.save(tmp_path / "s.npy", np.ones((2, 16, 16), np.complex64))
    bad(*BASE, "--out", out, "--sens", tmp_path / "s.npy", field="sens")
    s = np.ones((2, 32, 32), np.complex64)
    s[1, 3, 4] = np.nan
    np.save(tmp_path / "s2.npy", s)
    bad(*BASE, "--out", out, "--sens", tmp_path / "s2.npy", field="sens")
    np.save(tmp_path / "m.npy", np.ones(31, np.uint8))
    bad(*BASE, "--out", out, "--pattern", tmp_path / "m.npy", field="pattern")
    np.save(tmp_path / "z.npy", np.zeros(32, np.uint8))
    bad(*BASE, "--out", out, "--pattern", tmp_path / "z.npy", field="pattern")
    np.save(tmp_path / "t.npy", np.zeros((10, 3), np.float32))
    bad(*BASE, "--out", out, "--trajectory", tmp_path / "t.npy", field="trajectory")
    t = np.zeros((10, 2), np.float32)
    t[4, 1] = np.inf
    np.save(tmp_path / "t2.npy", t)
    bad(*BASE, "--out", out, "--trajectory", tmp_path / "t2.npy", field="trajectory")
    np.save(tmp_path / "c.npy", np.array([[1, 2], [2, 1]], np.complex64))
    bad(*BASE, "--out", out, "--coils", "2", "--snr", "5", "--noise-cov", tmp_path / "c.npy",
        field="noise-cov")
    np.save(tmp_path / "c2.npy", np.array([[1, 0.5j], [0.5j, 1]], np.complex64))
    bad(*BASE, "--out", out, "--coils", "2", "--snr", "5", "--noise-cov", tmp_path / "c2.npy",
        field="noise-cov")
    assert not out.exists()


def test_field_map_uniform_equals_analytic_off_resonance(tmp_path):
    """A uniform field map of 100 Hz, handled numerically (time segments on a
    4x grid), must agree with the analytic off-resonance --df 100Hz (exact per
    sample), and so move the image by one pixel (BW 12.8 kHz / 128 px)."""
    base = ["--phantom", "shepp-logan-modified", "--matrix", "128", "--fov", "256mm",
            "--bandwidth", "12.8kHz", "--quiet"]
    np.save(tmp_path / "fm.npy", np.full((128, 128), 100, np.float32))
    kd, _ = enc(tmp_path, "d", *base, "--df", "100Hz")
    km, j = enc(tmp_path, "m", *base, "--field-map", tmp_path / "fm.npy")
    assert j["protocol"]["field_map"] == "fm.npy"
    assert j["protocol"]["field_map_interp_error"] < 1e-6
    assert np.linalg.norm(km - kd) / np.linalg.norm(kd) < 0.01


def test_field_map_row_shifts_where_predicted(tmp_path):
    """Field varying along y only, f(row) = 100 Hz (row - 64)/64; readout
    along x at 100 Hz/pixel: each row moves by f/100 pixels along x. Measured
    by the first moment of (recon with the field - recon without) over a band
    of three rows, which for a pure shift d of the row profile p equals
    d * sum p (the reference is the reconstruction, not the rasterised truth,
    whose edges differ from the band-limited image by Gibbs ringing)."""
    n = 128
    rows = np.arange(n)
    f = (100.0 * (rows - n // 2) / (n // 2)).astype(np.float32)
    np.save(tmp_path / "fm.npy", np.repeat(f[:, None], n, 1))
    base = ["--phantom", "shepp-logan-modified", "--matrix", str(n), "--fov", "256mm",
            "--bandwidth", "100Hz/pixel", "--quiet"]
    k, j = enc(tmp_path, "g", *base, "--field-map", tmp_path / "fm.npy")
    k0, _ = enc(tmp_path, "g0", *base)
    img = recon(k.astype(complex)).real
    img0 = recon(k0.astype(complex)).real
    xs = np.arange(n)[None, :]
    for r in (15, 32, 50, 80, 96, 110):
        band = slice(r - 1, r + 2)
        d = np.sum(xs * (img[band] - img0[band])) / np.sum(img0[band])
        want = f[r] / 100.0
        assert d == pytest.approx(want, abs=0.03), (r, d, want)


def test_bad_field_map(tmp_path):
    out = tmp_path / "ks.npy"
    fm = np.zeros((32, 32), np.float32)
    fm[5, 5] = np.nan
    np.save(tmp_path / "nan.npy", fm)
    bad(*BASE, "--out", out, "--field-map", tmp_path / "nan.npy", field="field-map")
    np.save(tmp_path / "shape.npy", np.zeros((16, 32), np.float32))
    bad(*BASE, "--out", out, "--field-map", tmp_path / "shape.npy", field="field-map")
    assert not out.exists()


def weave3d_shapes():
    """weave3d as documented (docs/simulator.md): (kind, a, b, c, cz, weight
    with PD contrast = own PD - parent PD)."""
    body = [("ell", 0.90, 0.85, 0.90, 0.0, 0.72)]
    vials = [("ell", 0.14, 0.14, 0.45, 0.0, pd - 0.72) for pd in (0.69, 0.80, 1.00, 0.70, 0.85, 0.90)]
    bars = [("box", h, 0.12, 0.3, 0.0, 1.0 - 0.72) for h in (0.02, 0.014, 0.01, 0.007) for _ in range(3)]
    return body + vials + bars


def slab_area(shape, z0, z1):
    """Mean cut area (phantom units^2) over z in [z0, z1]: an ellipsoid's cut
    at height z has area pi a b (1 - (z/c)^2) inside |z| < c (integrated in
    closed form); a box's is 4 a b inside |z| <= c."""
    kind, a, b, c, cz, _ = shape
    lo, hi = max(z0, cz - c), min(z1, cz + c)
    if hi <= lo:
        return 0.0
    if kind == "box":
        return 4 * a * b * (hi - lo) / (z1 - z0)
    F = lambda z: z - (z - cz) ** 3 / (3 * c * c)
    return np.pi * a * b * (F(hi) - F(lo)) / (z1 - z0)


@pytest.mark.parametrize("gap_mm,which,tol", [(None, 0, 1e-6), ("88mm", 1, 1e-3)])
def test_multislice_slab_average(tmp_path, gap_mm, which, tol):
    """The DC sample of a slice is sqrt(nx ny) times the integral of its
    slab-averaged image: sum over shapes of weight x mean cut area / 4 (FOV
    units). A 20 mm slice at the centre cuts every shape over a polynomial
    stretch (Gauss-Legendre with 8 points is exact); the slice at 54 mm ends
    inside the vials (z extent 0.45 x 120 mm = 54 mm), where the quadrature
    is approximate (seen: 3e-5; tested within 1e-3)."""
    n, fovz = 32, 0.240
    args = ["--phantom", "weave3d", "--matrix", str(n), "--fov", "240mm", "--slices",
            "1" if gap_mm is None else "2", "--slice-thickness", "20mm", "--quiet"]
    if gap_mm:
        args += ["--slice-gap", gap_mm]
    k, j = enc(tmp_path, "s", *args)
    zc = j["slices"]["centres_m"][which]
    z0, z1 = (zc - 0.010) / (fovz / 2), (zc + 0.010) / (fovz / 2)
    want = n * sum(s[5] * slab_area(s, z0, z1) / 4 for s in weave3d_shapes())
    got = k[which, n // 2, n // 2].real
    assert got == pytest.approx(want, rel=tol), (got, want)


@pytest.mark.parametrize("extra,field", [
    (["--slices", "3"], "slices"),                                  # 2-D phantom
])
def test_bad_slices_2d(tmp_path, extra, field):
    bad(*BASE, "--out", tmp_path / "k.npy", "--slice-thickness", "5mm", *extra, field=field)


@pytest.mark.parametrize("extra,field", [
    (["--slices", "0", "--slice-thickness", "5mm"], "slices"),
    (["--slices", "2"], "slice-thickness"),
    (["--slices", "2", "--slice-thickness", "0mm"], "slice-thickness"),
    (["--slice-thickness", "5mm"], "slices"),
    (["--slices", "2", "--slice-thickness", "5mm", "--slice-points", "0"], "slice-points"),
])
def test_bad_slices(tmp_path, extra, field):
    bad("encode", "--phantom", "weave3d", "--matrix", "32", "--fov", "200mm", "--out",
        tmp_path / "k.npy", *extra, field=field)


def epi_times(n, esp, dwell, te):
    """Flyback EPI sample times (s) for an (n, n) Cartesian grid: row r is
    read at TE + (r - n/2) esp, column c at + (c - n/2) dwell within the row,
    so the k-space centre is at TE."""
    r, c = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    return (te + (r - n // 2) * esp + (c - n // 2) * dwell).astype(np.float32)


@pytest.mark.parametrize("how", ["df", "field-map"])
def test_epi_distortion_where_the_planner_says(tmp_path, how):
    """EPI: an off-resonance df moves the image along the phase-encode axis by
    df x echo spacing x ny pixels (the planner's distortion_pixels_per_hz).
    Times from the planner's echo spacing for a 64 x 64 EPI at 100 kHz;
    df = 40 Hz; measured by the first moment along the rows of (recon with df
    - recon without), for the uniform offset (--df, exact) and the same
    offset given as a field map (time-segmented, per-sample times)."""
    n = 64
    p = run("plan", "--sequence", "epi", "--fov", "240mm", "--matrix", str(n), "--bandwidth",
            "100kHz", "--b0", "3T", "--json", tmp_path / "plan.json")
    plan = json.load(open(tmp_path / "plan.json"))
    esp, per_hz = plan["echo_spacing_s"], plan["distortion_pixels_per_hz"]
    assert per_hz == pytest.approx(esp * n, rel=1e-6)
    te = 0.03
    np.save(tmp_path / "t.npy", epi_times(n, esp, 1 / 100e3, te))
    base = ["--phantom", "shepp-logan-modified", "--matrix", str(n), "--fov", "240mm",
            "--times", tmp_path / "t.npy", "--te", "30ms", "--quiet"]
    k0, _ = enc(tmp_path, "e0", *base)
    if how == "df":
        k1, _ = enc(tmp_path, "e1", *base, "--df", "40Hz")
        # sample by sample the exact phase exp(-i 2 pi df (t - TE))
        t = epi_times(n, esp, 1 / 100e3, te).astype(float)
        ref = k0 * np.exp(-2j * np.pi * 40 * (t - te))
        assert np.max(np.abs(k1 - ref)) <= 1e-5 * np.max(np.abs(k0))
    else:
        np.save(tmp_path / "fm.npy", np.full((n, n), 40, np.float32))
        k1, _ = enc(tmp_path, "e1", *base, "--field-map", tmp_path / "fm.npy")
    i0 = recon(k0.astype(complex)).real
    i1 = recon(k1.astype(complex))
    assert np.linalg.norm(i1.imag) < 0.02 * np.linalg.norm(i0)
    ys = np.arange(n)[:, None]
    d = np.sum(ys * (i1.real - i0)) / np.sum(i0)
    assert d == pytest.approx(40 * per_hz, abs=0.05), (d, 40 * per_hz)


def test_protocol_file_gives_the_planners_timing(tmp_path):
    """--protocol reads a `kweave plan` protocol file: TE/TR from the file,
    the planner's minimum TE (the same number `kweave plan` reports) as the
    floor: a shorter TE is refused."""
    prot = "samples/weave-gre.protocol"
    run("plan", "--protocol", prot, "--json", tmp_path / "plan.json")
    plan = json.load(open(tmp_path / "plan.json"))
    k, j = enc(tmp_path, "p", "--phantom", "weave", "--protocol", prot, "--flip", "15", "--quiet")
    assert k.shape == (256, 256)
    assert j["protocol"]["te_s"] == pytest.approx(0.005)
    assert j["protocol"]["tr_s"] == pytest.approx(0.012)
    assert j["protocol"]["min_te_s"] == pytest.approx(plan["min_te_s"])
    assert j["protocol"]["bandwidth_per_pixel_hz"] == pytest.approx(250)
    assert j["fov_m"] == pytest.approx([0.256, 0.256])
    bad("encode", "--phantom", "weave", "--protocol", prot, "--flip", "15", "--te", "1ms",
        "--out", tmp_path / "x.npy", field="te")
    bad("encode", "--phantom", "weave", "--protocol", tmp_path / "none.protocol", "--out",
        tmp_path / "x.npy", field="protocol")


def test_epi_protocol_distortion(tmp_path):
    """An EPI protocol (full Fourier) gets the planner's echo train as sample
    times: row r at TE + (r - ny/2) esp, read forwards on even (r - ny/2) and
    backwards on odd, dwell 1/BW, with `kweave plan`'s echo spacing for the
    same file. Checked sample by sample: an off-resonance of 20 Hz multiplies
    each sample by exp(-i 2 pi 20 Hz (t - TE)); the resulting distortion along
    y, 20 x esp x ny pixels, is the planner's distortion_pixels_per_hz (the
    image shift itself is measured in test_epi_distortion_where_the_planner_says)."""
    prot = tmp_path / "epi.protocol"
    prot.write_text("sequence = epi\nb0 = 3T\ngmax = 40mT/m\nslew = 200T/m/s\nfov = 240mm\n"
                    "matrix = 64\nbandwidth = 2000Hz/pixel\nslice = 3mm\nshots = 1\n")
    run("plan", "--protocol", prot, "--json", tmp_path / "plan.json")
    plan = json.load(open(tmp_path / "plan.json"))
    base = ["--phantom", "shepp-logan-modified", "--protocol", prot, "--sequence", "pd", "--quiet"]
    k0, j = enc(tmp_path, "a", *base)
    k1, _ = enc(tmp_path, "b", *base, "--df", "20Hz")
    n, esp, dwell = 64, plan["echo_spacing_s"], plan["dwell_s"]
    assert j["protocol"]["distortion_pixels_per_hz"] == pytest.approx(plan["distortion_pixels_per_hz"])
    assert plan["distortion_pixels_per_hz"] == pytest.approx(n * esp)
    te = j["protocol"]["te_s"]
    assert te >= plan["min_te_s"] - 1e-12
    e = np.arange(n)[:, None] - n // 2
    c = np.arange(n)[None, :] - n // 2
    t = te + e * esp + np.where(e % 2 == 0, 1, -1) * c * dwell
    ref = k0 * np.exp(-2j * np.pi * 20 * (t - te))
    assert np.max(np.abs(k1 - ref)) <= 1e-5 * np.max(np.abs(k0))


def test_partial_fourier_epi_protocol(tmp_path):
    """A partial-Fourier EPI protocol (f = 0.625 of 64 rows): the train holds
    the last ceil(0.625 x 64) = 40 rows (kw_epi_design's order: the first 24
    rows, negative ky, are not acquired and stored as zeros); row r on train
    line m = r - 24, forwards on even m; each acquired sample carries
    exp(-i 2 pi df (t - TE)) with t = TE + (r - 32) esp +- (c - 32) dwell (the
    planner's effective TE, echo spacing and dwell; numpy). The homodyne
    reconstruction of the noise-free data recovers the full-Fourier image
    (Noll, Nishimura & Macovski 1991: exact for a real object up to the
    transition band; here within 4% NRMSE) and the y-distortion of 20 Hz is
    the planner's 20 x distortion_pixels_per_hz (from the phase ramp along
    ky)."""
    base_prot = ("sequence = epi\nb0 = 3T\ngmax = 40mT/m\nslew = 200T/m/s\nfov = 240mm\n"
                 "matrix = 64\nbandwidth = 2000Hz/pixel\nslice = 3mm\nshots = 1\n")
    prot = tmp_path / "pf.protocol"
    prot.write_text(base_prot + "partial-fourier = 0.625\n")
    full = tmp_path / "full.protocol"
    full.write_text(base_prot)
    run("plan", "--protocol", prot, "--json", tmp_path / "plan.json")
    plan = json.load(open(tmp_path / "plan.json"))
    assert plan["echo_train_length"] == 40
    base = ["--phantom", "shepp-logan-modified", "--protocol", prot, "--sequence", "pd", "--quiet"]
    k0, j = enc(tmp_path, "a", *base)
    k1, _ = enc(tmp_path, "b", *base, "--df", "20Hz")
    n, esp, dwell = 64, plan["echo_spacing_s"], plan["dwell_s"]
    te = j["protocol"]["te_s"]
    assert te == pytest.approx(plan["te_s"]) and te >= plan["min_te_s"] - 1e-12
    assert j["protocol"]["first_row"] == 24 and j["protocol"]["rows_acquired"] == 40
    assert j["acceleration"] == pytest.approx(64 / 40)
    assert np.all(k0[:24] == 0) and np.all(k1[:24] == 0) and np.all(np.abs(k0[24:]).sum(1) > 0)
    r = np.arange(n)[:, None]
    c = np.arange(n)[None, :] - n // 2
    fwd = (r - 24) % 2 == 0
    t = te + (r - n // 2) * esp + np.where(fwd, 1, -1) * c * dwell
    ref = k0 * np.exp(-2j * np.pi * 20 * (t - te))
    assert np.max(np.abs(k1 - ref)) <= 1e-5 * np.max(np.abs(k0))
    # the reconstruction: homodyne against the same protocol at full Fourier
    kf, _ = enc(tmp_path, "f", "--phantom", "shepp-logan-modified", "--protocol", full,
                "--sequence", "pd", "--quiet")
    imf = np.abs(recon(kf.astype(complex)))
    run("recon", "--in", tmp_path / "a.npy", "--method", "homodyne", "--out", tmp_path / "h.npy",
        "--quiet")
    imh = np.abs(np.load(tmp_path / "h.npy"))
    # measured 0.022 (zero-filled: 0.21)
    assert np.linalg.norm(imh - imf) / np.linalg.norm(imf) < 0.04
    # the y-distortion: along the kx = 0 column the phase ramp is
    # exp(-i 2 pi 20 Hz (r - 32) esp), by the Fourier shift theorem a shift
    # of 20 x esp x 64 pixels, the planner's distortion_pixels_per_hz x 20
    # (an image-moment measure would see the N/2 ghost of the alternating
    # readouts as well)
    ramp = k1[24:, n // 2] / k0[24:, n // 2]
    slope = np.polyfit(np.arange(24, n) - n // 2, np.unwrap(np.angle(ramp)), 1)[0]
    d = -slope / (2 * np.pi) * n
    assert d == pytest.approx(20 * plan["distortion_pixels_per_hz"], rel=1e-4), d

"""Partial Fourier in `kweave recon`: homodyne (Noll, Nishimura & Macovski
1991, IEEE TMI 10:154) and POCS (Haacke, Lindskog & Lin 1991, JMR 92:126)
against zero filling, on a real-valued object with a smooth phase."""
import json

import numpy as np
import pytest

from conftest import run
from test_recon_cart import fft2c, grid, ifft2c, save, smooth_object


def nrmse(a, b):
    return float(np.linalg.norm(np.abs(a) - np.abs(b)) / np.linalg.norm(np.abs(b)))


@pytest.mark.parametrize("axis,frac", [(0, 0.625), (1, 0.625), (0, 0.75)])
def test_homodyne_and_pocs_beat_zero_filling(tmp_path, axis, frac, capsys):
    n = 96
    x, y = grid(n)
    rho = smooth_object(n, blur=None)  # sharp edges: high frequencies matter
    img = rho * np.exp(1j * (0.6 * x + 0.4 * y ** 2 + 0.3))  # smooth phase
    k = fft2c(img)
    cut = int(round(n * (1 - frac)))
    if axis == 0:
        k[:cut, :] = 0  # phase encode: the first lines not acquired
    else:
        k[:, :cut] = 0  # readout: an asymmetric echo
    save(tmp_path / "k.npy", k)
    scores = {}
    for m in ("fft", "homodyne", "pocs"):
        run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / f"{m}.npy", "--method", m,
            "--json", tmp_path / f"{m}.json")
        scores[m] = nrmse(np.load(tmp_path / f"{m}.npy"), rho)
    with capsys.disabled():
        print(f"\npartial Fourier axis {axis} fraction {frac}: NRMSE " +
              ", ".join(f"{m} {v:.4f}" for m, v in scores.items()))
    assert scores["homodyne"] < scores["fft"] and scores["pocs"] < scores["fft"]
    assert scores["pocs"] < 0.5 * scores["fft"]
    rep = json.loads((tmp_path / "homodyne.json").read_text())
    assert rep["sampling"]["partial_fourier"] is True
    assert abs(rep["partial_fourier_fraction"][axis] - (n - cut) / n) < 1e-12


def band_limited(obj_fine, n):
    """The full-Fourier image of an object rasterised 8x finer: the central
    n x n of its k-space (Nyquist row and column left out, so that a real
    object stays exactly real), as analytic k-space would give it, Gibbs
    lobes and all."""
    N = obj_fine.shape[0]
    K = fft2c(obj_fine)
    c = N // 2
    Kc = K[c - n // 2:c + n // 2, c - n // 2:c + n // 2].copy()
    Kc[0, :] = 0
    Kc[:, 0] = 0
    return ifft2c(Kc) * (n / N)


def modified_shepp_logan(n):
    """Modified Shepp-Logan (Toft 1996, table of ellipses), rasterised."""
    E = [(1, .69, .92, 0, 0, 0), (-.8, .6624, .874, 0, -.0184, 0), (-.2, .11, .31, .22, 0, -18),
         (-.2, .16, .41, -.22, 0, 18), (.1, .21, .25, 0, .35, 0), (.1, .046, .046, 0, .1, 0),
         (.1, .046, .046, 0, -.1, 0), (.1, .046, .023, -.08, -.605, 0),
         (.1, .023, .023, 0, -.606, 0), (.1, .023, .046, .06, -.605, 0)]
    x, y = grid(n)
    o = np.zeros((n, n))
    for a_, a, b, x0, y0, t in E:
        t = np.deg2rad(t)
        xr = (x - x0) * np.cos(t) + (y - y0) * np.sin(t)
        yr = -(x - x0) * np.sin(t) + (y - y0) * np.cos(t)
        o += a_ * ((xr / a) ** 2 + (yr / b) ** 2 <= 1)
    return o


def pocs_errors(tmp_path, full, its):
    """Complex NRMSE of `recon --method pocs --complex` against the full-
    Fourier image, fraction 0.625 along the phase-encode axis."""
    n = full.shape[0]
    k = fft2c(full)
    k[:int(round(n * 0.375)), :] = 0
    save(tmp_path / "k.npy", k)
    errs = []
    for it in its:
        run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "p.npy", "--method", "pocs",
            "--complex", "--iterations", it, "--stop", "1e-12")
        x = np.load(tmp_path / "p.npy")
        errs.append(float(np.linalg.norm(x - full) / np.linalg.norm(full)))
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "h.npy", "--method", "homodyne",
        "--complex")
    hd = float(np.linalg.norm(np.load(tmp_path / "h.npy") - full) / np.linalg.norm(full))
    return errs, hd


ITS = (1, 2, 5, 10, 20, 50, 100, 200)


@pytest.mark.parametrize("name", ["shepp-logan", "edges"])
def test_pocs_error_never_rises_on_real_objects(tmp_path, name, capsys):
    """POCS converges: both sets (images with the estimated phase, images
    that agree with the data) are closed and convex and contain the true
    image when the object is real (the low-resolution phase of a real object
    is exactly 0 or pi), so the distance to it never grows (Fejer
    monotonicity of alternating projections: Youla & Webb 1982, IEEE TMI
    1:81). Band-limited objects, as analytic k-space gives them: the Gibbs
    lobes that made the update |x| e^{i phi} diverge (issue 19: NRMSE 0.0238
    at 5 iterations, 0.0410 at 100 on the modified Shepp-Logan)."""
    n = 128
    fine = modified_shepp_logan(8 * n) if name == "shepp-logan" else smooth_object(8 * n, blur=None)
    full = band_limited(fine, n)
    errs, hd = pocs_errors(tmp_path, full, ITS)
    with capsys.disabled():
        print(f"\nPOCS complex NRMSE ({name}, real) at {ITS} iterations: " +
              ", ".join(f"{e:.2e}" for e in errs) + f"; homodyne {hd:.2e}")
    # Monotone down to the single-precision floor: the low-resolution phase
    # is computed in float, so where that image crosses zero its phase is
    # off by rounding and the true image is in the phase set only to
    # rounding; the floor depends on the FFT plan's rounding (seen: 2e-7 with
    # FFTW's estimated plans; with plans from a measured wisdom file 1.2e-4
    # at 20 iterations drifting to 3.5e-4 at 200, and homodyne 3e-4, as the
    # phase's rounding lets the image's imaginary part leak in where the
    # low-resolution image is near zero). Below FLOOR the error may wander.
    FLOOR = 1e-3
    for a, b in zip(errs, errs[1:]):
        assert b <= a * (1 + 1e-3) or max(a, b) < FLOOR, errs
    assert max(errs[4:]) < FLOOR and errs[-1] < 0.05 * errs[0]


def test_pocs_with_smooth_phase_against_homodyne(tmp_path, capsys):
    """A real object with a smooth phase (the check of issue 19): POCS and
    homodyne against full Fourier. With a phase that the low-resolution
    estimate only approximates, the true image is no longer in the phase
    set, so POCS settles a little above its best; measured here (numpy
    model of the same algorithm, then this command): modified Shepp-Logan
    band-limited, 0.0115 at 5, 0.0088 at 10, 0.0090 at 20, 0.0112 at 200; homodyne 0.0116
    (complex NRMSE; magnitudes 0.0062 at 20 against homodyne's 0.0087). The
    old update |x| e^{i phi} gave 0.0413 at 20 and 0.0494 at 200."""
    n = 128
    xf, yf = grid(8 * n)
    fine = modified_shepp_logan(8 * n) * np.exp(1j * (0.6 * xf + 0.4 * yf ** 2 + 0.3))
    full = band_limited(fine, n)
    errs, hd = pocs_errors(tmp_path, full, ITS)
    with capsys.disabled():
        print(f"\nPOCS complex NRMSE (Shepp-Logan, smooth phase) at {ITS} iterations: " +
              ", ".join(f"{e:.4f}" for e in errs) + f"; homodyne {hd:.4f}")
    # Falls to its best by 10 iterations (monotone to there), is within 5% of
    # it at the default 20, beats homodyne there, and stays within 30% of its
    # best to 200. Not monotone beyond its best: see the docstring.
    for a, b in zip(errs[:4], errs[1:4]):
        assert b <= a, errs
    assert errs[3] == min(errs) and errs[4] < 1.05 * errs[3], errs
    assert errs[4] < hd
    assert max(errs[4:]) < 1.3 * min(errs), errs

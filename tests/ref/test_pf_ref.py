"""Partial Fourier in `kweave recon`: homodyne (Noll, Nishimura & Macovski
1991, IEEE TMI 10:154) and POCS (Haacke, Lindskog & Lin 1991, JMR 92:126)
against zero filling, on a real-valued object with a smooth phase."""
import json

import numpy as np
import pytest

from conftest import run
from test_recon_cart import fft2c, grid, save, smooth_object


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

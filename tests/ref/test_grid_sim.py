"""Issue 7 on the simulator's data: gridding of a fully sampled radial
acquisition (ceil(pi/2 N) spokes, readout oversampled 2x) against the
simulator's truth, scored with scikit-image's SSIM (the reference metric;
Wang et al. 2004, Gaussian window sigma 1.5, data range of the truth).

Measured on this machine (noise-free weave, 240 mm, 8 coils, combined with
the simulated maps): at N = 256 gridding scores SSIM 0.9505 and the exact
Cartesian FFT 0.9594; at N = 128 gridding scores 0.931 and the exact
Cartesian FFT 0.947 (docs/noncartesian.md explains why no band-limited image
reaches 0.95 against the sharp-edged truth at 128). The check runs at 256.
"""
import json

import numpy as np
from skimage.metrics import structural_similarity

from conftest import run

N = 256


def ssim(ref, img):
    return structural_similarity(ref, img, gaussian_weights=True, sigma=1.5,
                                 use_sample_covariance=False,
                                 data_range=float(ref.max() - ref.min()))


def test_grid_full_radial_on_simulated_weave(tmp_path):
    d = tmp_path
    run("pattern", "--kind", "radial", "--matrix", str(N), "--readout-oversampling", "2",
        "--out", d / "rad.npy")
    traj = np.load(d / "rad.npy")
    assert traj.shape == (int(np.ceil(np.pi / 2 * N)) * 2 * N, 2)
    run("encode", "--phantom", "weave", "--matrix", str(N), "--fov", "240mm", "--coils", "8",
        "--trajectory", d / "rad.npy", "--out", d / "k.npy", "--truth", d / "t.npy",
        "--sens-out", d / "s.npy")
    run("recon", "--in", d / "k.npy", "--out", d / "g.npy", "--ref", d / "t.npy",
        "--json", d / "g.json")
    r = json.loads((d / "g.json").read_text())
    assert r["method"] == "grid" and r["dcf"] == "radial"
    truth, img = np.load(d / "t.npy"), np.abs(np.load(d / "g.npy"))
    s = ssim(truth, img)
    assert s >= 0.95, s
    assert abs(r["scores"]["ssim"] - s) < 1e-3

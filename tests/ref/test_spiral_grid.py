"""A spiral from `kweave pattern` (the planner's time-optimal design, Lustig,
Kim & Pauly 2008) goes through `kweave encode` and `kweave recon` (grid) and
lands inside the NUFFT's [-N/2, N/2) grid (regression: the design reaches
k-max = N/2 exactly). Reference: the simulator's truth (exact k-space of the
analytic phantom), scored by numpy; the bound is the measured 0.029 (2-D
gridding with Pipe-Menon weights, 128 x 128) with margin."""
import numpy as np

from conftest import run


def test_spiral_pattern_encodes_and_grids(tmp_path):
    run("pattern", "--kind", "spiral", "--matrix", "96", "--fov", "240mm", "--interleaves", "8",
        "--out", tmp_path / "sp.npy", "--quiet")
    k = np.load(tmp_path / "sp.npy")
    assert k.min() >= -48 and k.max() < 48
    assert np.hypot(k[:, 0], k[:, 1]).max() > 47.99  # still reaches k-max
    run("encode", "--phantom", "weave", "--matrix", "96", "--fov", "240mm", "--coils", "4",
        "--trajectory", tmp_path / "sp.npy", "--sens-out", tmp_path / "s.npy",
        "--truth", tmp_path / "t.npy", "--out", tmp_path / "ks.npy", "--quiet")
    run("recon", "--in", tmp_path / "ks.npy", "--out", tmp_path / "img.npy", "--quiet")
    img, t = np.load(tmp_path / "img.npy"), np.load(tmp_path / "t.npy")
    assert np.linalg.norm(img - t) / np.linalg.norm(t) < 0.06

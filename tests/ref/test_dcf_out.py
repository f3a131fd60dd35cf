"""`kweave recon --dcf-out` writes the density weights it used (issue 7:
density compensation "written as .npy"). Checks: the weights are one float32
per sample; for a radial acquisition they are k-space areas per sample in
(cycles/FOV)^2, so they sum to the area of the sampled disc, pi (N/2)^2
(plane geometry), within 2%; read back with --dcf FILE they reproduce the
same image; Cartesian data refuse the option."""
import numpy as np

from conftest import bad, run


def test_dcf_out_radial(tmp_path):
    n = 64
    run("pattern", "--kind", "radial", "--matrix", n, "--readout-oversampling", "2",
        "--out", tmp_path / "r.npy", "--quiet")
    run("encode", "--phantom", "weave", "--matrix", n, "--fov", "240mm",
        "--trajectory", tmp_path / "r.npy", "--out", tmp_path / "k.npy", "--quiet")
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "a.npy", "--dcf", "radial",
        "--dcf-out", tmp_path / "w.npy", "--quiet")
    w = np.load(tmp_path / "w.npy")
    traj = np.load(tmp_path / "r.npy")
    assert w.dtype == np.float32 and w.shape == (traj.shape[0],)
    assert (w >= 0).all()
    assert abs(w.sum() / (np.pi * (n / 2) ** 2) - 1) < 0.02
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "b.npy", "--dcf",
        tmp_path / "w.npy", "--quiet")
    np.testing.assert_allclose(np.load(tmp_path / "b.npy"), np.load(tmp_path / "a.npy"), rtol=1e-5,
                               atol=1e-6)


def test_dcf_out_refused_for_cartesian(tmp_path):
    run("encode", "--phantom", "weave", "--matrix", "32", "--fov", "240mm",
        "--out", tmp_path / "k.npy", "--quiet")
    bad("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "a.npy", "--dcf-out",
        tmp_path / "w.npy", field="dcf-out")
    assert not (tmp_path / "w.npy").exists()

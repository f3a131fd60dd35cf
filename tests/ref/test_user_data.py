"""A user's own data in, honest defaults out (issue 16): each case a new user
met is a test named after it. The scores are against the simulation's truth
(kweave encode --truth), whose coil maps the sidecar names."""
import json

import numpy as np
import pytest

from conftest import run

SCENE = ["--phantom", "weave", "--matrix", "64", "--fov", "256mm", "--coils", "4", "--snr", "40",
         "--seed", "1"]


def nrmse(img, ref):
    return float(np.linalg.norm(np.abs(img) - ref) / np.linalg.norm(ref))


@pytest.fixture(scope="module")
def data(tmp_path_factory):
    d = tmp_path_factory.mktemp("userdata")
    run("pattern", "--kind", "uniform", "--matrix", "64x64", "--accel", "4", "--acs", "12",
        "--out", d / "u.npy")
    run("pattern", "--kind", "poisson", "--matrix", "64x64", "--accel", "4", "--acs", "12",
        "--seed", "0", "--out", d / "p.npy")
    run("encode", *SCENE, "--pattern", d / "u.npy", "--out", d / "u4.npy", "--sens-out",
        d / "maps.npy", "--truth", d / "truth.npy")
    run("encode", *SCENE, "--pattern", d / "p.npy", "--out", d / "p4.npy")
    run("encode", *SCENE, "--out", d / "full.npy")
    return d


def recon(d, *args):
    p = run("recon", *args, "--json", d / "r.json")
    return p, json.loads((d / "r.json").read_text())


def test_uniform_r4_with_sidecar_maps_combines_with_them_and_warns(data):
    p, rep = recon(data, "--in", data / "u4.npy", "--out", data / "o.npy")
    assert rep["combine"] == "optimal" and rep["sens_source"] == "file (sidecar)"
    assert p.stderr.count("kweave: warning:") == 1
    assert "uniformly undersampled" in p.stderr and "R = 4" in p.stderr
    for m in ("sense", "grappa", "cg-sense"):
        assert m in p.stderr
    assert rep["sampling"]["advice"] in p.stderr


def test_grappa_default_combination_uses_the_sidecar_maps(data):
    truth = np.load(data / "truth.npy")
    _, rep = recon(data, "--in", data / "u4.npy", "--method", "grappa", "--out", data / "g.npy")
    assert rep["combine"] == "optimal"
    default = nrmse(np.load(data / "g.npy"), truth)
    recon(data, "--in", data / "u4.npy", "--method", "grappa", "--combine", "rss", "--out", data / "g2.npy")
    rss = nrmse(np.load(data / "g2.npy"), truth)
    # root-sum-of-squares keeps the coil profile (0.99 here); the maps remove it
    assert default < 0.25 and rss > 0.5, (default, rss)
    _, rep = recon(data, "--in", data / "u4.npy", "--method", "sense", "--out", data / "s.npy")
    assert rep["sens_source"] == "file (sidecar)"


def test_poisson_disc_r4_report_states_effective_r_and_no_partial_fourier(data):
    p, rep = recon(data, "--in", data / "p4.npy", "--out", data / "o.npy")
    s = rep["sampling"]
    assert s["uniform"] is False and s["partial_fourier"] is False
    assert s["sampled_fraction"] == pytest.approx(0.25, abs=0.02)
    assert s["effective_acceleration"] == pytest.approx(1 / s["sampled_fraction"])
    assert s["acceleration"] == round(1 / s["sampled_fraction"], 2)
    assert "irregularly undersampled" in p.stderr
    for m in ("cg-sense", "cs-wavelet", "cs-tv"):
        assert m in s["advice"]


def test_poisson_disc_with_partial_fourier_is_still_seen(tmp_path):
    run("pattern", "--kind", "poisson", "--matrix", "128x128", "--accel", "4", "--acs", "16",
        "--fraction", "0.75", "--out", tmp_path / "m.npy")
    run("encode", "--phantom", "weave", "--matrix", "128", "--fov", "256mm", "--pattern",
        tmp_path / "m.npy", "--out", tmp_path / "k.npy")
    _, rep = recon(tmp_path, "--in", tmp_path / "k.npy", "--out", tmp_path / "o.npy")
    assert rep["sampling"]["partial_fourier"] is True


def test_sense_and_grappa_refuse_irregular_masks_naming_what_suits(data):
    for m in ("sense", "grappa"):
        p = run("recon", "--in", data / "p4.npy", "--method", m, "--out", data / "x.npy", check=False)
        assert p.returncode == 2
        assert p.stderr.startswith("kweave: error: ")
        assert "cg-sense" in p.stderr, p.stderr


def test_fully_sampled_fft_gives_no_warning(data):
    p, rep = recon(data, "--in", data / "full.npy", "--out", data / "o.npy")
    assert "warning" not in p.stderr and "advice" not in rep["sampling"]


def test_optimal_without_maps_estimates_them_and_says_so(data):
    p, rep = recon(data, "--in", data / "full.npy", "--combine", "optimal", "--out", data / "o.npy")
    assert rep["combine"] == "optimal"
    assert rep["sens_source"].startswith("estimated")


def test_combined_images_keep_their_phase_with_complex(data):
    """--complex: the combined image as complex64; its magnitude is the float
    image of the same run, bit for bit, and the phase is the object's (the
    simulated object is real: the signal-weighted mean phase is about 0; the
    pixel phases scatter with the noise, SNR 40 at R = 4)."""
    truth = np.load(data / "truth.npy")
    for args in (["--combine", "optimal"], ["--method", "sense"], ["--method", "cg-sense"]):
        run("recon", "--in", data / "u4.npy", *args, "--out", data / "m.npy")
        run("recon", "--in", data / "u4.npy", *args, "--complex", "--out", data / "c.npy")
        m, c = np.load(data / "m.npy"), np.load(data / "c.npy")
        assert c.dtype == np.complex64 and c.shape == m.shape
        assert np.array_equal(np.abs(c), m), args
        obj = truth > 0.5 * truth.max()
        if args[1] != "optimal":   # zero-filled fft aliases; the unfolded images do not
            assert abs(np.angle(np.sum(c[obj]))) < 0.02, args


def test_complex_refuses_root_sum_of_squares_and_keep_coils(data):
    p = run("recon", "--in", data / "full.npy", "--complex", "--out", data / "x.npy", check=False)
    assert p.returncode == 2 and "root-sum-of-squares has no phase" in p.stderr
    p = run("recon", "--in", data / "full.npy", "--complex", "--keep-coils", "--out", data / "x.npy",
            check=False)
    assert p.returncode == 2 and "keep_coils" in p.stderr

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


# ---- data from elsewhere: the options that stand in for a sidecar ----------
# Reference: the same data with kweave's own sidecar; the images must be the
# same bytes (one FFTW wisdom file per directory: docs/reliability.md).

def wrun(d, *args, check=True):
    import os
    import subprocess
    from conftest import KWEAVE
    env = dict(os.environ, KWEAVE_WISDOM=str(d / "wisdom"), OMP_NUM_THREADS="1")
    p = subprocess.run([KWEAVE, *map(str, args)], capture_output=True, text=True, env=env, timeout=300)
    if check and p.returncode != 0:
        raise AssertionError(f"kweave {' '.join(map(str, args))} exited {p.returncode}: {p.stderr}")
    return p


@pytest.fixture(scope="module")
def bare(data, tmp_path_factory):
    """u4.npy copied where no sidecar lies beside it."""
    d = tmp_path_factory.mktemp("bare")
    np.save(d / "u4.npy", np.load(data / "u4.npy"))
    wrun(d, "recon", "--in", data / "u4.npy", "--out", d / "warm.npy")
    return d


@pytest.mark.parametrize("method", ["sense", "grappa", "fft"])
def test_recon_without_sidecar_uses_fov_option(data, bare, method):
    side = json.loads((data / "u4.json").read_text())
    a = bare / f"side_{method}.npy"
    b = bare / f"opts_{method}.npy"
    wrun(bare, "recon", "--in", data / "u4.npy", "--method", method, "--out", a)
    wrun(bare, "recon", "--in", bare / "u4.npy", "--method", method, "--out", b, "--fov", "256mm",
         "--accel", "4", "--acs", side["acs_lines"], "--sens", data / "maps.npy")
    assert a.read_bytes() == b.read_bytes()
    # the FOV reaches the geometry of what is written: NIfTI's voxel sizes
    wrun(bare, "recon", "--in", bare / "u4.npy", "--out", bare / "v.nii", "--fov", "256mm")
    import nibabel
    assert nibabel.load(str(bare / "v.nii")).header.get_zooms()[:2] == pytest.approx((4.0, 4.0))


def test_axes_option_equals_transposed_array(data, bare):
    k = np.load(data / "u4.npy")  # (coils, ny, nx)
    np.save(bare / "yxc.npy", np.ascontiguousarray(k.transpose(1, 2, 0)))
    wrun(bare, "recon", "--in", data / "u4.npy", "--method", "sense", "--out", bare / "a.npy")
    wrun(bare, "recon", "--in", bare / "yxc.npy", "--axes", "ny,nx,coils", "--method", "sense",
         "--sens", data / "maps.npy", "--accel", "4", "--out", bare / "b.npy")
    assert (bare / "a.npy").read_bytes() == (bare / "b.npy").read_bytes()
    # one coil stored (nx, ny): the coil axis is made
    np.save(bare / "xy.npy", np.ascontiguousarray(k[0].T))
    np.save(bare / "c0.npy", np.ascontiguousarray(k[0]))
    wrun(bare, "recon", "--in", bare / "xy.npy", "--axes", "nx,ny", "--out", bare / "xy_img.npy")
    wrun(bare, "recon", "--in", bare / "c0.npy", "--out", bare / "c0_img.npy")
    assert (bare / "xy_img.npy").read_bytes() == (bare / "c0_img.npy").read_bytes()


def test_options_override_the_sidecar_and_say_so(data, bare):
    p = wrun(bare, "recon", "--in", data / "u4.npy", "--out", bare / "o.npy", "--fov", "200mm")
    notes = [l for l in p.stderr.splitlines() if l.startswith("kweave: note:")]
    assert len(notes) == 1 and "--fov 200mm overrides the sidecar's fov_m" in notes[0]
    p = wrun(bare, "recon", "--in", data / "u4.npy", "--out", bare / "o.npy", "--fov", "256mm")
    assert "note" not in p.stderr  # the same value: nothing to say


def test_a_wrong_acceleration_claim_names_the_option(data, bare):
    from conftest import bad
    bad("recon", "--in", bare / "u4.npy", "--method", "sense", "--sens", data / "maps.npy", "--accel", "3",
        "--out", bare / "o.npy", field="accel")
    bad("recon", "--in", bare / "u4.npy", "--method", "grappa", "--acs", "40", "--out", bare / "o.npy",
        field="acs")


@pytest.mark.parametrize("args,field", [
    (["--fov", "256"], "fov"), (["--fov", "-2mm"], "fov"), (["--accel", "0x2"], "accel"),
    (["--accel", "2x2x2"], "accel"), (["--acs", "0"], "acs"), (["--axes", "ny,nx"], "axes"),
    (["--axes", "ny,nx,coil"], "axes"), (["--axes", "ny,ny,coils"], "axes"),
])
def test_bad_stand_in_options_exit_2_naming_them(bare, args, field):
    from conftest import bad
    bad("recon", "--in", bare / "u4.npy", "--out", bare / "bad.npy", *args, field=field)
    assert not (bare / "bad.npy").exists()


def test_estimated_maps_scale_is_explained_by_score(data, tmp_path):
    """Without a sidecar the maps are estimated and the image is in the scale of
    root-sum-of-squares: score says so, with the ratio, and --fit-scale removes it.
    Reference: the least-squares ratio <|B|,|A|> / <|A|,|A|> computed by numpy."""
    np.save(tmp_path / "full.npy", np.load(data / "full.npy"))
    run("recon", "--in", tmp_path / "full.npy", "--combine", "optimal", "--out", tmp_path / "e.npy")
    p = run("score", "--ref", data / "truth.npy", "--test", tmp_path / "e.npy", "--json", tmp_path / "s.json")
    notes = [l for l in p.stderr.splitlines() if l.startswith("kweave: note:")]
    assert len(notes) == 1 and "docs/cartesian.md" in notes[0] and "--fit-scale" in notes[0]
    s = json.loads((tmp_path / "s.json").read_text())
    assert list(s)[:5] == ["nrmse", "psnr_db", "ssim", "ref", "test"]  # the old keys first, in order
    A, B = np.abs(np.load(data / "truth.npy")).astype(float), np.abs(np.load(tmp_path / "e.npy")).astype(float)
    assert s["intensity_ratio"] == pytest.approx((A * B).sum() / (A * A).sum(), rel=1e-6)
    run("score", "--ref", data / "truth.npy", "--test", tmp_path / "e.npy", "--fit-scale",
        "--json", tmp_path / "f.json")
    f = json.loads((tmp_path / "f.json").read_text())
    assert f["scale_fitted"] is True and f["nrmse"] < s["nrmse"]
    p = run("score", "--ref", data / "truth.npy", "--test", data / "truth.npy")
    assert "note" not in p.stderr


def test_encode_and_pattern_read_hdf5(tmp_path):
    """Reference: the same arrays as .npy give the same bytes (h5py writes the HDF5)."""
    import h5py
    run("pattern", "--kind", "uniform", "--matrix", "32x32", "--accel", "2", "--acs", "8",
        "--out", tmp_path / "m.npy")
    m = np.load(tmp_path / "m.npy")
    with h5py.File(tmp_path / "in.h5", "w") as f:
        f["mask"] = m.astype(np.uint8)
    a = run("pattern", "--analyse", tmp_path / "m.npy")
    b = run("pattern", "--analyse", f"{tmp_path / 'in.h5'}:/mask")
    assert a.stdout.split("\n", 1)[1] == b.stdout.split("\n", 1)[1]  # all but the name line
    for name, src in [("npy", tmp_path / "m.npy"), ("h5", f"{tmp_path / 'in.h5'}:/mask")]:
        run("encode", "--phantom", "shepp-logan", "--matrix", "32", "--fov", "200mm", "--pattern", src,
            "--out", tmp_path / f"k_{name}.npy", "--quiet")
    assert (tmp_path / "k_npy.npy").read_bytes() == (tmp_path / "k_h5.npy").read_bytes()

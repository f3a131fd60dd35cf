"""`kweave encode` end to end (run by /usr/bin/python3): fully sampled,
noise-free k-space reconstructed with numpy's inverse FFT (the centered
unitary convention of docs/api.md) shows the published intensities of the
phantoms; noise has the documented level; bad input fails cleanly."""
import json
import os

import numpy as np
import pytest

from conftest import bad, run


def recon(k):
    ax = (-2, -1)
    return np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(k, axes=ax), axes=ax, norm="ortho"), axes=ax)


def region_mean(img, x, y, half=2):
    """Mean of the (2 half + 1)^2 pixels around phantom point (x, y) on the
    centered DFT grid: column N/2 + x N/2, row N/2 - y N/2."""
    ny, nx = img.shape
    c = nx // 2 + int(round(x * nx / 2))
    r = ny // 2 - int(round(y * ny / 2))
    return float(np.mean(img[r - half:r + half + 1, c - half:c + half + 1]))


# Published intensities. Shepp & Logan 1974, Table 1 (additive: skull 2,
# brain 2 - 0.98 = 1.02, ventricles 1.02 - 0.02 = 1.00, upper ellipse
# 1.02 + 0.01 = 1.03, small ellipse at (0, -0.1) 1.03); Toft 1996 modified set
# (skull 1, brain 0.2, ventricles 0, upper ellipse 0.3, small ellipse 0.3).
# Points: centre of the skull at the top (y between 0.8556 and 0.92), the
# brain below the centre, the ventricle centres, ellipse 5 and ellipse 7.
POINTS = [(0, 0.8878), (0, -0.35), (0.22, 0), (-0.22, 0), (0, 0.35), (0, -0.1)]
PUBLISHED = {
    "shepp-logan": [2.0, 1.02, 1.00, 1.00, 1.03, 1.03],
    "shepp-logan-modified": [1.0, 0.2, 0.0, 0.0, 0.3, 0.3],
}


@pytest.mark.parametrize("name", sorted(PUBLISHED))
def test_fully_sampled_reconstructs_published_intensities(tmp_path, name):
    ks, truth = tmp_path / "ks.npy", tmp_path / "t.npy"
    run("encode", "--phantom", name, "--matrix", "512", "--fov", "256mm", "--out", ks, "--truth", truth)
    k = np.load(ks)
    assert k.dtype == np.complex64 and k.shape == (512, 512)
    img = recon(k.astype(np.complex128))
    # a real object has Hermitian k-space, S(-k) = conj S(k), for every
    # paired sample (the row and column k = -N/2 have no partner)
    h = k[1:, 1:]
    assert np.max(np.abs(h - np.conj(h[::-1, ::-1]))) < 1e-5 * np.max(np.abs(h))
    top = max(PUBLISHED[name])
    for (x, y), want in zip(POINTS, PUBLISHED[name]):
        got = region_mean(img.real, x, y)
        # within 2% of the published value (2% of the largest intensity
        # where the published value is 0)
        tol = 0.02 * (abs(want) if want else top)
        assert abs(got - want) <= tol, (name, x, y, got, want)
    t = np.load(truth)
    assert t.dtype == np.float32 and t.shape == (512, 512)
    for (x, y), want in zip(POINTS, PUBLISHED[name]):
        assert abs(region_mean(t, x, y) - want) < 1e-6
    # the reconstruction equals the area-averaged truth away from edges:
    # overall relative difference is Gibbs ringing at the edges only
    assert np.linalg.norm(img.real - t) / np.linalg.norm(t) < 0.08


def test_weave_vials_show_proton_density(tmp_path):
    """Our phantom without a sequence is a proton-density image: each vial
    shows its tissue's PD (values of libencode/tissue.c)."""
    ks = tmp_path / "ks.npy"
    run("encode", "--phantom", "weave", "--matrix", "256", "--fov", "240mm", "--out", ks)
    img = recon(np.load(ks).astype(np.complex128)).real
    pd = {90: 0.69, 30: 0.80, -30: 1.00, -90: 0.70, -150: 0.85, 150: 0.90}
    for ang, want in pd.items():
        t = np.deg2rad(ang)
        got = region_mean(img, 0.55 * np.cos(t), 0.55 * np.sin(t), half=4)
        assert abs(got - want) <= 0.02 * want, (ang, got, want)
    assert abs(region_mean(img, 0, -0.35, half=3) - 0.72) <= 0.02 * 0.72  # muscle body


def test_sidecar_keys(tmp_path):
    ks = tmp_path / "a.npy"
    run("encode", "--phantom", "shepp-logan", "--matrix", "64x48", "--fov", "200mm,150mm",
        "--out", ks, "--snr", "20", "--seed", "5")
    assert np.load(ks).shape == (48, 64)
    j = json.load(open(tmp_path / "a.json"))
    for key in ["kweave_version", "kind", "layout", "shape", "matrix", "fov_m", "phantom", "coils",
                "snr", "noise_sigma", "seed", "scale", "trajectory", "sens", "noise_cov", "pattern",
                "acceleration", "acs_lines", "protocol"]:
        assert key in j, key
    assert j["kind"] == "kspace" and j["layout"] == "cartesian" and j["scale"] == "unitary"
    assert j["shape"] == [48, 64] and j["matrix"] == [64, 48]
    assert j["fov_m"] == pytest.approx([0.2, 0.15])
    assert j["snr"] == 20 and j["seed"] == 5 and j["noise_sigma"] > 0
    assert j["noise_cov"] is None     # one channel: noise_sigma says it all


def test_noise_level_and_seed(tmp_path):
    """SNR = mean |truth| over the object (pixels >= 10% of max) / sigma, sigma
    the complex noise standard deviation per pixel (E|n|^2 = sigma^2). The
    noise (noisy - clean) in the image has that standard deviation: with
    16384 complex samples (128 x 128) the relative standard error of the
    estimated sigma is 1/sqrt(2 x 16384) = 0.55%, of each part's 0.55% x
    sqrt(2) = 0.8%; tested within 2% and 3% (more than 3.5 standard errors)."""
    a, b, c, d = (tmp_path / f"{s}.npy" for s in "abcd")
    args = ["--phantom", "shepp-logan-modified", "--matrix", "128", "--fov", "256mm"]
    run("encode", *args, "--out", a, "--truth", tmp_path / "t.npy")
    run("encode", *args, "--out", b, "--snr", "25", "--seed", "3")
    run("encode", *args, "--out", c, "--snr", "25", "--seed", "3")
    run("encode", *args, "--out", d, "--snr", "25", "--seed", "4")
    ka, kb, kc, kd = (np.load(p) for p in (a, b, c, d))
    assert np.array_equal(kb, kc)            # same seed, same data
    assert not np.array_equal(kb, kd)        # another seed, other noise
    t = np.load(tmp_path / "t.npy")
    obj = np.abs(t)[np.abs(t) >= 0.1 * np.abs(t).max()].mean()
    sigma = json.load(open(tmp_path / "b.json"))["noise_sigma"]
    assert sigma == pytest.approx(obj / 25, rel=1e-6)
    n = recon((kb - ka).astype(np.complex128))
    est = np.sqrt(np.mean(np.abs(n) ** 2))
    assert est == pytest.approx(sigma, rel=0.02)
    # real and imaginary parts each carry half the variance
    assert np.std(n.real) == pytest.approx(sigma / np.sqrt(2), rel=0.03)
    assert np.std(n.imag) == pytest.approx(sigma / np.sqrt(2), rel=0.03)


BASE = ["encode", "--phantom", "weave", "--matrix", "32", "--fov", "200mm"]


@pytest.mark.parametrize("args,field", [
    (["--phantom", "brain", "--matrix", "32", "--fov", "200mm"], "phantom"),
    (["--matrix", "32", "--fov", "200mm"], "phantom"),
    (["--phantom", "weave", "--matrix", "0", "--fov", "200mm"], "matrix"),
    (["--phantom", "weave", "--matrix", "-8", "--fov", "200mm"], "matrix"),
    (["--phantom", "weave", "--matrix", "32xq", "--fov", "200mm"], "matrix"),
    (["--phantom", "weave", "--matrix", "nan", "--fov", "200mm"], "matrix"),
    (["--phantom", "weave", "--fov", "200mm"], "matrix"),
    (["--phantom", "weave", "--matrix", "32", "--fov", "0mm"], "fov"),
    (["--phantom", "weave", "--matrix", "32", "--fov", "-20mm"], "fov"),
    (["--phantom", "weave", "--matrix", "32", "--fov", "nanmm"], "fov"),
    (["--phantom", "weave", "--matrix", "32", "--fov", "200"], "fov"),
    (["--phantom", "weave", "--matrix", "32"], "fov"),
])
def test_bad_input(tmp_path, args, field):
    out = tmp_path / "ks.npy"
    bad("encode", *args, "--out", out, field=field)
    assert not out.exists()


@pytest.mark.parametrize("extra,field", [
    (["--snr", "0"], "snr"), (["--snr", "-3"], "snr"), (["--snr", "nan"], "snr"),
    (["--snr", "inf"], "snr"), (["--seed", "-1"], "seed"), (["--seed", "x"], "seed"),
])
def test_bad_noise(tmp_path, extra, field):
    out = tmp_path / "ks.npy"
    bad(*BASE, "--out", out, *extra, field=field)
    assert not out.exists()


def test_missing_out_and_unwritable(tmp_path):
    bad(*BASE, field="out")
    out = tmp_path / "nodir" / "ks.npy"
    bad(*BASE, "--out", out, field="out")
    assert not out.exists() and not (tmp_path / "nodir").exists()
    # a truth file that cannot be written leaves no k-space either
    ks = tmp_path / "ks.npy"
    bad(*BASE, "--out", ks, "--truth", tmp_path / "nodir" / "t.npy", field="truth")
    assert not ks.exists()


def test_protocol_without_bandwidth_is_timed_as_plan_times_it(tmp_path):
    """A protocol file with no bandwidth line: encode used 250 Hz/pixel x 256
    whatever the matrix (64 kHz, minimum TE 2.12 ms at matrix 64) while plan
    uses 250 Hz/pixel x the matrix (3.6 ms). Both now take the planner's
    default (libencode/defaults.h) for the matrix actually used."""
    proto = tmp_path / "p64.protocol"
    proto.write_text("sequence = gre\nfov = 240mm\nmatrix = 64\n")
    plan = json.loads(run("plan", "--protocol", proto, "--json", "-").stdout)
    run("encode", "--phantom", "weave", "--protocol", proto, "--flip", "20",
        "--out", tmp_path / "k.npy")
    side = json.loads((tmp_path / "k.json").read_text())["protocol"]
    assert side["min_te_s"] == pytest.approx(plan["timing"]["min_te_s"] if "timing" in plan
                                             else plan["min_te_s"], rel=1e-12)
    assert side["bandwidth_hz"] == pytest.approx(250.0 * 64)

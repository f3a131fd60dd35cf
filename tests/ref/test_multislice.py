"""`kweave recon` on multi-slice 2-D k-space (docs/multislice.md).

References, all outside kweave:
- numpy (Debian's python3-numpy): docs/api.md's centered unitary inverse DFT
  fftshift(ifft2(ifftshift(k), norm="ortho")) applied to each slice's plane on
  its own, coils combined by root-sum-of-squares or by Roemer et al. 1990's
  optimal combination sum conj(S) m / sum |S|^2 (MRM 16:192); relative error
  <= 1e-5 (float32 data, double reference).
- scikit-image (python3-skimage) for the scores, each slice a 2-D image:
  normalized_root_mse (euclidean) over the whole stack, SSIM (Wang et al. 2004
  with gaussian_weights, sigma 1.5, population covariances) averaged over the
  slices, PSNR with data_range max|ref|; as tests/ref/test_score_skimage.py.
"""
import glob
import json
import os
import shutil
import signal
import subprocess
import time

import numpy as np
import pytest
from skimage.metrics import normalized_root_mse, peak_signal_noise_ratio, structural_similarity

from conftest import KWEAVE, bad, relerr, run

NX, NY, NS, NC = 40, 48, 3, 4


def ifft2c(k):
    ax = (-2, -1)
    return np.fft.fftshift(np.fft.ifft2(np.fft.ifftshift(k.astype(np.complex128), axes=ax), axes=ax, norm="ortho"), axes=ax)


@pytest.fixture(scope="module")
def ms(tmp_path_factory):
    d = tmp_path_factory.mktemp("ms")
    run("encode", "--phantom", "weave3d", "--matrix", f"{NX}x{NY}", "--fov", "200mm,200mm,120mm",
        "--slices", NS, "--slice-thickness", "6mm", "--slice-points", 3, "--coils", NC, "--out", d / "ks.npy",
        "--truth", d / "truth.npy", "--sens-out", d / "sens.npy", "--quiet")
    return d


def scores_skimage(truth, img):
    dr = float(truth.max() - truth.min())
    ssim = np.mean([structural_similarity(r, t, gaussian_weights=True, sigma=1.5, use_sample_covariance=False,
                                          data_range=dr) for r, t in zip(truth.astype(np.float64), img.astype(np.float64))])
    nrmse = normalized_root_mse(truth.astype(np.float64), img.astype(np.float64), normalization="euclidean")
    psnr = peak_signal_noise_ratio(truth.astype(np.float64), img.astype(np.float64), data_range=float(truth.max()))
    return nrmse, psnr, ssim


def test_encode_writes_what_recon_reads(ms):
    k = np.load(ms / "ks.npy")
    assert k.shape == (NC, NS, NY, NX) and np.load(ms / "truth.npy").shape == (NS, NY, NX)
    assert json.loads((ms / "ks.json").read_text())["slices"]["count"] == NS


@pytest.mark.parametrize("combine", ["rss", "optimal"])
def test_fft_slice_by_slice_matches_numpy(ms, combine):
    k = np.load(ms / "ks.npy")
    s = np.load(ms / "sens.npy").astype(np.complex128)  # (coils, slices, ny, nx): each slice's maps
    run("recon", "--in", ms / "ks.npy", "--out", ms / f"i_{combine}.npy", "--combine", combine,
        "--ref", ms / "truth.npy", "--json", ms / f"r_{combine}.json")
    img = np.load(ms / f"i_{combine}.npy")
    assert img.dtype == np.float32 and img.shape == (NS, NY, NX)
    for sl in range(NS):
        m = ifft2c(k[:, sl])
        if combine == "rss":
            ref = np.sqrt((np.abs(m) ** 2).sum(0))
        else:
            ss = s[:, sl]
            den = (np.abs(ss) ** 2).sum(0)
            ref = np.abs(np.where(den > 0, (np.conj(ss) * m).sum(0) / np.where(den > 0, den, 1), 0))
        assert relerr(img[sl], ref) <= 1e-5, sl
    rep = json.loads((ms / f"r_{combine}.json").read_text())
    assert rep["multislice"] is True and rep["slices"] == NS and rep["slice_axis"] == 1
    assert rep["image_shape"] == [NS, NY, NX] and rep["kspace_shape"] == [NC, NS, NY, NX]
    truth = np.load(ms / "truth.npy")
    nrmse, psnr, ssim = scores_skimage(truth, img)
    sc = rep["scores"]
    assert abs(sc["nrmse"] - nrmse) <= 1e-5 * nrmse
    assert abs(sc["psnr_db"] - psnr) <= 1e-4 * abs(psnr)
    assert abs(sc["ssim"] - ssim) <= 1e-3
    if combine == "optimal":
        # the maps the data were made with undo the coil weighting: the
        # slices reproduce the encoder's truth (a transform across the slice
        # axis would not)
        assert sc["nrmse"] < 0.1


def test_a_3d_transform_is_not_what_happens(ms):
    # the same file with no sidecar is a 3-D volume to `recon`: different
    k = np.load(ms / "ks.npy")
    np.save(ms / "plain.npy", k)
    run("recon", "--in", ms / "plain.npy", "--out", ms / "vol.npy")
    run("recon", "--in", ms / "plain.npy", "--slices", 1, "--out", ms / "sl.npy")
    vol, sl = np.load(ms / "vol.npy"), np.load(ms / "sl.npy")
    ref = np.sqrt((np.abs(ifft2c(k)) ** 2).sum(0))
    assert relerr(sl, ref) <= 1e-5
    assert relerr(vol, ref) > 0.1


def test_sense_r2_per_slice(ms, tmp_path):
    mask = np.zeros(NY, np.float32)
    mask[::2] = 1
    np.save(tmp_path / "mask.npy", mask)
    run("encode", "--phantom", "weave3d", "--matrix", f"{NX}x{NY}", "--fov", "200mm,200mm,120mm",
        "--slices", NS, "--slice-thickness", "6mm", "--slice-points", 3, "--coils", NC, "--pattern", tmp_path / "mask.npy",
        "--out", tmp_path / "ks.npy", "--truth", tmp_path / "truth.npy", "--sens-out", tmp_path / "sens.npy",
        "--quiet")
    run("recon", "--in", tmp_path / "ks.npy", "--method", "sense", "--lambda", 0, "--out", tmp_path / "i.npy",
        "--ref", tmp_path / "truth.npy", "--json", tmp_path / "r.json")
    img = np.load(tmp_path / "i.npy")
    k = np.load(tmp_path / "ks.npy").astype(np.complex128)
    s = np.load(tmp_path / "sens.npy").astype(np.complex128)
    # numpy SENSE (Pruessmann et al. 1999, MRM 42:952): the zero-filled coil
    # images alias every pixel y with y + ny/2; solve the 2 x 2 least-squares
    # system per pixel pair. The aliasing weights come from numpy itself:
    # ifft2c of the mask applied to a unit image at y and at y + ny/2.
    h = NY // 2
    a = ifft2c(k)  # (coils, slices, ny, nx) aliased coil images
    probe = np.zeros((NY, NX))
    probe[0, 0] = 1
    psf = ifft2c(np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(probe), norm="ortho")) * mask[:, None])
    w0, w1 = psf[0, 0], psf[h, 0]  # weight of the pixel itself and of its alias
    # the encoding of pixel pair (y, y + h) for coil rows y and y + h:
    # a(y) = w0 S(y) x(y) + w1 S(y+h) x(y+h), a(y+h) = w1 S(y) x(y) + w0 S(y+h) x(y+h)
    for sl in range(NS):
        top, bot = s[:, sl, :h, :], s[:, sl, h:, :]  # (coils, h, nx): this slice's maps
        A = np.concatenate([np.stack([w0 * top, w1 * bot], -1), np.stack([w1 * top, w0 * bot], -1)], 0)
        A = A.transpose(1, 2, 0, 3)  # (h, nx, 2*coils, 2)
        P = np.linalg.pinv(A)  # least squares, batched: (h, nx, 2, 2*coils)
        b = np.concatenate([a[:, sl, :h, :], a[:, sl, h:, :]], 0).transpose(1, 2, 0)  # (h, nx, 2*coils)
        sol = np.einsum("yxij,yxj->yxi", P, b)
        out = np.abs(np.concatenate([sol[..., 0], sol[..., 1]], 0))
        sup = (np.abs(s[:, sl]) ** 2).sum(0) > 0
        assert relerr(img[sl][sup], out[sup]) <= 1e-3, sl
    rep = json.loads((tmp_path / "r.json").read_text())
    assert rep["slices"] == NS and rep["sampling"]["acceleration"] == 2
    nrmse, psnr, ssim = scores_skimage(np.load(tmp_path / "truth.npy"), img)
    assert abs(rep["scores"]["nrmse"] - nrmse) <= 1e-5 * nrmse
    assert abs(rep["scores"]["ssim"] - ssim) <= 1e-3


def test_keep_coils_stdin_and_other_dtypes(ms, tmp_path):
    k = np.load(ms / "ks.npy")
    run("recon", "--in", ms / "ks.npy", "--keep-coils", "--out", tmp_path / "c.npy")
    c = np.load(tmp_path / "c.npy")
    assert c.dtype == np.complex64 and c.shape == (NC, NS, NY, NX)
    assert relerr(c, ifft2c(k)) <= 1e-5
    # slice-major (slices, coils, ny, nx) streams from a pipe (--slices 0)
    sm = np.ascontiguousarray(k.transpose(1, 0, 2, 3))
    np.save(tmp_path / "sm.npy", sm)
    run("recon", "--in", "-", "--slices", 0, "--out", tmp_path / "p.npy", input=(tmp_path / "sm.npy").read_bytes())
    ref = np.sqrt((np.abs(ifft2c(k)) ** 2).sum(0))
    assert relerr(np.load(tmp_path / "p.npy"), ref) <= 1e-5
    # complex128, big-endian: converted on the way in
    np.save(tmp_path / "be.npy", k.astype(">c16"))
    run("recon", "--in", tmp_path / "be.npy", "--slices", 1, "--out", tmp_path / "b.npy")
    assert relerr(np.load(tmp_path / "b.npy"), ref) <= 1e-5
    # one channel (slices, ny, nx)
    np.save(tmp_path / "one.npy", k[0])
    run("recon", "--in", tmp_path / "one.npy", "--slices", 0, "--out", tmp_path / "o.npy")
    assert relerr(np.load(tmp_path / "o.npy"), np.abs(ifft2c(k[0]))) <= 1e-5


def test_bad_inputs(ms, tmp_path):
    shutil.copy(ms / "ks.npy", tmp_path / "ks.npy")
    shutil.copy(ms / "sens.npy", tmp_path / "sens.npy")
    sc = json.loads((ms / "ks.json").read_text())
    sc["slices"]["count"] = NS + 1
    (tmp_path / "ks.json").write_text(json.dumps(sc))
    out = tmp_path / "o.npy"
    line = bad("recon", "--in", tmp_path / "ks.npy", "--out", out, field="slices")
    assert f"{NS + 1} slices" in line
    sc["slices"]["count"] = NS
    (tmp_path / "ks.json").write_text(json.dumps(sc))
    np.save(tmp_path / "t2.npy", np.load(ms / "truth.npy")[:2])
    bad("recon", "--in", tmp_path / "ks.npy", "--out", out, "--ref", tmp_path / "t2.npy", field="ref")
    bad("recon", "--in", tmp_path / "ks.npy", "--out", out, "--slices", 2, field="slices")
    bad("recon", "--in", tmp_path / "ks.npy", "--out", tmp_path / "o.png", field="out")
    bad("recon", "--in", tmp_path / "ks.npy", "--out", out, "--gfactor", tmp_path / "g.npy", field="gfactor")
    bad("recon", "--in", tmp_path / "ks.npy", "--out", out, "--sens-out", tmp_path / "s.npy", field="sens-out")
    bad("recon", "--in", tmp_path / "ks.npy", "--out", out, "--method", "grid", field="method")
    np.save(tmp_path / "badsens.npy", np.ones((NC, NS + 1, NY, NX), np.complex64))
    bad("recon", "--in", tmp_path / "ks.npy", "--out", out, "--sens", tmp_path / "badsens.npy", field="sens")
    # (coils, slices, ny, nx) cannot stream from a pipe: the layout is named
    line = bad("recon", "--in", "-", "--slices", 1, "--out", out, field="in",
               input=(tmp_path / "ks.npy").read_bytes())
    assert "(coils, slices, ny, nx)" in line
    # a header that lies about the shape
    raw = (tmp_path / "ks.npy").read_bytes()
    (tmp_path / "short.npy").write_bytes(raw[:-8])
    bad("recon", "--in", tmp_path / "short.npy", "--slices", 1, "--out", out, field="in")
    assert not out.exists() and not (tmp_path / "o.png").exists()


def test_error_mid_way_leaves_nothing(ms, tmp_path):
    k = np.load(ms / "ks.npy")
    k[2, NS - 1, 5, 7] = np.nan  # found only when the last slice is read
    np.save(tmp_path / "ks.npy", k)
    before = sorted(os.listdir(tmp_path))
    line = bad("recon", "--in", tmp_path / "ks.npy", "--slices", 1, "--out", tmp_path / "o.npy", field="in")
    assert f"slice {NS - 1}" in line
    bad("recon", "--in", tmp_path / "ks.npy", "--slices", 1, "--keep-coils", "--out", tmp_path / "c.npy", field="in")
    assert sorted(os.listdir(tmp_path)) == before  # no output, no temporary file


def peak_rss_kib(args):
    """Peak RSS of kweave alone, measured by GNU time (a small C parent, so
    the figure is not inflated by a Python parent's address space at fork)."""
    if not os.path.exists("/usr/bin/time"):
        pytest.skip("GNU time (/usr/bin/time) is not installed")
    p = subprocess.run(["/usr/bin/time", "-f", "%M", KWEAVE, *map(str, args)], capture_output=True, text=True,
                       timeout=600)
    assert p.returncode == 0, p.stderr
    return int(p.stderr.strip().splitlines()[-1])


@pytest.fixture(scope="module")
def big(tmp_path_factory):
    # 64 MiB of k-space: 8 coils x 64 slices x 128 x 128 complex64, written
    # coil by coil so that this process never holds it whole
    shape = (8, 64, 128, 128)
    p = tmp_path_factory.mktemp("big") / "big.npy"
    a = np.lib.format.open_memmap(p, mode="w+", dtype=np.complex64, shape=shape)
    rng = np.random.default_rng(3)
    for c in range(shape[0]):
        a[c] = (rng.standard_normal(shape[1:], dtype=np.float32)
                + 1j * rng.standard_normal(shape[1:], dtype=np.float32))
    a.flush()
    del a
    return p


@pytest.mark.skipif("asan" in KWEAVE, reason="AddressSanitizer's shadow memory and quarantine change the RSS")
def test_peak_memory_is_bounded(tmp_path, big):
    size_kib = os.path.getsize(big) // 1024
    kib = peak_rss_kib(["recon", "--in", big, "--slices", 1, "--out", tmp_path / "i.npy", "--quiet"])
    # bound: well below the input (half of it plus 40 MiB for the program,
    # FFTW and one slice; common practice, no source)
    assert kib < size_kib // 2 + 40 * 1024, (kib, size_kib)
    img = np.load(tmp_path / "i.npy", mmap_mode="r")
    assert img.shape == (64, 128, 128)


def test_sigint_mid_stream_leaves_nothing(tmp_path, big):
    # slices are being written into the hidden temporary file when SIGINT
    # arrives: the process dies of it and leaves neither target nor temporary
    out = tmp_path / "i.npy"
    p = subprocess.Popen([KWEAVE, "recon", "--in", str(big), "--slices", "1", "--keep-coils", "--out", str(out),
                          "--quiet"], stderr=subprocess.PIPE)
    seen = False
    t0 = time.monotonic()
    while time.monotonic() - t0 < 120 and p.poll() is None:
        tmps = glob.glob(str(tmp_path / ".i.npy.kw-*"))
        if tmps and os.path.getsize(tmps[0]) > 0:
            seen = True
            p.send_signal(signal.SIGINT)
            break
        time.sleep(0.001)
    p.communicate(timeout=120)
    assert seen, "the run ended before its temporary file was seen; make the input larger"
    assert p.returncode == -signal.SIGINT, p.returncode
    assert os.listdir(tmp_path) == [], os.listdir(tmp_path)


def test_two_rings_give_each_slice_its_own_maps(tmp_path):
    """Multi-slice with two rings of 4 loops (at z = -60 mm and +60 mm, the
    default gap of half the z FOV): each slice gets the loops' field in the
    plane of its centre (Biot-Savart at that z), so the lower ring's coil
    fades from the lowest slice to the highest and the upper ring's grows;
    the optimal combination with those maps (numpy-free: kweave recon reads
    them from the sidecar) recovers the slab truth (noise-free; measured
    NRMSE 0.030), while the centre slice's maps used for every slice miss by
    far more (measured 0.114)."""
    d = tmp_path
    run("encode", "--phantom", "weave3d", "--matrix", "64", "--fov", "240mm", "--slices", "3",
        "--slice-thickness", "5mm", "--slice-gap", "40mm", "--coils", "4", "--coil-rings", "2",
        "--sens-out", d / "s.npy", "--out", d / "k.npy", "--truth", d / "t.npy", "--quiet")
    s = np.load(d / "s.npy")
    assert s.shape == (8, 3, 64, 64) and np.load(d / "k.npy").shape == (8, 3, 64, 64)
    lower = [np.abs(s[0, i]).mean() for i in range(3)]
    upper = [np.abs(s[4, i]).mean() for i in range(3)]
    assert lower[0] > lower[1] > lower[2] and upper[0] < upper[1] < upper[2], (lower, upper)
    side = json.loads((d / "k.json").read_text())
    assert side["slices"]["coil_maps"].startswith("per slice")
    run("recon", "--in", d / "k.npy", "--method", "fft", "--combine", "optimal",
        "--out", d / "r.npy", "--quiet")
    np.save(d / "s_mid.npy", np.repeat(s[:, 1:2], 3, axis=1))
    run("recon", "--in", d / "k.npy", "--method", "fft", "--combine", "optimal",
        "--sens", d / "s_mid.npy", "--out", d / "r_mid.npy", "--quiet")
    t = np.load(d / "t.npy")
    e = np.linalg.norm(np.abs(np.load(d / "r.npy")) - t) / np.linalg.norm(t)
    e_mid = np.linalg.norm(np.abs(np.load(d / "r_mid.npy")) - t) / np.linalg.norm(t)
    assert e < 0.04 and e_mid > 2 * e, (e, e_mid)

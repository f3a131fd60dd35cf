"""Issue 7's check on the simulator's data: compressed sensing on
variable-density Cartesian undersampling at R = 4 beats zero-filling and
CG-SENSE in NRMSE and SSIM. Data: `kweave pattern --kind random` (variable
density, 12 ACS lines) and `kweave encode` of the weave phantom, 128 x 128,
8 coils, SNR 40. Scores by numpy and scikit-image (Wang et al. 2004), the
zero-filled image combined with the true maps (sum conj(s) x / sum |s|^2)."""
import numpy as np
from skimage.metrics import structural_similarity

from conftest import run


def scores(truth, img):
    s = structural_similarity(truth, img, data_range=truth.max() - truth.min(),
                              gaussian_weights=True, sigma=1.5, use_sample_covariance=False)
    return float(np.linalg.norm(img - truth) / np.linalg.norm(truth)), float(s)


def test_cs_beats_zero_filling_and_cg_sense_on_simulator(tmp_path):
    d = tmp_path
    run("pattern", "--kind", "random", "--matrix", "128x128", "--accel", "4", "--acs", "12",
        "--seed", "1", "--out", d / "m.npy")
    run("encode", "--phantom", "weave", "--matrix", "128", "--fov", "256mm", "--out", d / "k.npy",
        "--truth", d / "t.npy", "--coils", "8", "--pattern", d / "m.npy", "--sens-out", d / "s.npy",
        "--snr", "40", "--seed", "2")
    truth = np.load(d / "t.npy").astype(np.float64)
    k, s = np.load(d / "k.npy"), np.load(d / "s.npy")
    zf = np.fft.fftshift(np.fft.ifft2(np.fft.ifftshift(k, axes=(-2, -1)), norm="ortho"), axes=(-2, -1))
    zf = abs((np.conj(s) * zf).sum(0) / (abs(s) ** 2).sum(0))
    res = {"zero-filled": scores(truth, zf)}
    for m in ["cg-sense", "cs-wavelet", "cs-tv"]:
        run("recon", "--in", d / "k.npy", "--method", m, "--out", d / f"{m}.npy")
        res[m] = scores(truth, np.load(d / f"{m}.npy").astype(np.float64))
    print(res)
    for m in ["cs-wavelet", "cs-tv"]:
        for other in ["zero-filled", "cg-sense"]:
            assert res[m][0] < res[other][0], (m, other, res)
            assert res[m][1] > res[other][1], (m, other, res)

"""`kweave score` and the metrics library against scikit-image 0.19 (Debian's
python3-skimage): structural_similarity(gaussian_weights=True, sigma=1.5,
use_sample_covariance=False, data_range=max|ref|-min|ref|) within 1e-3,
normalized_root_mse (euclidean) and peak_signal_noise_ratio
(data_range=max|ref|) within 1e-5 relative."""
import json

import numpy as np
import pytest
from skimage.metrics import normalized_root_mse, peak_signal_noise_ratio, structural_similarity

from conftest import bad, run


def pair(shape, seed, complex_=False):
    rng = np.random.default_rng(seed)
    yy, xx = np.mgrid[:shape[0], :shape[1]]
    ref = ((xx - shape[1] / 2) ** 2 / (0.3 * shape[1]) ** 2 + (yy - shape[0] / 2) ** 2 / (0.4 * shape[0]) ** 2 < 1).astype(float)
    ref += 0.3 * np.sin(xx / 5.0) * ref + 0.05
    test = ref + 0.08 * rng.standard_normal(shape)
    if complex_:
        ph = np.exp(1j * rng.uniform(-np.pi, np.pi, shape))
        return (ref * ph).astype(np.complex64), (np.abs(test) * ph).astype(np.complex64)
    return ref.astype(np.float32), test.astype(np.float32)


@pytest.mark.parametrize("shape,seed,cplx", [((64, 64), 1, False), ((48, 80), 2, False), ((33, 45), 3, True)])
def test_scores_match_skimage(tmp_path, shape, seed, cplx):
    ref, test = pair(shape, seed, cplx)
    np.save(tmp_path / "a.npy", ref)
    np.save(tmp_path / "b.npy", test)
    run("score", "--ref", tmp_path / "a.npy", "--test", tmp_path / "b.npy", "--json", tmp_path / "s.json")
    s = json.loads((tmp_path / "s.json").read_text())
    r, t = np.abs(ref).astype(np.float64), np.abs(test).astype(np.float64)
    dr = r.max() - r.min()
    ssim = structural_similarity(r, t, gaussian_weights=True, sigma=1.5, use_sample_covariance=False, data_range=dr)
    assert abs(s["ssim"] - ssim) <= 1e-3, (s["ssim"], ssim)
    nrmse = normalized_root_mse(r, t, normalization="euclidean")
    assert abs(s["nrmse"] - nrmse) <= 1e-5 * nrmse
    psnr = peak_signal_noise_ratio(r, t, data_range=r.max())
    assert abs(s["psnr_db"] - psnr) <= 1e-5 * psnr
    assert set(("nrmse", "psnr_db", "ssim")) <= set(s)


def test_identical_images(tmp_path):
    ref, _ = pair((32, 32), 4)
    np.save(tmp_path / "a.npy", ref)
    run("score", "--ref", tmp_path / "a.npy", "--test", tmp_path / "a.npy", "--json", tmp_path / "s.json")
    s = json.loads((tmp_path / "s.json").read_text())
    assert s["nrmse"] == 0 and s["psnr_db"] is None and abs(s["ssim"] - 1) < 1e-12


def test_score_bad_input(tmp_path):
    ref, test = pair((32, 32), 5)
    np.save(tmp_path / "a.npy", ref)
    np.save(tmp_path / "b.npy", test[:, :30])
    bad("score", "--ref", tmp_path / "a.npy", "--test", tmp_path / "b.npy", field="test")
    nan = test.copy()
    nan[3, 3] = np.nan
    np.save(tmp_path / "n.npy", nan)
    bad("score", "--ref", tmp_path / "a.npy", "--test", tmp_path / "n.npy", field="test")
    bad("score", "--ref", tmp_path / "a.npy", field="test")
    bad("score", "--test", tmp_path / "a.npy", field="ref")
    np.save(tmp_path / "z.npy", np.zeros((32, 32), np.float32))
    bad("score", "--ref", tmp_path / "z.npy", "--test", tmp_path / "a.npy", field="ref")
    (tmp_path / "t.npy").write_bytes(b"\x93NUMPY\x01\x00garbage")
    bad("score", "--ref", tmp_path / "t.npy", "--test", tmp_path / "a.npy", field="ref")
    bad("score", "--ref", tmp_path / "a.npy", "--test", tmp_path / "b.npy", "--json", tmp_path / "no/dir/s.json")

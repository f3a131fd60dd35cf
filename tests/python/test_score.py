"""kweave.score against `kweave score --json` (the same numbers) and
scikit-image (structural_similarity, peak_signal_noise_ratio; the same
definitions as recon/kw_metrics.h), bad input with the command's messages."""
import gc
import sys

import numpy as np
import pytest

import kweave


def images(seed=0, shape=(48, 48)):
    rng = np.random.default_rng(seed)
    ref = np.zeros(shape, np.float32)
    ref[10:38, 12:36] = 1.0
    ref[20:28, 18:30] = 0.4
    test = (ref + 0.05 * rng.standard_normal(shape)).astype(np.float32)
    return ref, test


def test_score_equals_the_command(cli):
    ref, test = images()
    cli.save("ref.npy", ref)
    cli.save("test.npy", test)
    cli.run("score", "--ref", "ref.npy", "--test", "test.npy", "--json", "s.json")
    want = cli.json("s.json")
    got = kweave.score(ref, test)
    assert set(got) == {"nrmse", "psnr_db", "ssim"}
    for k in got:   # the same JSON text (kw_metrics_json), so the same numbers
        assert got[k] == want[k], k


def test_score_of_complex_images_equals_the_command(cli):
    ref, test = images(1)
    zr = ref * np.exp(1j * 0.3).astype(np.complex64)
    zt = (test * np.exp(1j * 0.7)).astype(np.complex64)
    cli.save("ref.npy", zr)
    cli.save("test.npy", zt)
    cli.run("score", "--ref", "ref.npy", "--test", "test.npy", "--json", "s.json")
    want = cli.json("s.json")
    for k, v in kweave.score(zr, zt).items():
        assert v == want[k], k


def test_score_agrees_with_scikit_image():
    from skimage.metrics import peak_signal_noise_ratio, structural_similarity
    ref, test = images(2)
    s = kweave.score(ref, test)
    r = np.abs(ref).astype(np.float64)     # the scores compare magnitudes
    t = np.abs(test).astype(np.float64)
    rng_ = r.max() - r.min()
    assert s["psnr_db"] == pytest.approx(peak_signal_noise_ratio(r, t, data_range=r.max()), rel=1e-6)
    ssim = structural_similarity(r, t, data_range=rng_, gaussian_weights=True, sigma=1.5,
                                 use_sample_covariance=False)
    assert abs(s["ssim"] - ssim) <= 1e-3
    assert s["nrmse"] == pytest.approx(np.linalg.norm(t - r) / np.linalg.norm(r), rel=1e-6)


def test_identical_images_give_none_for_the_infinite_psnr():
    ref, _ = images()
    s = kweave.score(ref, ref)
    assert s["nrmse"] == 0 and s["psnr_db"] is None


def test_bad_input_raises_with_the_command_message(cli):
    ref, test = images()
    cli.save("ref.npy", ref)
    cli.save("small.npy", test[:10])
    bad = ref.copy()
    bad[3, 3] = np.nan
    cli.save("nan.npy", bad)
    cases = [
        ((ref, test[:10]), ("--ref", "ref.npy", "--test", "small.npy")),
        ((ref, bad), ("--ref", "ref.npy", "--test", "nan.npy")),
        ((np.zeros_like(ref), test), None),
    ]
    for (a, b), args in cases:
        with pytest.raises(kweave.InputError) as e:
            kweave.score(a, b)
        if args:
            assert str(e.value) == cli.error("score", *args)


def test_wrong_types_raise_cleanly():
    ref, test = images()
    with pytest.raises(kweave.InputError, match="ref: "):
        kweave.score("not an array", test)
    with pytest.raises(kweave.InputError, match="test: "):
        kweave.score(ref, np.array([[object()]]))
    with pytest.raises(TypeError):
        kweave.score(ref)
    ro = test.copy()
    ro.setflags(write=False)
    assert kweave.score(ref, ro) == kweave.score(ref, test)
    assert kweave.score(ref.astype(np.float64), test[:, :]) == kweave.score(ref, test)


def test_a_thousand_calls_keep_memory_and_references_flat():
    ref, test = images()
    refs = (sys.getrefcount(ref), sys.getrefcount(test))
    for _ in range(50):
        kweave.score(ref, test)
    gc.collect()
    with open("/proc/self/statm") as f:
        before = int(f.read().split()[1]) * 4
    for _ in range(1000):
        kweave.score(ref, test)
    gc.collect()
    with open("/proc/self/statm") as f:
        grown = int(f.read().split()[1]) * 4 - before
    assert grown < 1024, f"RSS grew by {grown} KiB"
    assert (sys.getrefcount(ref), sys.getrefcount(test)) == refs

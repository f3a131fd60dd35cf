"""`kweave render` and the PNG writer (cli/png.c) against outside references.

Sources:
 - numpy.percentile (default method 'linear', i.e. Hyndman & Fan 1996
   definition 7) for the automatic window: 0 .. 99.5th percentile.
 - Pillow (PIL.Image.open), an independent PNG decoder, reads back every
   picture; the pixels are compared with the window mapping computed here in
   numpy: round(clip((v - lo) / (hi - lo), 0, 1) * (2**depth - 1)).
 - The montage layout (near-square grid, C order, left to right then top to
   bottom) is the one png.h documents; it is rebuilt here in numpy.
"""
import ctypes
import os
import subprocess

import numpy as np
import pytest
from PIL import Image

from conftest import KWEAVE, bad, run


def load_png(path):
    im = Image.open(path)
    im.load()
    return im, np.array(im)


def expected(v, lo, hi, depth=8):
    mx = 2 ** depth - 1
    t = np.clip((v.astype(np.float64) - lo) / (hi - lo), 0, 1)
    t[np.isnan(v)] = 0
    return np.floor(t * mx + 0.5).astype(np.int64)  # lround: halves away from 0


def close_pixels(got, want):
    """The writer computes in float32/double; allow one grey level at exact
    rounding ties, and require at least 99% of the pixels to be exact."""
    d = np.abs(got.astype(np.int64) - want)
    assert d.max() <= 1, f"max difference {d.max()}"
    assert (d == 0).mean() >= 0.99


def test_auto_window_8bit_matches_numpy_percentile(tmp_path):
    rng = np.random.default_rng(3)
    v = np.abs(rng.standard_normal((37, 53))).astype(np.float32)
    np.save(tmp_path / "a.npy", v)
    run("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "a.png")
    im, got = load_png(tmp_path / "a.png")
    assert im.mode == "L" and im.size == (53, 37)  # 8-bit grey, width x height
    hi = np.percentile(v, 99.5)  # numpy reference
    close_pixels(got, expected(v, 0.0, hi))
    # The brightest 0.5% are clipped white; the rest stay below.
    assert (got == 255).mean() == pytest.approx(0.005, abs=2 / v.size)


def test_16bit_and_given_window(tmp_path):
    v = np.linspace(-1, 3, 64 * 32, dtype=np.float32).reshape(32, 64)
    np.save(tmp_path / "a.npy", v)
    run("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "a.png",
        "--depth", "16", "--window", "0:2")
    im, got = load_png(tmp_path / "a.png")
    assert im.mode.startswith("I")  # Pillow's 16-bit grey modes ("I;16", "I")
    assert got.shape == (32, 64)
    want = expected(np.abs(v), 0.0, 2.0, depth=16)  # default part: magnitude
    close_pixels(got, want)
    assert got.max() == 65535
    assert len(np.unique(got)) > 1000  # really 16 bits of grey, not 8


def test_16bit_values_exact(tmp_path):
    # Values whose mapping is exact: v / 65535 with window 0:65535.
    v = np.array([[0, 1, 2, 255, 256, 32768, 65534, 65535]], np.float32)
    np.save(tmp_path / "a.npy", v)
    run("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "a.png",
        "--depth", "16", "--window", "0:65535")
    _, got = load_png(tmp_path / "a.png")
    np.testing.assert_array_equal(got.astype(np.int64), v.astype(np.int64))


def test_negative_values_window_from_minimum(tmp_path):
    rng = np.random.default_rng(5)
    v = rng.standard_normal((20, 30)).astype(np.float32)
    np.save(tmp_path / "a.npy", v)
    run("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "a.png", "--part", "real")
    _, got = load_png(tmp_path / "a.png")
    close_pixels(got, expected(v, v.min(), np.percentile(v, 99.5)))
    assert got.min() == 0


@pytest.mark.parametrize("part", ["mag", "phase", "real", "imag", "logmag"])
def test_complex_parts(tmp_path, part):
    rng = np.random.default_rng(7)
    z = (rng.standard_normal((24, 40)) + 1j * rng.standard_normal((24, 40))).astype(np.complex64)
    np.save(tmp_path / "z.npy", z)
    run("render", "--in", tmp_path / "z.npy", "--out", tmp_path / "z.png", "--part", part)
    _, got = load_png(tmp_path / "z.png")
    if part == "phase":
        v, lo, hi = np.angle(z), -np.pi, np.pi
    else:
        v = {"mag": np.abs(z), "real": z.real, "imag": z.imag,
             "logmag": np.log1p(np.abs(z) / (1e-3 * np.abs(z).max()))}[part]
        lo, hi = min(0.0, float(v.min())), np.percentile(v, 99.5)
    close_pixels(got, expected(v, lo, hi))


@pytest.mark.parametrize("shape,grid", [((5, 6, 7), (3, 2)), ((2, 2, 4, 3), (2, 2)),
                                        ((1, 9, 8), (1, 1)), ((10, 3, 4), (4, 3))])
def test_montage_layout(tmp_path, shape, grid):
    rng = np.random.default_rng(11)
    v = rng.uniform(0, 1, shape).astype(np.float32)
    np.save(tmp_path / "m.npy", v)
    run("render", "--in", tmp_path / "m.npy", "--out", tmp_path / "m.png",
        "--window", "0:1", "--montage")
    _, got = load_png(tmp_path / "m.png")
    cols, rows = grid
    h, w = shape[-2:]
    slices = v.reshape(-1, h, w)
    assert got.shape == (rows * h, cols * w)
    want = np.zeros((rows * h, cols * w), np.int64)
    for s, sl in enumerate(slices):
        r, c = divmod(s, cols)
        want[r * h:(r + 1) * h, c * w:(c + 1) * w] = expected(sl, 0.0, 1.0)
    close_pixels(got, want)


def test_mask_black_and_white(tmp_path):
    m = np.zeros((16, 16), np.uint8)
    m[::3] = 1
    np.save(tmp_path / "m.npy", m)
    run("render", "--in", tmp_path / "m.npy", "--out", tmp_path / "m.png")
    _, got = load_png(tmp_path / "m.png")
    np.testing.assert_array_equal(got, m.astype(np.int64) * 255)


def test_stdin_to_stdout(tmp_path):
    v = np.arange(12, dtype=np.float32).reshape(3, 4)
    np.save(tmp_path / "a.npy", v)
    p = subprocess.run([KWEAVE, "render", "--in", "-", "--out", "-", "--window", "0:11"],
                       input=(tmp_path / "a.npy").read_bytes(), capture_output=True, timeout=60)
    assert p.returncode == 0, p.stderr
    (tmp_path / "o.png").write_bytes(p.stdout)
    _, got = load_png(tmp_path / "o.png")
    close_pixels(got, expected(v, 0, 11))


@pytest.mark.parametrize("args,field", [
    (["--part", "colour"], "part"),
    (["--depth", "12"], "depth"),
    (["--window", "2:1"], "window"),
    (["--window", "a:b"], "window"),
    (["--window", "1"], "window"),
    (["--montage"], "montage"),
])
def test_render_bad_options(tmp_path, args, field):
    np.save(tmp_path / "a.npy", np.ones((4, 4), np.float32))
    bad("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "a.png", *args, field=field)
    assert not (tmp_path / "a.png").exists()


# ---- the window function itself, through ctypes, against numpy.percentile ----

@pytest.fixture(scope="module")
def cli():
    lib = os.environ.get("KWEAVE_CLI_LIB")
    if not lib:
        pytest.skip("ctypes checks need KWEAVE_CLI_LIB")
    return ctypes.CDLL(lib)


@pytest.mark.parametrize("n", [1, 2, 3, 10, 199, 200, 201, 1000, 4097])
@pytest.mark.parametrize("ties", [False, True])
def test_window_percentile_numpy(cli, n, ties):
    rng = np.random.default_rng(n + 1000 * ties)
    v = rng.uniform(0, 10, n).astype(np.float32)
    if ties:
        v = np.round(v).astype(np.float32)  # many equal values, like a background
    lo, hi = ctypes.c_float(), ctypes.c_float()
    assert cli.kw_png_window(v.ctypes.data_as(ctypes.c_void_p), ctypes.c_size_t(n),
                             ctypes.byref(lo), ctypes.byref(hi)) == 0
    ref = np.percentile(v.astype(np.float64), 99.5)  # numpy reference, method 'linear'
    assert hi.value == pytest.approx(ref, rel=1e-6, abs=1e-6)
    assert lo.value == 0.0


def test_window_ignores_nan_and_takes_negative_minimum(cli):
    v = np.array([np.nan, -2.0, 1.0, 5.0, np.nan, 3.0], np.float32)
    lo, hi = ctypes.c_float(), ctypes.c_float()
    assert cli.kw_png_window(v.ctypes.data_as(ctypes.c_void_p), ctypes.c_size_t(v.size),
                             ctypes.byref(lo), ctypes.byref(hi)) == 0
    assert lo.value == -2.0
    assert hi.value == pytest.approx(np.nanpercentile(v, 99.5), rel=1e-6)

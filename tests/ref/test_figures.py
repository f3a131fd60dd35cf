"""Figures (cli/figure.c, issue 17): a picture with a grey bar, a title and
labelled montage tiles with gaps, against the layout figure.h documents and
the grey levels of the bare picture (cli/png.c), read back with Pillow, an
independent PNG decoder.

Layout (figure.h): white background, 12 px margins, a 26 px title line when
there is a title, the picture magnified by an integer k (a single picture to
at least 256 px, a montage tile to at least 128 px on its longer side), the
bar 16 px wide, 16 px right of the picture, white at the top, black at the
bottom; montage tiles 8 px apart with an 18 px label strip above each when
labelled. The difference picture's window is +-(99.5th percentile of |ref|)
/ M with M from kw_figure_diff_multiplier(); the window mapping is the one
png.h documents, rebuilt here in numpy."""
import ctypes
import os

import numpy as np
import pytest
from PIL import Image

from conftest import bad, run

M, TITLE, BAR_GAP, BAR_W, GAP, LABEL = 12, 26, 16, 16, 8, 18


def load(path):
    im = Image.open(path)
    im.load()
    return im, np.array(im).astype(np.int64)


def levels(v, lo, hi):
    t = np.clip((v.astype(np.float64) - lo) / (hi - lo), 0, 1)
    return np.floor(t * 255 + 0.5).astype(np.int64)


def close(got, want):
    d = np.abs(got - want)
    assert d.max() <= 1, d.max()
    assert (d == 0).mean() >= 0.99


def magnify(a, k):
    return np.kron(a, np.ones((k, k), np.int64))


def check_bar(rgb, x0, y0, y1):
    """The bar's columns are grey, fall monotonically from white at the top
    to black at the bottom, and are framed by a dark outline."""
    bar = rgb[y0:y1, x0:x0 + BAR_W]
    assert (bar[..., 0] == bar[..., 1]).all() and (bar[..., 1] == bar[..., 2]).all()
    col = bar[:, BAR_W // 2, 0]
    assert (np.diff(col) <= 0).all(), col
    assert col[0] >= 254 and col[-1] <= 1
    assert (bar[:, :, 0] == bar[:, :1, 0]).all()  # every column the same
    assert rgb[(y0 + y1) // 2, x0 - 1, 0] < 64  # the outline
    assert rgb[(y0 + y1) // 2, x0 + BAR_W, 0] < 64


def test_bare_picture_stays_bare(tmp_path):
    v = np.random.default_rng(1).uniform(0, 1, (40, 60)).astype(np.float32)
    np.save(tmp_path / "a.npy", v)
    run("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "a.png")
    im, _ = load(tmp_path / "a.png")
    assert im.mode == "L" and im.size == (60, 40)


def test_figure_has_the_bare_picture_and_a_bar(tmp_path):
    v = np.random.default_rng(2).uniform(0, 3, (50, 64)).astype(np.float32)
    np.save(tmp_path / "a.npy", v)
    run("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "bare.png")
    run("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "fig.png", "--bar", "magnitude",
        "--units", "a.u.")
    _, bare = load(tmp_path / "bare.png")
    im, fig = load(tmp_path / "fig.png")
    assert im.mode == "RGB"
    k = 256 // 64  # 4
    pic = fig[M:M + 50 * k, M:M + 64 * k]
    np.testing.assert_array_equal(pic[..., 0], magnify(bare, k))  # same grey levels
    bx = M + 64 * k + BAR_GAP
    assert fig.shape[1] > bx + BAR_W + 20  # ticks and the label to the right of the bar
    check_bar(fig, bx, M, M + 50 * k)
    # the tick values and the label are drawn (dark pixels right of the bar)
    right = fig[M:M + 50 * k, bx + BAR_W + 2:, 0]
    assert (right < 128).sum() > 100


def test_title_moves_the_picture_down(tmp_path):
    v = np.linspace(0, 1, 32 * 32, dtype=np.float32).reshape(32, 32)
    np.save(tmp_path / "a.npy", v)
    run("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "fig.png", "--window", "0:1",
        "--title", "a ramp")
    _, fig = load(tmp_path / "fig.png")
    k = 8
    np.testing.assert_array_equal(fig[M + TITLE:M + TITLE + 32 * k, M:M + 32 * k, 0],
                                  magnify(levels(v, 0, 1), k))
    assert (fig[M:M + TITLE - 4, M:M + 100, 0] < 128).any()  # the title's text


def check_labelled_tiles(fig, v, cols, k, ink):
    """Each tile of the stack v (window 0:1, magnified k) at its place on a
    grid of `cols` columns with label strips; each strip has ink. Returns the
    strips."""
    th, tw = v.shape[1] * k, v.shape[2] * k
    strips = []
    for s in range(v.shape[0]):
        r, c = divmod(s, cols)
        x0 = M + c * (tw + GAP)
        y0 = M + LABEL + r * (th + LABEL + GAP)
        np.testing.assert_array_equal(fig[y0:y0 + th, x0:x0 + tw, 0], magnify(levels(v[s], 0, 1), k))
        strip = fig[y0 - LABEL:y0, x0:x0 + tw, 0]
        assert (strip < 128).sum() > ink, f"tile {s} has no label"
        strips.append(strip)
    return strips


def test_montage_gaps_labels_and_no_empty_tile(tmp_path):
    # 8 tiles -> 4 x 2 with no empty tile; values below 1 with window 0:1, so
    # no tile pixel is white and white columns are gaps.
    v = np.random.default_rng(3).uniform(0, 0.9, (8, 40, 50)).astype(np.float32)
    np.save(tmp_path / "m.npy", v)
    run("render", "--in", tmp_path / "m.npy", "--out", tmp_path / "m.png", "--window", "0:1",
        "--tile-label", "coil")
    _, fig = load(tmp_path / "m.png")
    k = 128 // 50  # 2
    tw, th = 50 * k, 40 * k
    check_labelled_tiles(fig, v, 4, k, ink=20)
    # along a row through the first tile row: four runs of picture, gaps white
    row = fig[M + LABEL + th // 2, M:M + 4 * tw + 3 * GAP, 0]
    white = row == 255
    runs = np.flatnonzero(np.diff(white.astype(int)) != 0)
    assert len(runs) == 6  # 4 tiles, 3 gaps: 6 edges
    for c in range(1, 4):
        gap = row[c * (tw + GAP) - GAP:c * (tw + GAP)]
        assert (gap == 255).all()
    check_bar(fig, M + 4 * tw + 3 * GAP + BAR_GAP, M + LABEL, M + 2 * (th + LABEL) + GAP)


def test_montage_empty_tile_is_background(tmp_path):
    v = np.full((5, 30, 30), 0.5, np.float32)  # 5 tiles -> 3 x 2, one empty
    np.save(tmp_path / "m.npy", v)
    run("render", "--in", tmp_path / "m.npy", "--out", tmp_path / "m.png", "--window", "0:1",
        "--title", "five")
    _, fig = load(tmp_path / "m.png")
    k = 128 // 30
    t = 30 * k
    y1 = M + TITLE + t + GAP  # second row, no label strips
    x2 = M + 2 * (t + GAP)
    assert (fig[y1:y1 + t, x2:x2 + t] == 255).all()
    assert (fig[y1:y1 + t, M:M + t, 0] == 128).all()


def test_columns_and_one_label_per_tile(tmp_path):
    # 6 tiles in 3 columns (2 x 3 would be the default grid's choice too, so
    # ask for 2 columns: 3 rows); each tile's label strip has ink, and the
    # labels differ from one another (distinct names drawn).
    v = np.random.default_rng(4).uniform(0, 0.9, (6, 30, 40)).astype(np.float32)
    np.save(tmp_path / "m.npy", v)
    run("render", "--in", tmp_path / "m.npy", "--out", tmp_path / "m.png", "--window", "0:1",
        "--columns", "2", "--tile-labels", "truth,grid,cg-sense,cs-wavelet,cs-tv,error x 5")
    _, fig = load(tmp_path / "m.png")
    k = 128 // 40
    tw, th = 40 * k, 30 * k
    strips = check_labelled_tiles(fig, v, 2, k, ink=10)
    assert len({st.tobytes() for st in strips}) == 6
    check_bar(fig, M + 2 * tw + GAP + BAR_GAP, M + LABEL, M + 3 * (th + LABEL) + 2 * GAP)


@pytest.mark.parametrize("args,field", [
    (["--tile-labels", "a,b"], "tile-labels"),                 # 3 tiles, 2 labels
    (["--tile-labels", "a,b,c,d"], "tile-labels"),
    (["--tile-labels", "a,b,c", "--tile-label", "coil"], "tile-labels"),
    (["--columns", "0"], "columns"),
    (["--columns", "4"], "columns"),                           # more than the tiles
])
def test_tile_labels_and_columns_refused(tmp_path, args, field):
    np.save(tmp_path / "m.npy", np.ones((3, 8, 8), np.float32))
    bad("render", "--in", tmp_path / "m.npy", "--out", tmp_path / "m.png", *args, field=field)
    assert not (tmp_path / "m.png").exists()


def test_figure_options_refuse_16_bits(tmp_path):
    np.save(tmp_path / "a.npy", np.ones((4, 4), np.float32))
    bad("render", "--in", tmp_path / "a.npy", "--out", tmp_path / "a.png", "--depth", "16",
        "--bar", "x", field="depth")
    assert not (tmp_path / "a.png").exists()


# ---- applied figures ----

def fft2c(x):
    ax = (-2, -1)
    return np.fft.fftshift(np.fft.fftn(np.fft.ifftshift(x, axes=ax), axes=ax, norm="ortho"), axes=ax)


def test_difference_picture_multiplier(tmp_path, cli):
    rng = np.random.default_rng(4)
    ref = np.zeros((64, 64), np.float32)
    ref[16:48, 16:48] = 1
    test = ref + rng.normal(0, 0.01, ref.shape).astype(np.float32)
    np.save(tmp_path / "ref.npy", ref)
    np.save(tmp_path / "test.npy", test)
    run("score", "--ref", tmp_path / "ref.npy", "--test", tmp_path / "test.npy",
        "--diff", tmp_path / "d.png")
    d = np.abs(test) - np.abs(ref)
    ref_hi = np.percentile(np.abs(ref).astype(np.float32), 99.5)
    d_hi = np.percentile(np.abs(d).astype(np.float32), 99.5)
    ratio = ref_hi / d_hi
    want = max(m * 10.0 ** e for e in range(-3, 6) for m in (1, 2, 5) if m * 10.0 ** e <= ratio)
    mult = cli.kw_figure_diff_multiplier(ctypes.c_double(ref_hi), ctypes.c_double(d_hi))
    assert mult == pytest.approx(want)
    assert mult == 20  # |d| up to ~0.026: ratio ~38
    w = ref_hi / mult
    _, fig = load(tmp_path / "d.png")
    k = 4
    close(fig[M + TITLE:M + TITLE + 64 * k, M:M + 64 * k, 0], magnify(levels(d, -w, w), k))
    buf = ctypes.create_string_buffer(200)
    cli.kw_figure_diff_title(buf, ctypes.c_size_t(200), ctypes.c_double(mult))
    assert buf.value.decode() == "|test| - |ref| x 20 (window 1/20 of the reference's)"
    cli.kw_figure_diff_title(buf, ctypes.c_size_t(200), ctypes.c_double(1.0))
    assert "x " not in buf.value.decode()


@pytest.mark.parametrize("ref_hi,d_hi,m", [(1, 0.07, 10), (1, 0.3, 2), (1, 0.15, 5), (1, 0, 1),
                                           (1, 1, 1), (1, 2, 0.5), (3, 0.001, 2000), (1, 0.1, 10)])
def test_multiplier_values(cli, ref_hi, d_hi, m):
    assert cli.kw_figure_diff_multiplier(ctypes.c_double(ref_hi), ctypes.c_double(d_hi)) == \
        pytest.approx(m)


def test_gfactor_picture_from_one_to_the_maximum(tmp_path):
    # fft on fully sampled data: every g is 1 (a flat map, all black);
    # instead compare the .png figure with the .npy map of a SENSE run.
    n, nc = 48, 4
    y, x = np.mgrid[:n, :n] / n
    S = np.stack([np.exp(-((x - cx) ** 2 + (y - cy) ** 2) * 3) for cx, cy in
                  [(0, 0.5), (1, 0.5), (0.5, 0), (0.5, 1)]]).astype(np.complex64)
    rho = ((x - 0.5) ** 2 + (y - 0.5) ** 2 < 0.16).astype(np.float32)
    k = fft2c(S * rho).astype(np.complex64)
    k[:, 1::2] = 0
    np.save(tmp_path / "k.npy", k)
    np.save(tmp_path / "s.npy", S)
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "a.npy", "--method", "sense",
        "--sens", tmp_path / "s.npy", "--gfactor", tmp_path / "g.npy")
    run("recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "a.npy", "--method", "sense",
        "--sens", tmp_path / "s.npy", "--gfactor", tmp_path / "g.png")
    g = np.load(tmp_path / "g.npy")
    assert g.max() > 1.05
    _, fig = load(tmp_path / "g.png")
    kk = 256 // n
    close(fig[M + TITLE:M + TITLE + n * kk, M:M + n * kk, 0], magnify(levels(g, 1, g.max()), kk))
    check_bar(fig, M + n * kk + BAR_GAP, M + TITLE, M + TITLE + n * kk)


def test_psf_picture_has_a_db_bar(tmp_path):
    run("pattern", "--kind", "uniform", "--matrix", "64x64", "--accel", "2", "--out",
        tmp_path / "u.npy", "--psf", tmp_path / "p.png")
    _, fig = load(tmp_path / "p.png")
    k = 4
    pic = fig[M + TITLE:M + TITLE + 64 * k, M:M + 64 * k, 0]
    assert pic.max() == 255  # the peak: 0 dB
    assert (pic == 0).mean() > 0.5  # most of the PSF below -60 dB
    check_bar(fig, M + 64 * k + BAR_GAP, M + TITLE, M + TITLE + 64 * k)


# ---- the numbers, through ctypes ----

@pytest.fixture(scope="module")
def cli():
    lib = os.environ.get("KWEAVE_CLI_LIB")
    if not lib:
        pytest.skip("ctypes checks need KWEAVE_CLI_LIB")
    so = ctypes.CDLL(lib)
    so.kw_figure_diff_multiplier.restype = ctypes.c_double
    so.kw_figure_diff_multiplier.argtypes = [ctypes.c_double, ctypes.c_double]
    so.kw_figure_ticks.restype = ctypes.c_size_t
    return so


@pytest.mark.parametrize("n,grid", [(1, (1, 1)), (2, (2, 1)), (3, (3, 1)), (4, (2, 2)),
                                    (5, (3, 2)), (6, (3, 2)), (7, (4, 2)), (8, (4, 2)),
                                    (9, (3, 3)), (10, (5, 2)), (12, (4, 3)), (16, (4, 4)),
                                    (32, (8, 4))])
def test_grid(cli, n, grid):
    c, r = ctypes.c_size_t(), ctypes.c_size_t()
    cli.kw_figure_grid(ctypes.c_size_t(n), ctypes.byref(c), ctypes.byref(r))
    assert (c.value, r.value) == grid


@pytest.mark.parametrize("lo,hi,want", [(-60, 0, [-60, -50, -40, -30, -20, -10, 0]),
                                        (0, 1, [0, 0.2, 0.4, 0.6, 0.8, 1.0]),
                                        (1, 2.3, [1.0, 1.2, 1.4, 1.6, 1.8, 2.0, 2.2]),
                                        (-0.1, 0.1, [-0.1, -0.05, 0, 0.05, 0.1])])
def test_ticks(cli, lo, hi, want):
    t = (ctypes.c_double * 32)()
    step = ctypes.c_double()
    n = cli.kw_figure_ticks(ctypes.c_double(lo), ctypes.c_double(hi), ctypes.c_int(5), t,
                            ctypes.c_size_t(32), ctypes.byref(step))
    assert list(t[:n]) == pytest.approx(want)


@pytest.mark.parametrize("v,step,text", [(0.0, 0.05, "0"), (-0.05, 0.05, "-0.05"), (-60, 10, "-60"),
                                         (1.2, 0.2, "1.2"), (2e-5, 1e-5, "2e-05"), (1e-12, 0.05, "0")])
def test_tick_text(cli, v, step, text):
    buf = ctypes.create_string_buffer(48)
    cli.kw_figure_tick_text(buf, ctypes.c_size_t(48), ctypes.c_double(v), ctypes.c_double(step))
    assert buf.value.decode() == text

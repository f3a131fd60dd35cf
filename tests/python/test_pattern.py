"""kweave.pattern() and kweave.analyse() against `kweave pattern` (the same
options give the same arrays, bit for bit, and the same sidecar and report),
their bad input (the command's messages), odd arrays and repeated calls.

References: the command itself (build/kweave, run by conftest.Cli) and, for
the PSF of a mask, numpy's centred inverse FFT (recon/kw_psf.h states the
PSF is fftshift(ifftn(ifftshift(w))))."""
import os
import sys

import numpy as np
import pytest

import kweave
from conftest import same_bits

# (id, command options, keywords of pattern()): every kind, the values given
# in the command's text on one side and as Python numbers / tuples on the other
CASES = [
    ("full", ["--kind", "full", "--matrix", "32x24"], dict(kind="full", matrix=(32, 24))),
    ("partial", ["--kind", "partial", "--matrix", "64", "--fraction", "0.625"],
     dict(kind="partial", matrix=64, fraction=0.625)),
    ("uniform", ["--kind", "uniform", "--matrix", "64x64", "--accel", "3", "--acs", "12"],
     dict(kind="uniform", matrix="64x64", accel=3, acs=12)),
    ("random", ["--kind", "random", "--matrix", "64x48", "--accel", "4", "--acs", "8",
                "--power", "2", "--seed", "7"],
     dict(kind="random", matrix=(64, 48), accel=4.0, acs="8", power="2", seed=7)),
    ("poisson", ["--kind", "poisson", "--matrix", "48x48x32", "--accel", "2x2", "--acs", "8x6",
                 "--seed", "3"],
     dict(kind="poisson", matrix=(48, 48, 32), accel=(2, 2), acs=(8, 6), seed=3)),
    ("random-3d-ellipse", ["--kind", "random", "--matrix", "32x32x24", "--accel", "3",
                           "--ellipse"],
     dict(kind="random", matrix="32x32x24", accel=3, ellipse=True)),
    ("lattice", ["--kind", "lattice", "--matrix", "32x32x16", "--accel", "2x2", "--shift", "1"],
     dict(kind="lattice", matrix=(32, 32, 16), accel="2x2", shift=1)),
    ("radial", ["--kind", "radial", "--matrix", "48", "--spokes", "40", "--te", "3ms"],
     dict(kind="radial", matrix=48, spokes=40, te="3ms")),
    ("radial-os", ["--kind", "radial", "--matrix", "32", "--readout-oversampling", "2",
                   "--dwell", "20us"],
     dict(kind="radial", matrix=32, readout_oversampling=2, dwell=20e-6)),
    ("golden", ["--kind", "golden", "--matrix", "40", "--spokes", "33"],
     dict(kind="golden", matrix=40, spokes=33)),
    ("tiny-golden", ["--kind", "golden", "--matrix", "40", "--spokes", "21", "--tiny", "5"],
     dict(kind="golden", matrix=40, spokes=21, tiny=5)),
    ("stack-of-stars", ["--kind", "stack-of-stars", "--matrix", "32x32x8", "--spokes", "30"],
     dict(kind="stack-of-stars", matrix=(32, 32, 8), spokes=30)),
    ("spiral", ["--kind", "spiral", "--matrix", "64", "--fov", "220mm", "--gmax", "30mT/m",
                "--slew", "120T/m/s"],
     dict(kind="spiral", matrix=64, fov=0.22, gmax="30mT/m", slew=120.0)),
    ("spiral-interleaves", ["--kind", "spiral", "--matrix", "48", "--interleaves", "6",
                            "--raster", "10us", "--dwell", "2us"],
     dict(kind="spiral", matrix=48, interleaves=6, raster="10us", dwell="2us")),
    ("epi", ["--kind", "epi", "--matrix", "48", "--shots", "2", "--te", "30ms"],
     dict(kind="epi", matrix=48, shots=2, te=0.03)),
    ("epi-partial", ["--kind", "epi", "--matrix", "64", "--fraction", "0.75"],
     dict(kind="epi", matrix=64, fraction=0.75)),
]


MASK_KINDS = ("full", "partial", "uniform", "random", "poisson", "lattice")


def _sidecar_keys(d):
    """The sidecar without the names of the files the command wrote."""
    return {k: v for k, v in d.items() if k != "times"}


@pytest.mark.parametrize("args,kw", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_pattern_same_as_command(cli, args, kw):
    kind = kw.pop("kind")
    mask = kind in MASK_KINDS
    extra = ["--density", "d.npy"] if mask else []
    cli.run("pattern", *args, "--out", "p.npy", *extra)
    r = kweave.pattern(kind, **kw)
    side = cli.json("p.json")
    if mask:
        assert same_bits(r.mask, cli.load("p.npy"))
        assert same_bits(r.density, cli.load("d.npy"))
        assert not hasattr(r, "trajectory")
    else:
        assert same_bits(r.trajectory, cli.load("p.npy"))
        assert same_bits(r.times, cli.load("p_times.npy"))
        assert not hasattr(r, "mask")
    assert r.info is not None
    assert _sidecar_keys(r.info) == _sidecar_keys(side)


def test_pattern_kind_as_keyword_and_positional():
    a = kweave.pattern("uniform", matrix=32, accel=2)
    b = kweave.pattern(kind="uniform", matrix="32x32", accel="2")
    assert same_bits(a.mask, b.mask)
    assert a.mask.flags.c_contiguous and a.mask.dtype == np.uint8
    with pytest.raises(TypeError):
        kweave.pattern("uniform", kind="full", matrix=32)
    with pytest.raises(TypeError, match="did you mean 'accel'"):
        kweave.pattern("uniform", matrix=32, acel=2)


# ---- bad input: the command's message --------------------------------------------

BAD = [  # tests/ref/test_bad_input.py's pattern rows, and the options' own checks
    ("accel-zero", ["--kind", "random", "--matrix", "64x64", "--accel", "0"],
     dict(kind="random", matrix="64x64", accel=0)),
    ("accel-above-matrix", ["--kind", "random", "--matrix", "64x64", "--accel", "100"],
     dict(kind="random", matrix="64x64", accel=100)),
    ("fraction-too-small", ["--kind", "partial", "--matrix", "64x64", "--fraction", "0.3"],
     dict(kind="partial", matrix="64x64", fraction=0.3)),
    ("spokes-negative", ["--kind", "radial", "--matrix", "64x64", "--spokes", "-1"],
     dict(kind="radial", matrix="64x64", spokes=-1)),
    ("gmax-zero", ["--kind", "spiral", "--matrix", "64x64", "--gmax", "0mT/m"],
     dict(kind="spiral", matrix="64x64", gmax="0mT/m")),
    ("gmax-no-unit", ["--kind", "spiral", "--matrix", "64", "--gmax", "40"],
     dict(kind="spiral", matrix=64, gmax="40")),
    ("accel-required", ["--kind", "random", "--matrix", "64"], dict(kind="random", matrix=64)),
    ("accel-on-radial", ["--kind", "radial", "--matrix", "64", "--accel", "2"],
     dict(kind="radial", matrix=64, accel=2)),
    ("radial-3d", ["--kind", "radial", "--matrix", "64x64x8"], dict(kind="radial", matrix=(64, 64, 8))),
    ("matrix-form", ["--kind", "full", "--matrix", "64y64"], dict(kind="full", matrix="64y64")),
    ("matrix-fraction", ["--kind", "full", "--matrix", "64.5"], dict(kind="full", matrix=64.5)),
    ("fraction-required", ["--kind", "partial", "--matrix", "64"], dict(kind="partial", matrix=64)),
    ("fov-on-mask", ["--kind", "full", "--matrix", "64", "--fov", "200mm"],
     dict(kind="full", matrix=64, fov="200mm")),
    ("ros-on-spiral", ["--kind", "spiral", "--matrix", "64", "--readout-oversampling", "2"],
     dict(kind="spiral", matrix=64, readout_oversampling=2)),
    ("interleaves-on-epi", ["--kind", "epi", "--matrix", "64", "--interleaves", "2"],
     dict(kind="epi", matrix=64, interleaves=2)),
    ("te-on-mask", ["--kind", "uniform", "--matrix", "64", "--accel", "2", "--te", "2ms"],
     dict(kind="uniform", matrix=64, accel=2, te="2ms")),
    ("acs-2d-block", ["--kind", "uniform", "--matrix", "64", "--accel", "2", "--acs", "8x8"],
     dict(kind="uniform", matrix=64, accel=2, acs=(8, 8))),
    ("seed-negative", ["--kind", "random", "--matrix", "64", "--accel", "2", "--seed", "-1"],
     dict(kind="random", matrix=64, accel=2, seed=-1)),
    ("tiny-zero", ["--kind", "golden", "--matrix", "64", "--tiny", "0"],
     dict(kind="golden", matrix=64, tiny=0)),
    ("dwell-zero", ["--kind", "radial", "--matrix", "64", "--dwell", "0s"],
     dict(kind="radial", matrix=64, dwell="0s")),
]


@pytest.mark.parametrize("args,kw", [c[1:] for c in BAD], ids=[c[0] for c in BAD])
def test_pattern_bad_input_message(cli, args, kw):
    want = cli.error("pattern", *args)
    kind = kw.pop("kind")
    with pytest.raises(kweave.InputError) as e:
        kweave.pattern(kind, **kw)
    assert str(e.value) == want
    assert isinstance(e.value, ValueError)
    assert e.value.param == want.split(":")[0]


def test_pattern_unknown_kind_lists_the_kinds(cli):
    want = cli.error("pattern", "--kind", "nope", "--matrix", "64x64")
    with pytest.raises(kweave.InputError) as e:
        kweave.pattern("nope", matrix="64x64")
    msg = str(e.value)
    assert msg == want, (msg, want)   # the command lists the kinds too
    for k in ("full", "partial", "uniform", "random", "poisson", "lattice", "radial", "golden",
              "stack-of-stars", "spiral", "epi"):
        assert k in msg
    assert e.value.param == "kind"


@pytest.mark.parametrize("kw", [dict(matrix=64, accel="fast"), dict(matrix=64, accel=None, spokes=1.5),
                                dict(matrix=None), dict(matrix=[64, "x"]), dict(matrix=64, seed="x")])
def test_pattern_bad_types_raise_cleanly(kw):
    with pytest.raises((kweave.InputError, TypeError)):
        kweave.pattern("random", **kw)


# ---- analyse ---------------------------------------------------------------------------

def _report(cli, name):
    """`kweave pattern --analyse NAME --json a.json --psf psf.png`: the report and the
    PSF figure."""
    from skimage.io import imread
    cli.run("pattern", "--analyse", name, "--json", "a.json", "--psf", "psf.png")
    return cli.json("a.json"), imread(cli.path("psf.png"))


def _psf_figure_ok(pic, shape):
    """The command's --psf is a figure (issue 17: dB bar, title; its drawing is
    checked in tests/ref/test_figures.py): RGB, holding at least the grid. The
    package's PSF array itself is checked against numpy above."""
    return pic.ndim == 3 and pic.shape[2] in (3, 4) and \
        pic.shape[0] >= shape[-2] and pic.shape[1] >= shape[-1]


MASKS = [
    ("random", ["--kind", "random", "--matrix", "64x64", "--accel", "4", "--acs", "8"]),
    ("poisson-3d", ["--kind", "poisson", "--matrix", "32x32x24", "--accel", "2x2", "--acs", "6"]),
    ("uniform", ["--kind", "uniform", "--matrix", "48", "--accel", "3"]),
]


@pytest.mark.parametrize("args", [m[1] for m in MASKS], ids=[m[0] for m in MASKS])
def test_analyse_mask_same_as_command(cli, args):
    cli.run("pattern", *args, "--out", "m.npy")
    want, pic = _report(cli, "m.npy")
    cli.sync()
    mask = cli.load("m.npy")
    r = kweave.analyse(mask, info=cli.json("m.json"), name="m.npy")
    psf = r.pop("psf")
    assert r == want
    assert psf.dtype == np.complex64 and psf.shape == tuple(want["psf_grid"])
    # recon/kw_psf.h: psf = fftshift(ifftn(ifftshift(w))) over the full grid
    ref = np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(mask.astype(np.float64))))
    assert np.max(np.abs(psf - ref)) < 1e-6
    assert abs(np.abs(psf[psf.shape[0] // 2, psf.shape[1] // 2]) - want["psf_peak"]) < 1e-6
    assert _psf_figure_ok(pic, psf.shape)
    # the namespace of pattern() itself, without a file: the same figures
    again = kweave.analyse(kweave.pattern(**_kwargs(args)), name="m.npy")
    again.pop("psf")
    assert again == want


def _kwargs(args):
    """Command options -> keywords of pattern() (values as text)."""
    kw = {}
    it = iter(args)
    for a in it:
        key = a[2:].replace("-", "_")
        if key == "ellipse":
            kw[key] = True
        else:
            kw[key] = next(it)
    for k in ("seed", "spokes", "shots", "interleaves", "tiny", "shift", "readout_oversampling"):
        if k in kw:
            kw[k] = int(kw[k])
    return kw


TRAJS = [
    ("radial", ["--kind", "radial", "--matrix", "32", "--spokes", "30"]),
    ("golden-os", ["--kind", "golden", "--matrix", "24", "--spokes", "30",
                   "--readout-oversampling", "2"]),
    ("stack-of-stars", ["--kind", "stack-of-stars", "--matrix", "24x24x4", "--spokes", "20"]),
    ("spiral", ["--kind", "spiral", "--matrix", "32", "--interleaves", "4"]),
    ("epi", ["--kind", "epi", "--matrix", "32"]),
]


@pytest.mark.parametrize("args", [t[1] for t in TRAJS], ids=[t[0] for t in TRAJS])
def test_analyse_trajectory_same_as_command(cli, args):
    cli.run("pattern", *args, "--out", "t.npy")
    want, pic = _report(cli, "t.npy")
    cli.sync()
    r = kweave.analyse(cli.load("t.npy"), info=cli.json("t.json"), name="t.npy")
    psf = r.pop("psf")
    assert r == want
    assert psf.dtype == np.complex64 and psf.shape == tuple(want["psf_grid"])
    m = psf.shape[0]
    assert abs(np.abs(psf[m // 2, m // 2]) - want["psf_peak"]) < 1e-6 * max(1, want["psf_peak"])
    assert _psf_figure_ok(pic, psf.shape)


def test_analyse_psf_size_and_keywords_instead_of_info(cli):
    cli.run("pattern", "--kind", "radial", "--matrix", "32", "--spokes", "20", "--out", "t.npy")
    cli.run("pattern", "--analyse", "t.npy", "--json", "a.json", "--psf-size", "16")
    want = cli.json("a.json")
    cli.sync()
    r = kweave.analyse(cli.load("t.npy"), kind="radial", matrix=32, readout_samples=32,
                       psf_size=16, name="t.npy")
    assert r.pop("psf").shape == (16, 16)
    assert r == want
    with pytest.raises(kweave.InputError, match="psf-size"):
        kweave.analyse(cli.load("t.npy"), kind="radial", matrix=32, readout_samples=32,
                       psf_size=4)


def test_analyse_mask_without_sidecar(cli):
    """No sidecar: the command tells ky lines from a ky-kz plane by the rows."""
    m = kweave.pattern("poisson", matrix=(32, 32, 24), accel=(2, 2)).mask
    path = cli.save("plane.npy", m)
    cli.run("pattern", "--analyse", path, "--json", "a.json")
    cli.sync()
    r = kweave.analyse(m, name="plane.npy")
    r.pop("psf")
    assert r == cli.json("a.json")


def test_analyse_bad_input(cli):
    nan = np.full((10, 2), np.nan, np.float32)
    path = cli.save("traj_nan.npy", nan)
    want = cli.error("pattern", "--analyse", path)
    with pytest.raises(kweave.InputError) as e:
        kweave.analyse(nan)
    assert str(e.value).split(": ", 1)[1] == want.split(": ", 1)[1]  # the file vs "pattern"
    with pytest.raises(kweave.InputError, match="not complex"):
        kweave.analyse(np.ones((8, 8), np.complex64))
    with pytest.raises(kweave.InputError, match="2-D"):
        kweave.analyse(np.ones((2, 8, 8), np.uint8))
    with pytest.raises(kweave.InputError, match="negative weight"):
        kweave.analyse(np.full((8, 8), -1, np.float32), kind="random")
    with pytest.raises(kweave.InputError, match="sidecar"):
        kweave.analyse(np.zeros((64, 2), np.float32) - 1)
    with pytest.raises(kweave.InputError, match="nothing|sampled"):
        kweave.analyse(np.zeros((8, 8), np.uint8))
    with pytest.raises(kweave.InputError):
        kweave.analyse("not an array")
    with pytest.raises(kweave.InputError, match="info"):
        kweave.analyse(np.ones((8, 8), np.uint8), info=[1, 2])


def test_analyse_odd_arrays_work():
    """bool, int64, float64, Fortran order, strided and read-only masks give the
    same report as the uint8 mask; a float64 trajectory as its float32."""
    r = kweave.pattern("random", matrix=32, accel=3, acs=4)
    base = kweave.analyse(r.mask, kind="random")
    base_psf = base.pop("psf")
    ro = r.mask.copy()
    ro.flags.writeable = False
    big = np.zeros((32, 64), np.uint8)
    big[:, ::2] = r.mask
    for m in (r.mask.astype(bool), ro, np.asfortranarray(r.mask), big[:, ::2]):
        a = kweave.analyse(m, kind="random")
        assert same_bits(a.pop("psf"), base_psf)
        assert a == base
    t = kweave.pattern("radial", matrix=24, spokes=20)
    tb = kweave.analyse(t)
    tb.pop("psf")
    ta = kweave.analyse(t.trajectory.astype(np.float64), info=t.info)
    ta.pop("psf")
    assert ta == tb


# ---- memory and references ------------------------------------------------------------

def _rss_pages():
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1])


def test_repeated_calls_keep_memory_flat():
    """Small patterns (the loop is about memory, not speed); a 16 x 16 mask
    still goes through the TPSF's wavelets."""
    mask = kweave.pattern("uniform", matrix=16, accel=2, acs=4).mask
    traj = kweave.pattern("radial", matrix=8, spokes=6)
    info = traj.info
    refs = (sys.getrefcount(mask), sys.getrefcount(traj.trajectory), sys.getrefcount(info))

    def once():
        p = kweave.pattern("random", matrix=(16, 16, 8), accel=(2, 1), seed=1)
        q = kweave.pattern("spiral", matrix=16, interleaves=2)
        a = kweave.analyse(mask, kind="uniform")
        b = kweave.analyse(traj.trajectory, info=info)
        for bad in (dict(matrix=32, accel=0), dict(matrix="3y")):
            try:
                kweave.pattern("random", **bad)
            except kweave.InputError:
                pass
        for bad in (np.zeros((8, 8), np.uint8), np.ones((2, 8, 8))):
            try:
                kweave.analyse(bad)
            except kweave.InputError:
                pass
        return p, q, a, b

    for _ in range(50):
        once()
    before = _rss_pages()
    for _ in range(1000):
        once()
    grown = (_rss_pages() - before) * os.sysconf("SC_PAGE_SIZE")
    assert grown < 2 * 1024 * 1024, f"RSS grew by {grown} bytes over 1000 calls"
    assert (sys.getrefcount(mask), sys.getrefcount(traj.trajectory), sys.getrefcount(info)) == refs

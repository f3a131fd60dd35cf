"""kweave.Acquisition / kweave.acquire against `kweave encode`: the same
arrays bit for bit, the sidecar's library keys, the command's messages for
bad values, arrays of any kind handled cleanly, and flat memory."""
import gc
import os
import re
import sys

import numpy as np
import pytest

import kweave
from conftest import same_bits

BASE = dict(phantom="shepp-logan", matrix=32, fov="256mm")
ENC = ["encode", "--phantom", "shepp-logan", "--matrix", "32", "--fov", "256mm"]


def norm(msg, renames=()):
    """The command's message in the package's words: no dashes before the
    option names; the file options' names as the keywords."""
    msg = re.sub(r"--(?!help)", "", msg)
    head, sep, rest = msg.partition(": ")
    msg = head.replace("-", "_") + sep + rest
    for old, new in renames:
        if msg.startswith(old + ":"):
            msg = new + msg[len(old):]
    return msg


def check_info(info, sidecar, path="info"):
    """Every key of the library's dict is in the command's sidecar, equal
    (the command writes "--tissue" for the library's tissue "source":
    "caller"; it adds keys that name files)."""
    assert info, "empty info"
    assert isinstance(info, dict)
    for k, v in info.items():
        assert k in sidecar, f"{path}.{k}"
        if isinstance(v, dict):
            check_info(v, sidecar[k], f"{path}.{k}")
        elif k == "source" and v == "caller":
            assert sidecar[k] == "--tissue"
        else:
            assert sidecar[k] == v, (f"{path}.{k}", sidecar[k], v)


def test_cartesian_mask_same_bits(cli):
    cli.run("pattern", "--kind", "uniform", "--matrix", "32x32", "--accel", "2", "--acs", "8",
            "--out", "mask.npy")
    cli.run(*ENC, "--coils", "4", "--snr", "30", "--seed", "7", "--sequence", "gre", "--te",
            "5ms", "--tr", "50ms", "--flip", "20", "--bandwidth", "250Hz/pixel",
            "--pattern", "mask.npy", "--out", "ks.npy", "--truth", "truth.npy",
            "--sens-out", "maps.npy")
    cli.sync()
    mask = cli.load("mask.npy")
    r = kweave.acquire(**BASE, coils=4, snr=30, seed=7, sequence="gre", te="5ms", tr=0.05,
                       flip=20, bandwidth="250Hz/pixel", mask=mask)
    assert r.kspace.dtype == np.complex64 and r.kspace.flags.c_contiguous
    assert same_bits(r.kspace, cli.load("ks.npy"))
    assert same_bits(r.truth, cli.load("truth.npy"))
    assert same_bits(r.maps, cli.load("maps.npy"))
    assert same_bits(r.noise_cov, cli.load("ks_noise_cov.npy"))
    check_info(r.info, cli.json("ks.json"))
    # repeatable: the noise is seeded
    a = kweave.Acquisition(**BASE, coils=4, snr=30, seed=7, sequence="gre", te="5ms",
                           tr=0.05, flip=20, bandwidth="250Hz/pixel", mask=mask)
    assert a.shape == (4, 32, 32)
    assert same_bits(a.run().kspace, a.run().kspace)
    assert a.info == r.info
    with pytest.raises(TypeError, match="already initialised"):
        a.__init__(**BASE)
    with pytest.raises(TypeError, match="not initialised"):
        kweave.Acquisition.__new__(kweave.Acquisition).run()


def test_trajectory_same_bits(cli):
    cli.run("pattern", "--kind", "radial", "--matrix", "32x32", "--spokes", "24",
            "--out", "traj.npy")
    cli.run(*ENC, "--coils", "4", "--trajectory", "traj.npy", "--times", "traj_times.npy",
            "--bandwidth", "32kHz", "--df", "30Hz", "--out", "ks.npy", "--truth", "truth.npy")
    cli.sync()
    traj = cli.load("traj.npy")
    r = kweave.acquire(**BASE, coils=4, trajectory=traj, times=cli.load("traj_times.npy"),
                       bandwidth=32000.0, df="30Hz")
    assert r.kspace.shape == (4, traj.shape[0])
    assert same_bits(r.kspace, cli.load("ks.npy"))
    assert same_bits(r.truth, cli.load("truth.npy"))
    assert r.noise_cov is None
    check_info(r.info, cli.json("ks.json"))


def test_single_channel_no_maps(cli):
    cli.run("encode", "--phantom", "shepp-logan", "--out", "ks.npy", "--fov", "240mm,200mm",
            "--matrix", "32x24")
    cli.sync()
    r = kweave.acquire(phantom="shepp-logan", matrix=(32, 24), fov=("240mm", 0.2))
    assert r.maps is None
    assert same_bits(r.kspace, cli.load("ks.npy"))
    check_info(r.info, cli.json("ks.json"))


def test_given_maps_tissue_noise_cov(cli):
    rng = np.random.default_rng(3)
    sens = (rng.standard_normal((3, 32, 32)) + 1j * rng.standard_normal((3, 32, 32)))
    sens = (0.3 * sens).astype(np.complex64)
    cov = np.eye(3, dtype=np.complex64) + 0.2
    tissue = {"white-matter": {"pd": 0.7}}
    cli.save("sens.npy", sens)
    cli.save("cov.npy", cov)
    with open(cli.path("t.json"), "w") as f:
        import json
        json.dump(tissue, f)
    cli.run("encode", "--phantom", "weave", "--matrix", "32", "--fov", "256mm", "--sens", "sens.npy", "--noise-cov", "cov.npy", "--snr", "15",
            "--tissue", "t.json", "--out", "ks.npy", "--sens-out", "maps.npy")
    cli.sync()
    r = kweave.acquire(phantom="weave", matrix=32, fov="256mm", sens=sens, noise_cov=cov, snr=15,
                       tissue=tissue)
    assert same_bits(r.kspace, cli.load("ks.npy"))
    assert same_bits(r.maps, cli.load("maps.npy"))
    check_info(r.info, cli.json("ks.json"))


def test_fields_and_slices_same_bits(cli):
    fmap = (20 * np.outer(np.linspace(-1, 1, 32), np.ones(32))).astype(np.float32)
    cli.save("fm.npy", fmap)
    cli.run("encode", "--phantom", "weave", "--matrix", "32", "--fov", "256mm", "--bandwidth",
            "200Hz/pixel", "--field-map", "fm.npy", "--out", "ks.npy")
    cli.sync()
    r = kweave.acquire(phantom="weave", matrix=32, fov="256mm", bandwidth="200Hz/pixel",
                       field_map=fmap)
    assert same_bits(r.kspace, cli.load("ks.npy"))
    check_info(r.info, cli.json("ks.json"))
    cli.run("encode", "--phantom", "weave3d", "--matrix", "32", "--fov", "256mm", "--slices", "2",
            "--slice-thickness", "4mm", "--slice-gap", "1mm", "--slice-points", "4", "--coils", "2",
            "--coil-order", "2", "--field-gradient", "20uT/m,0", "--bandwidth", "32kHz",
            "--out", "ks.npy", "--truth", "t.npy")
    cli.sync()
    r = kweave.acquire(phantom="weave3d", matrix=32, fov=0.256, slices=2, slice_thickness="4mm",
                       slice_gap=0.001, slice_points=4, coils=2, coil_order=2,
                       field_gradient=("20uT/m", 0), bandwidth="32kHz")
    assert r.kspace.shape == (2, 2, 32, 32)
    assert same_bits(r.kspace, cli.load("ks.npy"))
    assert same_bits(r.truth, cli.load("t.npy"))
    check_info(r.info, cli.json("ks.json"))
    # the command's name of the mask is accepted too
    m = np.ones(32)
    assert same_bits(kweave.acquire(**BASE, pattern=m).kspace, kweave.acquire(**BASE, mask=m).kspace)


# ---- errors: the command's message -------------------------------------------

@pytest.mark.parametrize("args,kw", [
    (["--phantom", "nope"], dict(phantom="nope")),
    (["--matrix", "0"], dict(matrix=0)),
    (["--matrix", "99999x99999"], dict(matrix="99999x99999")),
    (["--fov", "-1mm"], dict(fov="-1mm")),
    (["--snr", "-3"], dict(snr=-3)),
    (["--coils", "0"], dict(coils=0)),
    (["--noise-corr", "0.5"], dict(noise_corr=0.5)),
    (["--sequence", "gre", "--te", "10ms", "--tr", "5ms"], dict(sequence="gre", te="10ms", tr="5ms")),
    (["--sequence", "xx"], dict(sequence="xx")),
    (["--coil-order", "9", "--coils", "2"], dict(coil_order=9, coils=2)),
    (["--bandwidth", "-3kHz"], dict(bandwidth="-3kHz")),
    (["--te", "5"], dict(te="5")),
])
def test_errors_as_command(cli, args, kw):
    base = dict(phantom="shepp-logan", matrix=32, fov="256mm")
    base.update(kw)
    cmd = list(ENC)
    for i in range(0, len(args), 2):
        if args[i] in cmd:
            cmd[cmd.index(args[i]) + 1] = args[i + 1]
        else:
            cmd += args[i:i + 2]
    want = norm(cli.error(*cmd, "--out", "k.npy"))
    with pytest.raises(kweave.InputError) as e:
        kweave.Acquisition(**base)
    assert str(e.value) == want
    assert isinstance(e.value, ValueError)
    assert e.value.param == want.split(":")[0]


def test_array_errors_as_command(cli):
    bad_mask = np.ones((5, 7), np.uint8)
    cli.save("mask_bad.npy", bad_mask)
    want = norm(cli.error(*ENC, "--pattern", "mask_bad.npy", "--out", "k.npy"), [("pattern", "mask")])
    with pytest.raises(kweave.InputError) as e:
        kweave.acquire(**BASE, mask=bad_mask)
    assert str(e.value) == want and e.value.param == "mask"
    traj = np.zeros((10, 2), np.float32)
    traj[3, 1] = np.nan
    cli.save("traj_nan.npy", traj)
    want = norm(cli.error(*ENC, "--trajectory", "traj_nan.npy", "--out", "k.npy"))
    with pytest.raises(kweave.InputError) as e:
        kweave.acquire(**BASE, trajectory=traj)
    assert str(e.value) == want


def test_missing_and_unknown_keywords():
    with pytest.raises(kweave.InputError, match="snr: must be a positive number"):
        kweave.acquire(**BASE, snr=-1.5)
    # as the command's --snr nan (kw_acquisition_input reads both)
    with pytest.raises(kweave.InputError, match="snr: 'nan' is not a number"):
        kweave.acquire(**BASE, snr=float("nan"))
    with pytest.raises(kweave.InputError, match="phantom: missing"):
        kweave.acquire(matrix=32, fov="256mm")
    with pytest.raises(kweave.InputError, match="matrix: missing"):
        kweave.acquire(phantom="weave", fov="256mm")
    with pytest.raises(TypeError, match="did you mean 'coils'"):
        kweave.acquire(**BASE, coil=4)
    with pytest.raises(TypeError):
        kweave.Acquisition(1, 2)
    with pytest.raises(kweave.InputError, match="give mask .Cartesian. or trajectory"):
        kweave.acquire(**BASE, mask=np.ones(32), trajectory=np.zeros((4, 2)))
    with pytest.raises(kweave.InputError, match="tissue: unknown tissue"):
        kweave.acquire(**BASE, tissue={"bone": {"pd": 1}})


@pytest.mark.parametrize("bad", [
    np.array(["a", "b"]), np.ones((32, 32), np.complex64), np.ones((2, 2, 2, 2)), "mask",
    [[object()]], np.zeros(0),
])
def test_bad_arrays_raise_cleanly(bad):
    with pytest.raises((kweave.InputError, TypeError)):
        kweave.acquire(**BASE, mask=bad)


def test_array_layouts_give_the_same_bits():
    rng = np.random.default_rng(1)
    big = (rng.random((32, 64)) > 0.5).astype(np.float64)
    strided = big[:, ::2]
    ref = kweave.acquire(**BASE, mask=np.ascontiguousarray(strided)).kspace
    assert same_bits(kweave.acquire(**BASE, mask=strided).kspace, ref)
    ro = np.ascontiguousarray(strided)
    ro.setflags(write=False)
    assert same_bits(kweave.acquire(**BASE, mask=ro).kspace, ref)
    assert same_bits(kweave.acquire(**BASE, mask=np.asfortranarray(strided).astype(bool)).kspace, ref)
    assert same_bits(kweave.acquire(**BASE, mask=strided.tolist()).kspace, ref)


def test_arrays_are_copied():
    mask = np.ones((32, 32), np.uint8)
    a = kweave.Acquisition(**BASE, mask=mask)
    before = a.run().kspace
    mask[:] = 0  # the object owns its copy
    assert same_bits(a.run().kspace, before)


# ---- memory -------------------------------------------------------------------

def rss_bytes():
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1]) * os.sysconf("SC_PAGE_SIZE")


@pytest.fixture
def one_thread():
    """OpenMP on one thread while the loop runs (on a loaded machine each
    parallel region can cost a scheduler slice); restored after."""
    import ctypes
    try:
        gomp = ctypes.CDLL("libgomp.so.1")
    except OSError:
        yield
        return
    n = gomp.omp_get_max_threads()
    gomp.omp_set_num_threads(1)
    yield
    gomp.omp_set_num_threads(n)


def test_memory_flat_and_refcounts(one_thread):
    mask = np.ones((16, 16), np.uint8)
    traj = np.zeros((8, 2), np.float32)
    refs = (sys.getrefcount(mask), sys.getrefcount(traj))
    a = kweave.Acquisition(phantom="shepp-logan", matrix=16, fov="256mm", coils=2, coil_order=1,
                           snr=10, mask=mask)
    for _ in range(50):
        a.run()
    gc.collect()
    r0 = rss_bytes()
    for _ in range(1000):
        r = a.run()
        assert r.info
    gc.collect()
    grow = rss_bytes() - r0
    assert grow < 4 << 20, grow
    del a, r
    for _ in range(200):
        kweave.acquire(phantom="shepp-logan", matrix=16, fov="256mm", trajectory=traj)
    gc.collect()
    assert (sys.getrefcount(mask), sys.getrefcount(traj)) == refs


def test_coil_tolerance_keyword_is_the_commands(cli):
    """Issue 19: coil_tolerance= is encode's --coil-tolerance (the library's
    acquisition input): the same sidecar, and the same refusal."""
    cli.run("encode", "--phantom", "weave", "--matrix", "64", "--fov", "240mm", "--coils", "4",
            "--coil-tolerance", "0.02", "--out", "k.npy")
    cli.sync()
    a = kweave.acquire(phantom="weave", matrix=64, fov="240mm", coils=4, coil_tolerance=0.02)
    want = cli.json("k.json")["coil_model"]
    assert a.info["coil_model"]["fit_tolerance"] == want["fit_tolerance"] == 0.02
    assert a.info["coil_model"]["fit_max_error"] == want["fit_max_error"]
    assert max(want["fit_max_error"]) <= 0.02
    with pytest.raises(kweave.InputError, match="not met by any series order") as e:
        kweave.acquire(phantom="weave", matrix=64, fov="240mm", coils=4, coil_tolerance=1e-9)
    assert e.value.param == "coil_tolerance"

"""kweave.Recon / kweave.recon against `kweave recon`: every method, the
same image (and g-factor) bit for bit, the report's library keys, the
command's messages for bad values, arrays of any kind handled cleanly, and
flat memory. The k-space is made by kweave.acquire (test_acquire.py checks
it equals `kweave encode`) and saved without a sidecar unless a test writes
one."""
import gc
import json
import os
import re
import sys

import numpy as np
import pytest

import kweave
from conftest import same_bits

N = 32
COILS = 4
ITER = ["--iterations", "4"]


def check_report(report, cli_report, path="report"):
    """Every key of the library's report is in the command's, equal (the
    command adds the names of its files, and names the given maps' and
    weights' files where the library says "given")."""
    assert report, "empty report"
    for k, v in report.items():
        assert k in cli_report, f"{path}.{k}"
        if isinstance(v, dict):
            check_report(v, cli_report[k], f"{path}.{k}")
        elif k == "sens_source" and v == "given":
            assert cli_report[k].startswith("file (")  # where the command read them
        elif k == "dcf" and v == "given":
            assert cli_report[k].endswith(".npy")  # the command names the weights' file
        else:
            assert cli_report[k] == v, (f"{path}.{k}", cli_report[k], v)


def norm(msg, renames=()):
    msg = re.sub(r"--(?!help)", "", msg)
    head, sep, rest = msg.partition(": ")
    msg = head.replace("-", "_") + sep + rest
    for old, new in renames:
        if msg.startswith(old + ":"):
            msg = new + msg[len(old):]
    return msg


_masks = {}


def mask(cli, kind):
    """A Cartesian mask of `kweave pattern` (made once per session)."""
    if kind not in _masks:
        args = {"uniform": ["--accel", "2", "--acs", "10"],
                "partial": ["--fraction", "0.625"]}[kind]
        cli.run("pattern", "--kind", kind, "--matrix", f"{N}x{N}", *args, "--out", f"m_{kind}.npy")
        _masks[kind] = cli.load(f"m_{kind}.npy")
    return _masks[kind]


def cartesian(cli, kind="uniform", **kw):
    r = kweave.acquire(phantom="shepp-logan", matrix=N, fov="256mm", coils=COILS, snr=40,
                       seed=2, mask=mask(cli, kind), **kw)
    cli.save("ks.npy", r.kspace)
    return r


def radial(cli):
    if "radial" not in _masks:
        cli.run("pattern", "--kind", "radial", "--matrix", f"{N}x{N}", "--spokes", "40",
                "--out", "traj.npy")
        _masks["radial"] = cli.load("traj.npy")
    traj = _masks["radial"]
    cli.save("traj.npy", traj)
    r = kweave.acquire(phantom="shepp-logan", matrix=N, fov="256mm", coils=COILS, snr=40,
                       trajectory=traj)
    cli.save("ks.npy", r.kspace)
    return r, traj


def run_both(cli, ks, cli_args, gfactor=False, **kw):
    extra = ["--gfactor", "g.npy"] if gfactor else []
    cli.run("recon", "--in", "ks.npy", "--out", "img.npy", "--json", "rep.json", *cli_args, *extra)
    cli.sync()
    out = kweave.recon(ks, gfactor=gfactor, **kw)
    assert same_bits(out.image, cli.load("img.npy"))
    if gfactor:
        assert same_bits(out.gfactor, cli.load("g.npy"))
    else:
        assert out.gfactor is None
    check_report(out.report, cli.json("rep.json"))
    return out


CARTESIAN = [
    ("fft", "uniform", [], {}),
    ("fft", "uniform", ["--combine", "optimal"], dict(combine="optimal")),
    ("homodyne", "partial", [], {}),
    ("pocs", "partial", ITER, dict(iterations=4)),
    ("sense", "uniform", ["--lambda", "0.01"], {"lambda": 0.01}),
    ("grappa", "uniform", ["--kernel", "2x3"], dict(kernel=(2, 3))),
    ("cg-sense", "uniform", ITER, dict(iterations=4)),
    ("cs-wavelet", "uniform", ITER + ["--lambda", "0.005"], dict(iterations=4, lambda_=0.005)),
    ("cs-tv", "uniform", ITER, dict(iterations=4)),
    ("cs-wavelet-admm", "uniform", ITER, dict(iterations=4)),
    ("cs-tv-admm", "uniform", ITER + ["--stop", "1e-3"], dict(iterations=4, stop=1e-3)),
]


@pytest.mark.parametrize("method,kind,args,kw", CARTESIAN,
                         ids=[f"{c[0]}{'-' + c[2][1] if c[2] and c[0] == 'fft' else ''}" for c in CARTESIAN])
def test_cartesian_methods_same_bits(cli, method, kind, args, kw):
    r = cartesian(cli, kind)
    run_both(cli, r.kspace, ["--method", method] + args, method=method, **kw)


def test_methods_are_all_covered():
    names = {m["name"] for m in kweave.recon_methods()}
    assert names == {c[0] for c in CARTESIAN} | {"grid"}
    for m in kweave.recon_methods():
        assert m["summary"] and isinstance(m["cartesian"], bool)


def test_gfactor_sense_and_grappa(cli):
    r = cartesian(cli)
    out = run_both(cli, r.kspace, ["--method", "sense"], gfactor=True, method="sense")
    assert out.gfactor.dtype == np.float32
    run_both(cli, r.kspace, ["--method", "grappa", "--replicas", "3", "--seed", "5"],
             gfactor=True, method="grappa", replicas=3, seed=5)


def test_keep_coils_and_estimated_sens(cli):
    r = cartesian(cli)
    out = run_both(cli, r.kspace, ["--keep-coils"], keep_coils=True)
    assert out.image.dtype == np.complex64 and out.image.shape == (COILS, N, N)
    cli.run("recon", "--in", "ks.npy", "--out", "img.npy", "--sens-out", "s.npy", "--json", "rep.json")
    out = kweave.recon(r.kspace, estimate_sens=True)
    assert same_bits(out.sens, cli.load("s.npy"))
    check_report(out.report, cli.json("rep.json"))


def test_geometry_sens_noise_cov_claims(cli):
    """Maps, noise covariance and the sidecar's sampling claims."""
    cov = (np.eye(COILS) + 0.1).astype(np.complex64)
    r = cartesian(cli, noise_cov=cov)
    cli.save("maps.npy", r.maps)
    cli.save("cov.npy", r.noise_cov)
    with open(cli.path("ks.json"), "w") as f:
        json.dump({"kind": "kspace", "acceleration": r.info["acceleration"],
                   "acs_lines": r.info["acs_lines"], "sens": "maps.npy", "noise_cov": "cov.npy"}, f)
    out = run_both(cli, r.kspace, ["--method", "sense"], method="sense", sens=r.maps,
                   noise_cov=r.noise_cov, acceleration=r.info["acceleration"],
                   acs_lines=r.info["acs_lines"])
    assert out.report.get("prewhitened") is True
    rec = kweave.Recon(r.kspace.shape, method="sense", sens=r.maps, noise_cov=r.noise_cov)
    assert rec.shape == r.kspace.shape and rec.image_shape == (N, N) and rec.method == "sense"
    assert same_bits(rec.run(r.kspace).image, out.image)
    assert same_bits(rec.run(r.kspace).image, out.image)  # repeatable


NONCART = [
    ("grid", [], {}),
    ("grid", ["--dcf", "pipe"], dict(dcf="pipe")),
    ("cg-sense", ITER, dict(iterations=4)),
    ("cs-wavelet", ITER, dict(iterations=4)),
    ("cs-tv", ITER, dict(iterations=4)),
    ("cs-wavelet-admm", ITER, dict(iterations=4)),
    ("cs-tv-admm", ITER, dict(iterations=4)),
]


@pytest.mark.parametrize("method,args,kw", NONCART, ids=[f"{c[0]}{'-pipe' if c[1][:1] == ['--dcf'] else ''}" for c in NONCART])
def test_noncartesian_methods_same_bits(cli, method, args, kw):
    r, traj = radial(cli)
    out = run_both(cli, r.kspace, ["--trajectory", "traj.npy", "--method", method] + args,
                   method=method, trajectory=traj, **kw)
    if method == "grid":
        assert out.weights is not None and out.weights.shape == (traj.shape[0],)


def test_noncartesian_given_weights_and_image_shape(cli):
    r, traj = radial(cli)
    w = np.linalg.norm(traj, axis=1).astype(np.float32) + 0.5
    cli.save("w.npy", w)
    with open(cli.path("ks.json"), "w") as f:
        json.dump({"kind": "kspace", "trajectory": "traj.npy", "matrix": [36, 40]}, f)
    out = run_both(cli, r.kspace, ["--dcf", "w.npy", "--dcf-out", "wo.npy"], trajectory=traj,
                   dcf=w, image_shape=(40, 36))
    assert out.image.shape == (40, 36)
    assert same_bits(out.weights, cli.load("wo.npy"))
    out2 = kweave.recon(r.kspace, trajectory=traj, weights=w, image_shape=(40, 36))
    assert same_bits(out2.image, out.image)


# ---- errors: the command's message ---------------------------------------------

@pytest.mark.parametrize("args,kw", [
    (["--method", "nope"], dict(method="nope")),
    (["--method", "grid"], dict(method="grid")),
    (["--iterations", "-3"], dict(iterations=-3)),
    (["--lambda", "-1", "--method", "sense"], dict(method="sense", lambda_=-1)),
    (["--kernel", "3y4"], dict(kernel="3y4")),
    (["--kernel", "0x4"], dict(kernel=(0, 4))),
    (["--replicas", "1"], dict(replicas=1)),
    (["--combine", "best"], dict(combine="best")),
    (["--tolerance", "-1"], dict(tolerance=-1.0)),
    (["--stop", "2", "--method", "cg-sense"], dict(stop=2.0, method="cg-sense")),
])
def test_errors_as_command(cli, args, kw):
    ks = np.ones((2, 8, 8), np.complex64)
    cli.save("ks.npy", ks)
    want = norm(cli.error("recon", "--in", "ks.npy", "--out", "o.npy", *args))
    with pytest.raises(kweave.InputError) as e:
        kweave.recon(ks, **kw)
    assert str(e.value) == want
    assert e.value.param == want.split(":")[0]


def test_array_errors_as_command(cli):
    ks = np.ones((2, 8, 8), np.complex64)
    bad = ks.copy()
    bad[1, 2, 3] = np.nan
    cli.save("ks.npy", bad)
    want = norm(cli.error("recon", "--in", "ks.npy", "--out", "o.npy"), [("in", "kspace")])
    with pytest.raises(kweave.InputError) as e:
        kweave.recon(bad)
    assert str(e.value) == want
    cli.save("ks.npy", ks.real)
    want = norm(cli.error("recon", "--in", "ks.npy", "--out", "o.npy"), [("in", "kspace")])
    with pytest.raises(kweave.InputError) as e:
        kweave.recon(ks.real)
    assert str(e.value) == want
    cli.save("ks.npy", ks)
    small = np.ones((2, 4, 4), np.complex64)
    cli.save("small.npy", small)
    want = norm(cli.error("recon", "--in", "ks.npy", "--out", "o.npy", "--sens", "small.npy"))
    with pytest.raises(kweave.InputError) as e:
        kweave.recon(ks, sens=small)
    assert str(e.value) == want
    traj = np.zeros((5, 2), np.float32)
    cli.save("traj.npy", traj)
    want = norm(cli.error("recon", "--in", "ks.npy", "--out", "o.npy", "--trajectory", "traj.npy"),
                [("in", "kspace")])
    with pytest.raises(kweave.InputError) as e:
        kweave.recon(ks, trajectory=traj)
    assert str(e.value) == want


def test_run_checks_its_input():
    rec = kweave.Recon((2, 8, 8))
    with pytest.raises(kweave.InputError, match="kspace: has the shape"):
        rec.run(np.ones((2, 8, 6), np.complex64))
    with pytest.raises(kweave.InputError, match="kspace"):
        rec.run(np.array([["a"]]))
    with pytest.raises(kweave.InputError, match="kspace"):
        rec.run(None)
    with pytest.raises(kweave.InputError, match="kspace"):
        rec.run(np.ones((1, 2, 8, 8, 1), np.complex64))
    with pytest.raises(TypeError, match="did you mean 'lambda'"):
        kweave.Recon((2, 8, 8), lamda=1)
    with pytest.raises(kweave.InputError, match="image_shape: only for non-Cartesian"):
        kweave.Recon((2, 8, 8), image_shape=(8, 8))
    with pytest.raises(kweave.InputError, match="dcf"):
        kweave.Recon((2, 8, 8), dcf="ramp")
    with pytest.raises(kweave.InputError, match="kspace"):
        kweave.Recon((2, 1, 8))
    with pytest.raises(kweave.InputError, match="trajectory"):
        kweave.Recon((2, 8), trajectory=np.ones((8, 2), np.complex64))
    with pytest.raises(kweave.InputError, match="sens"):
        kweave.Recon((2, 8, 8), sens=np.array(["x"]))
    with pytest.raises((kweave.InputError, TypeError)):
        kweave.Recon("abc")
    with pytest.raises(TypeError, match="already initialised"):
        rec.__init__((2, 8, 8))
    with pytest.raises(TypeError, match="not initialised"):
        kweave.Recon.__new__(kweave.Recon).run(np.ones((2, 8, 8), np.complex64))
    assert kweave.Recon(np.array([2, 8, 8])).shape == (2, 8, 8)
    assert kweave.recon(np.ones((8, 8), np.complex64)).image.shape == (8, 8)
    assert kweave.recon(np.ones((2, 8, 8), np.complex128).tolist()).image.shape == (8, 8)


def test_array_layouts_give_the_same_bits(cli):
    r = cartesian(cli)
    big = np.zeros((COILS, N, 2 * N), np.complex64)
    big[:, :, ::2] = r.kspace
    strided = big[:, :, ::2]
    ref = kweave.recon(r.kspace, method="sense").image
    assert same_bits(kweave.recon(strided, method="sense").image, ref)
    ro = r.kspace.copy()
    ro.setflags(write=False)
    assert same_bits(kweave.recon(ro, method="sense").image, ref)
    assert same_bits(kweave.recon(np.asfortranarray(r.kspace), method="sense").image, ref)
    rec = kweave.Recon(r.kspace.shape, method="sense", sens=r.maps[:, :, :])
    maps_ro = r.maps.copy()
    maps_ro.setflags(write=False)
    assert same_bits(kweave.Recon(r.kspace.shape, method="sense", sens=maps_ro).run(ro).image,
                     rec.run(strided).image)


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
    rng = np.random.default_rng(0)
    ks = (rng.standard_normal((2, 16, 16)) + 1j * rng.standard_normal((2, 16, 16))).astype(np.complex64)
    sens = np.ones((2, 16, 16), np.complex64)
    refs = (sys.getrefcount(ks), sys.getrefcount(sens))
    rec = kweave.Recon(ks.shape, method="sense", sens=sens, gfactor=True)
    for _ in range(50):
        rec.run(ks)
    gc.collect()
    r0 = rss_bytes()
    for _ in range(1000):
        out = rec.run(ks)
        assert out.report
    gc.collect()
    grow = rss_bytes() - r0
    assert grow < 4 << 20, grow
    assert (sys.getrefcount(ks), sys.getrefcount(sens)) == refs
    del rec, out
    for _ in range(200):
        kweave.recon(ks, sens=sens, method="cg-sense", iterations=1)
    gc.collect()
    assert (sys.getrefcount(ks), sys.getrefcount(sens)) == refs


def test_threads_and_option_strings(cli):
    """Calls from several threads, on one object and on several (each
    creates and runs FFTW plans: the library locks its planner), give the
    same bytes and do not crash; the option strings the library keeps are
    the object's own. Without a planner lock, 3 of 5 runs of this test failed
    or crashed (SIGFPE inside FFTW's planner)."""
    from concurrent.futures import ThreadPoolExecutor
    r = cartesian(cli)
    rec = kweave.Recon(r.kspace.shape, method="sense", combine="".join(["opt", "imal"]))
    gc.collect()
    ref = rec.run(r.kspace).image
    with ThreadPoolExecutor(4) as ex:
        outs = list(ex.map(lambda _: rec.run(r.kspace).image, range(8)))
        outs += list(ex.map(lambda _: kweave.recon(r.kspace, method="sense", combine="optimal").image,
                            range(4)))
    for o in outs:
        assert same_bits(o, ref)
    for _ in range(3):  # concurrent creates: a race in FFTW's planner before the lock
        with ThreadPoolExecutor(4) as ex:
            outs = list(ex.map(lambda _: kweave.recon(r.kspace, method="sense").image, range(8)))
        assert all(same_bits(o, outs[0]) for o in outs)


def test_complex_image_equals_the_command(cli):
    """complex=True is `kweave recon --complex`: the image with its phase."""
    cli.run("pattern", "--kind", "uniform", "--matrix", "32x32", "--accel", "2", "--acs", "8",
            "--out", "m.npy")
    cli.run("encode", "--phantom", "weave", "--matrix", "32", "--fov", "256mm", "--coils", "4",
            "--pattern", "m.npy", "--out", "k.npy", "--sens-out", "s.npy")
    cli.run("recon", "--in", "k.npy", "--method", "sense", "--complex", "--out", "c.npy")
    cli.sync()
    k, s = cli.load("k.npy"), cli.load("s.npy")
    res = kweave.recon(k, method="sense", sens=s, complex=True)
    assert res.image.dtype == np.complex64
    assert same_bits(res.image, cli.load("c.npy"))
    with pytest.raises(kweave.InputError, match="root-sum-of-squares has no phase"):
        kweave.recon(k, combine="rss", complex=True)

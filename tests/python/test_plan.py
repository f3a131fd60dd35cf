"""kweave.plan() against `kweave plan --json`: the same protocol (a protocol
file of samples/, keywords, or both) gives the same report; infeasible
protocols return theirs with "feasible": False; bad keys raise InputError
with the command's message; repeated calls keep memory flat.

Reference: the command itself (build/kweave, run by conftest.Cli)."""
import os
import pathlib
import sys

import pytest

import kweave
from conftest import ROOT

SAMPLES = os.path.join(ROOT, "samples")


def _sample(name):
    return os.path.join(SAMPLES, f"weave-{name}.protocol")


def _command_report(cli, *args):
    p = cli.run("plan", *args, "--json", "p.json", check=False)
    assert p.returncode in (0, 3), p.stderr
    return cli.json("p.json"), p.returncode


@pytest.mark.parametrize("name", ["gre", "se", "epi", "radial", "spiral", "3d-gre", "too-thin"])
def test_plan_protocol_file_same_as_command(cli, name):
    want, rc = _command_report(cli, "--protocol", _sample(name))
    got = kweave.plan(protocol=_sample(name))
    assert got == want
    assert got["feasible"] is (rc == 0)
    assert got["safety_caution"] == kweave.SAFETY_CAUTION
    assert kweave.plan(_sample(name)) == want  # positional
    assert kweave.plan(pathlib.Path(_sample(name))) == want  # os.PathLike


# (id, command options, keywords): every sequence, values as texts with
# units, SI numbers and tuples
KEYWORDS = [
    ("gre", ["--sequence", "gre", "--fov", "256mm", "--matrix", "256x192", "--bandwidth", "32kHz",
             "--te", "5ms", "--tr", "12ms", "--spoiler", "4"],
     dict(sequence="gre", fov=0.256, matrix=(256, 192), bandwidth="32kHz", te="5ms", tr=0.012,
          spoiler=4)),
    ("se", ["--sequence", "se", "--fov", "240mm,180mm", "--matrix", "320x240", "--bandwidth",
            "130Hz/pixel", "--b0", "1.5T", "--gmax", "33mT/m", "--slew", "125T/m/s",
            "--rf-duration", "3ms", "--tbw", "3", "--crusher", "2", "--te", "20ms", "--tr", "500ms"],
     dict(sequence="se", fov=("240mm", "180mm"), matrix="320x240", bandwidth="130Hz/pixel",
          b0=1.5, gmax=0.033, slew="125T/m/s", rf_duration=0.003, tbw=3, crusher="2", te="20ms",
          tr="500ms")),
    ("epi", ["--sequence", "epi", "--fov", "240mm", "--matrix", "96", "--bandwidth", "2000Hz/pixel",
             "--slice", "3mm", "--partial-fourier", "0.75", "--shots", "2", "--t2star", "30ms"],
     dict(sequence="epi", fov="240mm", matrix=96, bandwidth="2000Hz/pixel", slice=0.003,
          partial_fourier=0.75, shots=2, t2star="30ms")),
    ("radial", ["--sequence", "radial", "--fov", "256mm", "--matrix", "256", "--bandwidth",
                "500Hz/pixel", "--spokes", "200", "--averages", "2"],
     dict(sequence="radial", fov="256mm", matrix=256, bandwidth="500Hz/pixel", spokes=200,
          averages=2)),
    ("spiral", ["--sequence", "spiral", "--fov", "240mm", "--matrix", "192", "--bandwidth",
                "250kHz", "--max-readout", "8ms", "--interleaves", "24", "--temperature", "300K"],
     dict(sequence="spiral", fov=0.24, matrix=192, bandwidth=250e3, max_readout="8ms",
          interleaves=24, temperature=300.0)),
    ("3d", ["--sequence", "gre", "--fov", "0.256m,192mm,0.064m", "--matrix", "256x192x32",
            "--bandwidth", "38400Hz", "--bandwidth", "150Hz/pixel", "--rf-duration", "1ms",
            "--tbw", "8", "--raster", "0.00001s"],
     dict(sequence="gre", fov=(0.256, "192mm", 0.064), matrix=(256, 192, 32),
          bandwidth=("38400Hz", "150Hz/pixel"), rf_duration="1ms", tbw=8, raster=1e-5)),
]


@pytest.mark.parametrize("args,kw", [k[1:] for k in KEYWORDS], ids=[k[0] for k in KEYWORDS])
def test_plan_keywords_same_as_command(cli, args, kw):
    want, _ = _command_report(cli, *args)
    assert kweave.plan(**kw) == want


def test_plan_defaults_same_as_command(cli):
    want, _ = _command_report(cli)
    assert kweave.plan() == want


def test_plan_keywords_override_the_file(cli):
    args = ["--protocol", _sample("gre"), "--te", "6ms", "--bandwidth", "32kHz", "--matrix", "192"]
    want, _ = _command_report(cli, *args)
    got = kweave.plan(protocol=_sample("gre"), te="6ms", bandwidth="32kHz", matrix=192)
    assert got == want
    assert got["te_s"] == 0.006


def test_plan_reference_gives_relative_snr(cli):
    want, _ = _command_report(cli, "--protocol", _sample("epi"), "--reference", _sample("gre"))
    got = kweave.plan(_sample("epi"), reference=_sample("gre"))
    assert got == want
    assert got["relative_snr"] is not None
    assert kweave.plan(_sample("epi"))["relative_snr"] is None


def test_plan_infeasible_is_a_report_not_an_error(cli):
    want, rc = _command_report(cli, "--protocol", _sample("too-thin"))
    assert rc == 3
    got = kweave.plan(protocol=_sample("too-thin"))
    assert got["feasible"] is False and got == want
    assert "nearest_feasible" in got
    assert any(not lim["ok"] for lim in got["limits"])


def test_protocol_keys():
    keys = kweave.protocol_keys()
    assert "rf_duration" in keys and "partial_fourier" in keys and "max_readout" in keys
    assert len(keys) == len(set(keys))


# ---- bad input: tests/ref/test_bad_input.py's plan rows --------------------------------

def _files(d):
    (d / "proto.txt").write_text("fov = 256mm\nmatrix = 256\nbandwidth = 32kHz\nfov = 200mm\n")
    (d / "proto2.txt").write_text("fov 256mm\n")
    (d / "proto3.txt").write_text("fov = 256mm\nmatrix = 256\nbandwidth = 32kHz\nwarp = 9\n")


BAD = [
    ("fov-zero", ["--fov", "0mm", "--matrix", "256", "--bandwidth", "32kHz"],
     dict(fov="0mm", matrix=256, bandwidth="32kHz")),
    ("fov-zero-si", ["--fov", "0mm"], dict(fov=0.0)),
    ("fov-no-unit", ["--fov", "256", "--matrix", "256", "--bandwidth", "32kHz"],
     dict(fov="256", matrix=256, bandwidth="32kHz")),
    ("fov-wrong-unit", ["--fov", "3T", "--matrix", "256", "--bandwidth", "32kHz"],
     dict(fov="3T", matrix=256, bandwidth="32kHz")),
    ("fov-nan", ["--fov", "nanmm", "--matrix", "256", "--bandwidth", "32kHz"],
     dict(fov="nanmm", matrix=256, bandwidth="32kHz")),
    ("matrix-negative", ["--fov", "256mm", "--matrix", "-5", "--bandwidth", "32kHz"],
     dict(fov="256mm", matrix=-5, bandwidth="32kHz")),
    ("matrix-absurd", ["--fov", "256mm", "--matrix", "99999999999", "--bandwidth", "32kHz"],
     dict(fov="256mm", matrix=99999999999, bandwidth="32kHz")),
    ("bandwidth-zero", ["--fov", "256mm", "--matrix", "256", "--bandwidth", "0Hz"],
     dict(fov="256mm", matrix=256, bandwidth="0Hz")),
    ("bandwidth-contradiction", ["--bandwidth", "32kHz", "--bandwidth", "100Hz/pixel"],
     dict(bandwidth=("32kHz", "100Hz/pixel"))),
    ("b0-negative", ["--b0", "-3T"], dict(b0="-3T")),
    ("b0-negative-si", ["--b0", "-3T"], dict(b0=-3)),
    ("temperature-below-zero", ["--temperature", "-5K"], dict(temperature="-5K")),
    ("gmax-inf", ["--gmax", "infmT/m"], dict(gmax="infmT/m")),
    ("sequence-unknown", ["--sequence", "warp"], dict(sequence="warp")),
    ("shots-fraction", ["--sequence", "epi", "--shots", "2.5"], dict(sequence="epi", shots=2.5)),
    ("fov-3-on-2d", ["--fov", "256mm,256mm,64mm"], dict(fov=("256mm", "256mm", "64mm"))),
    ("protocol-missing", ["--protocol", "{d}/nope.txt"], dict(protocol="{d}/nope.txt")),
    ("protocol-directory", ["--protocol", "{d}"], dict(protocol="{d}")),
    ("protocol-key-twice", ["--protocol", "{d}/proto.txt"], dict(protocol="{d}/proto.txt")),
    ("protocol-no-equals", ["--protocol", "{d}/proto2.txt"], dict(protocol="{d}/proto2.txt")),
    ("protocol-unknown-key", ["--protocol", "{d}/proto3.txt"], dict(protocol="{d}/proto3.txt")),
    ("reference-missing", ["--reference", "{d}/nope.txt"], dict(reference="{d}/nope.txt")),
]


@pytest.mark.parametrize("args,kw", [b[1:] for b in BAD], ids=[b[0] for b in BAD])
def test_plan_bad_input_message(cli, tmp_path, args, kw):
    _files(tmp_path)
    args = [a.format(d=tmp_path) for a in args]
    kw = {k: v.format(d=tmp_path) if isinstance(v, str) else v for k, v in kw.items()}
    want = cli.error("plan", *args)
    with pytest.raises(kweave.InputError) as e:
        kweave.plan(**kw)
    assert str(e.value) == want
    assert isinstance(e.value, ValueError)


def test_plan_unknown_keyword_is_a_type_error():
    with pytest.raises(TypeError, match="warp"):
        kweave.plan(warp=9)
    with pytest.raises(TypeError, match="did you mean 'gmax'"):
        kweave.plan(gmx="40mT/m")


@pytest.mark.parametrize("kw", [dict(fov=object()), dict(matrix=[256, None]), dict(bandwidth=[]),
                                dict(bandwidth=("1kHz", "2kHz", "3kHz")), dict(protocol=12.5),
                                dict(te=float("nan"))])
def test_plan_bad_types_raise_cleanly(kw):
    with pytest.raises((kweave.InputError, TypeError)):
        kweave.plan(**kw)


# ---- memory and references ------------------------------------------------------------

def _rss_pages():
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1])


def test_repeated_plans_keep_memory_flat(tmp_path):
    proto = _sample("se")
    matrix = (256, 192)
    refs = (sys.getrefcount(proto), sys.getrefcount(matrix))

    def once():
        a = kweave.plan(proto, te="30ms", reference=_sample("gre"))
        b = kweave.plan(sequence="epi", matrix=matrix, fov=("256mm", "192mm"))
        c = kweave.plan(protocol=_sample("too-thin"))
        try:
            kweave.plan(fov="0mm")
        except kweave.InputError:
            pass
        try:
            kweave.plan(protocol=str(tmp_path / "nope.txt"))
        except kweave.InputError:
            pass
        return a, b, c

    for _ in range(50):
        once()
    before = _rss_pages()
    for _ in range(1000):
        once()
    grown = (_rss_pages() - before) * os.sysconf("SC_PAGE_SIZE")
    assert grown < 2 * 1024 * 1024, f"RSS grew by {grown} bytes over 1000 calls"
    assert (sys.getrefcount(proto), sys.getrefcount(matrix)) == refs

"""Hostile and mistaken inputs, table-driven (issue 9).

Every case runs the real `kweave` binary (under `make asan` the sanitizer
build, so a sanitizer report would add stderr lines and fail the one-line
check) and must: exit with status 2 (bad usage or input, docs/api.md "Exit
codes"), print exactly one line "kweave: error: <field>: <reason>" naming the
field, and leave no output file and no temporary file behind.

The .npy files are made with numpy.lib.format (the reference writer) and then
damaged byte by byte, so each case differs from a valid file in one way.
"""
import io
import json
import os
import struct

import numpy as np
import pytest

from conftest import KWEAVE, bad, run

# ---- building blocks ------------------------------------------------------------


def npy_bytes(a, version=None):
    b = io.BytesIO()
    np.lib.format.write_array(b, a, version=version)
    return b.getvalue()


GOOD = npy_bytes(np.ones((4, 4), np.complex64))


def header_file(header, data=b"", version=1):
    """A .npy file with a hand-written header dict (padded as numpy pads)."""
    h = header.encode("latin1")
    pre = 10 if version == 1 else 12
    pad = (64 - (pre + len(h) + 1) % 64) % 64
    h = h + b" " * pad + b"\n"
    if version == 1:
        return b"\x93NUMPY\x01\x00" + struct.pack("<H", len(h)) + h + data
    return b"\x93NUMPY" + bytes([version, 0]) + struct.pack("<I", len(h)) + h + data


def hdr(descr="'<f4'", fortran="False", shape="(2, 2)"):
    return f"{{'descr': {descr}, 'fortran_order': {fortran}, 'shape': {shape}, }}"


F4_2x2 = np.ones(4, np.float32).tobytes()

# Each npy case: (id, file bytes, field expected in the error line).
NPY_CASES = [
    ("empty-file", b"", "empty"),
    ("text-file", b"hello, this is not an array\n", "magic"),
    ("bad-magic", b"\x92" + GOOD[1:], "magic"),
    ("magic-only", GOOD[:6], "magic"),
    ("truncated-prelude", GOOD[:9], "magic"),
    ("truncated-header", GOOD[:40], "header"),
    ("header-length-beyond-file", GOOD[:8] + b"\xff\xff" + GOOD[10:80], "header"),
    ("header-length-zero", GOOD[:8] + b"\x00\x00" + GOOD[10:], "header"),
    ("version-9", GOOD[:6] + b"\x09\x00" + GOOD[8:], "version"),
    ("v2-truncated-length", header_file(hdr(), F4_2x2, version=2)[:11], "header"),
    ("truncated-data", GOOD[:-5], "shape"),
    ("extra-data", GOOD + b"\0" * 8, "shape"),
    ("lying-shape-larger", header_file(hdr(shape="(9, 4)"), F4_2x2), "shape"),
    ("lying-shape-smaller", header_file(hdr(shape="(1,)"), F4_2x2), "shape"),
    ("shape-product-overflows", header_file(hdr(shape="(4294967296, 4294967296, 16)"), F4_2x2), "shape"),
    ("dimension-overflows-size_t", header_file(hdr(shape="(99999999999999999999999,)"), F4_2x2), "shape"),
    ("shape-above-memory-limit", header_file(hdr(shape="(1000000, 1000000)"), F4_2x2), "shape"),
    ("negative-dimension", header_file(hdr(shape="(-2, 2)"), F4_2x2), "shape"),
    ("shape-as-list", header_file(hdr(shape="[2, 2]"), F4_2x2), "shape"),
    ("shape-not-closed", header_file("{'descr': '<f4', 'fortran_order': False, 'shape': (2, 2"), "shape"),
    ("nine-dimensions", header_file(hdr(shape="(1, 1, 1, 1, 1, 1, 1, 1, 1)"), F4_2x2[:4]), "shape"),
    ("dtype-int64", header_file(hdr(descr="'<i8'"), F4_2x2 * 2), "dtype"),
    ("dtype-float16", header_file(hdr(descr="'<f2'"), F4_2x2[:8]), "dtype"),
    ("dtype-object", header_file(hdr(descr="'|O'"), F4_2x2 * 2), "dtype"),
    ("dtype-unicode", header_file(hdr(descr="'<U4'"), F4_2x2 * 4), "dtype"),
    ("dtype-structured", header_file(hdr(descr="[('a', '<f4')]"), F4_2x2), "dtype"),
    ("byte-order-missing-for-f4", header_file(hdr(descr="'|f4'"), F4_2x2), "dtype"),
    ("byte-order-unknown", header_file(hdr(descr="'!f4'"), F4_2x2), "dtype"),
    ("fortran-order-not-bool", header_file(hdr(fortran="1"), F4_2x2), "fortran_order"),
    ("header-not-a-dict", header_file("('<f4', False, (2, 2))", F4_2x2), "header"),
    ("header-missing-shape", header_file("{'descr': '<f4', 'fortran_order': False, }", F4_2x2), "shape"),
    ("header-missing-descr", header_file("{'fortran_order': False, 'shape': (2, 2), }", F4_2x2), "descr"),
    ("header-unknown-key", header_file("{'descr': '<f4', 'fortran_order': False, 'shape': (2, 2), 'x': 1}", F4_2x2), "header"),
    ("nan-data", npy_bytes(np.array([[1, np.nan], [0, 1]], np.float32)), "non-finite"),
    ("inf-data", npy_bytes(np.array([[1, 2], [np.inf, 1]], np.float32)), "non-finite"),
    ("complex-nan-data", npy_bytes(np.array([[1, complex(0, np.nan)]], np.complex64)), "non-finite"),
    ("float64-overflows-float32", npy_bytes(np.array([[1e300, 1]], np.float64)), "non-finite"),
    ("empty-array", npy_bytes(np.zeros((0, 4), np.float32)), "empty"),
    ("too-wide-for-png", npy_bytes(np.ones(1_000_001, np.uint8)), "larger than"),
]


def leftovers(d):
    return sorted(p for p in os.listdir(d) if p != "in.npy" and p != "in")


@pytest.mark.parametrize("name,data,field", NPY_CASES, ids=[c[0] for c in NPY_CASES])
def test_render_bad_npy(tmp_path, name, data, field):
    src = tmp_path / "in.npy"
    src.write_bytes(data)
    out = tmp_path / "out.png"
    extra = ["--max-memory", "1GiB"] if name == "shape-above-memory-limit" else []
    bad("render", "--in", src, "--out", out, *extra, field=field)
    assert leftovers(tmp_path) == [], f"left behind: {leftovers(tmp_path)}"


def test_render_bad_npy_on_stdin(tmp_path):
    # The same checks on a pipe (no file size known): truncated data.
    out = tmp_path / "out.png"
    bad("render", "--in", "-", "--out", out, input=GOOD[:-5], field="truncated")
    bad("render", "--in", "-", "--out", out, input=b"", field="empty")
    assert not out.exists()


# ---- files and paths -------------------------------------------------------------

def good_input(tmp_path):
    src = tmp_path / "in.npy"
    np.save(src, np.ones((8, 8), np.float32))
    return src


def test_input_is_a_directory(tmp_path):
    d = tmp_path / "in"
    d.mkdir()
    bad("render", "--in", d, "--out", tmp_path / "o.png", field="directory")
    assert sorted(os.listdir(tmp_path)) == ["in"]


def test_input_missing(tmp_path):
    bad("render", "--in", tmp_path / "nope.npy", "--out", tmp_path / "o.png",
        field="No such file")
    assert leftovers(tmp_path) == []


def test_output_is_a_directory(tmp_path):
    src = good_input(tmp_path)
    (tmp_path / "outdir").mkdir()
    bad("render", "--in", src, "--out", tmp_path / "outdir", field="directory")
    assert os.listdir(tmp_path / "outdir") == []


def test_output_directory_missing(tmp_path):
    src = good_input(tmp_path)
    bad("render", "--in", src, "--out", tmp_path / "no" / "o.png", field="o.png")
    assert leftovers(tmp_path) == []


def test_output_parent_is_a_file(tmp_path):
    src = good_input(tmp_path)
    (tmp_path / "f").write_text("x")
    bad("render", "--in", src, "--out", tmp_path / "f" / "o.png", field="o.png")
    assert leftovers(tmp_path) == ["f"]


def test_output_unwritable_filesystem(tmp_path):
    # /proc accepts no new files even for root (chmod tricks do not stop root).
    src = good_input(tmp_path)
    bad("render", "--in", src, "--out", "/proc/kweave-test.png", field="kweave-test.png")


def test_output_full_device(tmp_path):
    # /dev/full: every write fails with ENOSPC; the error must be reported.
    src = good_input(tmp_path)
    bad("render", "--in", src, "--out", "/dev/full", field="/dev/full")


def test_output_full_device_stdout(tmp_path):
    src = good_input(tmp_path)
    with open("/dev/full", "wb") as full:
        import subprocess
        p = subprocess.run([KWEAVE, "render", "--in", str(src), "--out", "-"],
                           stdout=full, stderr=subprocess.PIPE, timeout=60)
    err = p.stderr.decode().strip().splitlines()
    assert p.returncode == 2 and len(err) == 1 and "standard output" in err[0], err


def test_existing_output_survives_a_failed_run(tmp_path):
    # A failed run must not damage what was there before.
    out = tmp_path / "o.png"
    out.write_bytes(b"previous picture")
    (tmp_path / "in.npy").write_bytes(GOOD[:-5])
    bad("render", "--in", tmp_path / "in.npy", "--out", out, field="shape")
    assert out.read_bytes() == b"previous picture"


# ---- options ----------------------------------------------------------------------

OPTION_CASES = [
    ("unknown-option", ["--colour", "red"], "--colour"),
    ("missing-in", ["--out", "{d}/o.png"], "in"),
    ("missing-out", ["--in", "{src}"], "out"),
    ("empty-in", ["--in=", "--out", "{d}/o.png"], "in"),
    ("in-given-twice", ["--in", "{src}", "--in", "{src}", "--out", "{d}/o.png"], "more than once"),
    ("positional-argument", ["{src}", "--out", "{d}/o.png"], "unexpected"),
    ("missing-value", ["--in", "{src}", "--out"], "out"),
    ("flag-with-value", ["--in", "{src}", "--out", "{d}/o.png", "--montage=yes"], "montage"),
    ("part-unknown", ["--in", "{src}", "--out", "{d}/o.png", "--part", "colour"], "part"),
    ("depth-12", ["--in", "{src}", "--out", "{d}/o.png", "--depth", "12"], "depth"),
    ("depth-not-a-number", ["--in", "{src}", "--out", "{d}/o.png", "--depth", "eight"], "depth"),
    ("depth-huge", ["--in", "{src}", "--out", "{d}/o.png", "--depth", "99999999999999999999999"], "depth"),
    ("window-reversed", ["--in", "{src}", "--out", "{d}/o.png", "--window", "2:1"], "window"),
    ("window-empty", ["--in", "{src}", "--out", "{d}/o.png", "--window", "1:1"], "window"),
    ("window-nan", ["--in", "{src}", "--out", "{d}/o.png", "--window", "nan:1"], "window"),
    ("window-inf", ["--in", "{src}", "--out", "{d}/o.png", "--window", "0:inf"], "window"),
    ("window-no-colon", ["--in", "{src}", "--out", "{d}/o.png", "--window", "5"], "window"),
    ("window-garbage", ["--in", "{src}", "--out", "{d}/o.png", "--window", "0:1x"], "window"),
    ("montage-of-2d", ["--in", "{src}", "--out", "{d}/o.png", "--montage"], "montage"),
    ("max-memory-no-unit", ["--in", "{src}", "--out", "{d}/o.png", "--max-memory", "2parsec"], "max-memory"),
    ("max-memory-negative", ["--in", "{src}", "--out", "{d}/o.png", "--max-memory", "-1GiB"], "max-memory"),
    ("max-memory-tiny", ["--in", "{src}", "--out", "{d}/o.png", "--max-memory", "100"], "max-memory"),
    ("max-memory-absurd", ["--in", "{src}", "--out", "{d}/o.png", "--max-memory", "1e30TiB"], "max-memory"),
    ("max-memory-missing", ["--in", "{src}", "--out", "{d}/o.png", "--max-memory"], "max-memory"),
]


@pytest.mark.parametrize("name,args,field", OPTION_CASES, ids=[c[0] for c in OPTION_CASES])
def test_render_bad_options(tmp_path, name, args, field):
    src = good_input(tmp_path)
    args = [a.format(d=tmp_path, src=src) for a in args]
    bad("render", *args, field=field)
    assert leftovers(tmp_path) == [], f"left behind: {leftovers(tmp_path)}"


def test_max_memory_refusal_says_the_size(tmp_path):
    src = tmp_path / "in.npy"
    np.save(src, np.zeros((4, 512, 512), np.complex64))  # 8 MiB as complex64
    line = bad("render", "--in", src, "--out", tmp_path / "o.png", "--max-memory", "4MiB",
               field="shape")
    assert "8 MiB" in line and "4 MiB" in line and "max-memory" in line
    run("render", "--in", src, "--out", tmp_path / "o.png", "--max-memory", "1GiB")
    assert (tmp_path / "o.png").exists()


def test_unknown_verb():
    bad("transmogrify", field="transmogrify")


# ---- the other verbs (plan, encode, pattern, recon, score, sweep), as they have landed ----------------------


def _verb_inputs(d):
    """Files the verb cases refer to, made with numpy."""
    c = (np.ones((2, 16, 16)) + 0j).astype(np.complex64)
    np.save(d / "ks.npy", c)
    np.save(d / "real.npy", np.ones((16, 16), np.float32))
    np.save(d / "small.npy", np.ones((8, 8), np.float32))
    np.save(d / "nan.npy", np.where(np.eye(16) > 0, np.nan, 1).astype(np.float32))
    np.save(d / "ksnan.npy", np.where(np.eye(16) > 0, np.nan, 1).astype(np.complex64)[None])
    for stem, side in {
        "badjson": '{"kind": "kspace", ',
        "traj": json.dumps({"kind": "kspace", "shape": [2, 16, 16], "layout": "noncartesian",
                            "trajectory": "missing.npy"}),
        "sens": json.dumps({"kind": "kspace", "shape": [2, 16, 16], "layout": "cartesian",
                            "sens": "nosens.npy"}),
        "contra": json.dumps({"kind": "kspace", "shape": [2, 8, 8], "layout": "cartesian"}),
        "notks": json.dumps({"kind": "image", "shape": [2, 16, 16]}),
    }.items():
        np.save(d / f"{stem}.npy", c)
        (d / f"{stem}.json").write_text(side)
    np.save(d / "mask_bad.npy", np.ones((10, 10), np.uint8))
    np.save(d / "sens_bad.npy", np.ones((2, 8, 8), np.complex64))
    np.save(d / "traj_bad.npy", np.ones((10, 5), np.float32))
    np.save(d / "traj_nan.npy", np.full((10, 2), np.nan, np.float32))
    (d / "spec_bad.json").write_text('{"x": ')
    (d / "spec_array.json").write_text("[1, 2]")
    (d / "spec_axis.json").write_text('{"warp": [1, 2]}')
    (d / "proto.txt").write_text("fov = 256mm\nmatrix = 256\nbandwidth = 32kHz\nfov = 200mm\n")
    (d / "proto2.txt").write_text("fov 256mm\n")
    (d / "proto3.txt").write_text("fov = 256mm\nmatrix = 256\nbandwidth = 32kHz\nwarp = 9\n")


PLAN = ["plan", "--fov", "256mm", "--matrix", "256", "--bandwidth", "32kHz"]
ENC = ["encode", "--phantom", "shepp-logan", "--matrix", "64", "--fov", "256mm", "--out", "{d}/k.npy"]

VERB_CASES = [
    ("plan-fov-zero", ["plan", "--fov", "0mm", "--matrix", "256", "--bandwidth", "32kHz"], "fov"),
    ("plan-fov-no-unit", ["plan", "--fov", "256", "--matrix", "256", "--bandwidth", "32kHz"], "fov"),
    ("plan-fov-wrong-unit", ["plan", "--fov", "3T", "--matrix", "256", "--bandwidth", "32kHz"], "fov"),
    ("plan-fov-nan", ["plan", "--fov", "nanmm", "--matrix", "256", "--bandwidth", "32kHz"], "fov"),
    ("plan-matrix-negative", ["plan", "--fov", "256mm", "--matrix", "-5", "--bandwidth", "32kHz"], "matrix"),
    ("plan-matrix-absurd", ["plan", "--fov", "256mm", "--matrix", "99999999999", "--bandwidth", "32kHz"], "matrix"),
    ("plan-bandwidth-zero", ["plan", "--fov", "256mm", "--matrix", "256", "--bandwidth", "0Hz"], "bandwidth"),
    ("plan-b0-negative", PLAN + ["--b0", "-3T"], "b0"),
    ("plan-temperature-below-zero", PLAN + ["--temperature", "-5K"], "temperature"),
    ("plan-gmax-inf", PLAN + ["--gmax", "infmT/m"], "gmax"),
    ("plan-unknown-option", PLAN + ["--warp", "9"], "--warp"),
    ("plan-sequence-unknown", PLAN + ["--sequence", "warp"], "sequence"),
    ("plan-protocol-missing", ["plan", "--protocol", "{d}/nope.txt"], "protocol"),
    ("plan-protocol-directory", ["plan", "--protocol", "{d}"], "protocol"),
    ("plan-protocol-key-twice", ["plan", "--protocol", "{d}/proto.txt"], "fov"),
    ("plan-protocol-no-equals", ["plan", "--protocol", "{d}/proto2.txt"], "line 1"),
    ("plan-protocol-unknown-key", ["plan", "--protocol", "{d}/proto3.txt"], "warp"),
    ("plan-json-full", PLAN + ["--json", "/dev/full"], "/dev/full"),
    ("plan-json-missing-dir", PLAN + ["--json", "{d}/no/p.json"], "p.json"),
    ("recon-real-input", ["recon", "--in", "{d}/real.npy", "--out", "{d}/o.npy"], "in"),
    ("recon-nan-input", ["recon", "--in", "{d}/ksnan.npy", "--out", "{d}/o.npy"], "in"),
    ("recon-unknown-method", ["recon", "--in", "{d}/ks.npy", "--out", "{d}/o.npy", "--method", "nope"], "method"),
    ("recon-sidecar-not-json", ["recon", "--in", "{d}/badjson.npy", "--out", "{d}/o.npy"], "sidecar"),
    ("recon-sidecar-trajectory-missing", ["recon", "--in", "{d}/traj.npy", "--out", "{d}/o.npy"], "trajectory"),
    ("recon-sidecar-sens-missing", ["recon", "--in", "{d}/sens.npy", "--out", "{d}/o.npy"], "sens"),
    ("recon-sens-wrong-shape", ["recon", "--in", "{d}/ks.npy", "--out", "{d}/o.npy", "--sens", "{d}/small.npy"], "sens"),
    ("recon-out-full", ["recon", "--in", "{d}/ks.npy", "--out", "/dev/full"], "/dev/full"),
    ("recon-out-directory", ["recon", "--in", "{d}/ks.npy", "--out", "{d}"], "out"),
    ("recon-iterations-negative", ["recon", "--in", "{d}/ks.npy", "--out", "{d}/o.npy", "--iterations", "-3"], "iterations"),
    ("recon-sidecar-contradicts-shape", ["recon", "--in", "{d}/contra.npy", "--out", "{d}/o.npy"], "shape"),
    ("recon-sidecar-not-kspace", ["recon", "--in", "{d}/notks.npy", "--out", "{d}/o.npy"], "kind"),
    ("encode-unknown-phantom", ENC[:2] + ["nope"] + ENC[3:], "phantom"),
    ("encode-matrix-zero", ENC[:4] + ["0"] + ENC[5:], "matrix"),
    ("encode-matrix-absurd", ENC[:4] + ["99999x99999"] + ENC[5:], "matrix"),
    ("encode-fov-negative", ENC[:6] + ["-1mm"] + ENC[7:], "fov"),
    ("encode-snr-negative", ENC + ["--snr", "-3"], "snr"),
    ("encode-snr-nan", ENC + ["--snr", "nan"], "snr"),
    ("encode-coils-zero", ENC + ["--coils", "0"], "coils"),
    ("encode-pattern-wrong-shape", ENC + ["--pattern", "{d}/mask_bad.npy"], "pattern"),
    ("encode-sens-wrong-shape", ENC + ["--sens", "{d}/sens_bad.npy"], "sens"),
    ("encode-trajectory-wrong-shape", ENC + ["--trajectory", "{d}/traj_bad.npy"], "trajectory"),
    ("encode-trajectory-nan", ENC + ["--trajectory", "{d}/traj_nan.npy"], "trajectory"),
    ("encode-noise-corr-without-snr", ENC + ["--noise-corr", "0.5"], "noise-corr"),
    ("encode-tr-shorter-than-te", ENC + ["--sequence", "gre", "--te", "10ms", "--tr", "5ms"], "tr"),
    ("encode-out-missing", ENC[:7], "out"),
    ("encode-out-full", ENC[:8] + ["/dev/full"], "/dev/full"),
    ("pattern-unknown-kind", ["pattern", "--kind", "nope", "--matrix", "64x64"], "kind"),
    ("pattern-accel-zero", ["pattern", "--kind", "random", "--matrix", "64x64", "--accel", "0"], "accel"),
    ("pattern-accel-above-matrix", ["pattern", "--kind", "random", "--matrix", "64x64", "--accel", "100"], "accel"),
    ("pattern-fraction-too-small", ["pattern", "--kind", "partial", "--matrix", "64x64", "--fraction", "0.3"], "fraction"),
    ("pattern-spokes-negative", ["pattern", "--kind", "radial", "--matrix", "64x64", "--spokes", "-1"], "spokes"),
    ("pattern-gmax-zero", ["pattern", "--kind", "spiral", "--matrix", "64x64", "--gmax", "0mT/m"], "gmax"),
    ("pattern-analyse-missing", ["pattern", "--analyse", "{d}/missing.npy"], "analyse"),
    ("pattern-analyse-nan", ["pattern", "--analyse", "{d}/traj_nan.npy"], "non-finite"),
    ("pattern-compare-nothing", ["pattern", "--compare"], "compare"),
    ("sweep-spec-not-json", ["sweep", "--spec", "{d}/spec_bad.json", "--out", "{d}/sw"], "spec"),
    ("sweep-spec-missing", ["sweep", "--spec", "{d}/nope.json", "--out", "{d}/sw"], "spec"),
    ("sweep-spec-not-object", ["sweep", "--spec", "{d}/spec_array.json", "--out", "{d}/sw"], "spec"),
    ("sweep-spec-unknown-axis", ["sweep", "--spec", "{d}/spec_axis.json", "--out", "{d}/sw"], "warp"),
    ("sweep-spec-directory", ["sweep", "--spec", "{d}", "--out", "{d}/sw"], "spec"),
    ("score-shape-mismatch", ["score", "--ref", "{d}/real.npy", "--test", "{d}/small.npy"], "shape"),
    ("score-nan-test", ["score", "--ref", "{d}/real.npy", "--test", "{d}/nan.npy"], "test"),
    ("score-missing-ref", ["score", "--test", "{d}/real.npy"], "ref"),
    ("score-json-full", ["score", "--ref", "{d}/real.npy", "--test", "{d}/real.npy", "--json", "/dev/full"], "/dev/full"),
    ("score-diff-missing-dir", ["score", "--ref", "{d}/real.npy", "--test", "{d}/small.npy", "--diff", "{d}/no/d.png"], None),
]


@pytest.mark.parametrize("name,args,field", VERB_CASES,
                         ids=[c.values[0] if hasattr(c, "marks") else c[0] for c in VERB_CASES])
def test_other_verbs_bad_input(tmp_path, name, args, field):
    _verb_inputs(tmp_path)
    before = sorted(os.listdir(tmp_path))
    args = [a.format(d=tmp_path) for a in args]
    p = run(*args, check=False)
    if "not built yet" in p.stderr:
        pytest.skip(f"verb {args[0]} has not landed yet")
    bad(*args, field=field)
    assert sorted(os.listdir(tmp_path)) == before, "a file was left behind"


@pytest.mark.parametrize("verb", ["recon", "score", "render", "pattern"])
def test_max_memory_on_every_verb(tmp_path, verb):
    # 2 x 512 x 512 complex64 = 4 MiB, above a 1 MiB limit: refused before
    # allocation, naming the size it would need.
    src = tmp_path / "ks.npy"
    np.save(src, np.ones((2, 512, 512), np.complex64))
    out = tmp_path / "o.npy"
    args = {"recon": ["recon", "--in", src, "--out", out],
            "score": ["score", "--ref", src, "--test", src],
            "render": ["render", "--in", src, "--out", tmp_path / "o.png"],
            "pattern": ["pattern", "--analyse", src]}[verb]
    line = bad(*args, "--max-memory", "1MiB", field="shape")
    assert "needs 4 MiB" in line and "limit of 1 MiB" in line
    assert sorted(os.listdir(tmp_path)) == ["ks.npy"]


def test_max_memory_on_encode(tmp_path):
    """encode estimates its working set (k-space, truth, maps, field-map grid)
    before it allocates: 8 coils x 512 x 512 complex64 k-space (16 MiB) and
    as much again for the maps are refused under 16 MiB, nothing written."""
    out = tmp_path / "k.npy"
    line = bad("encode", "--phantom", "weave", "--matrix", "512", "--fov", "240mm", "--coils", "8",
               "--out", out, "--max-memory", "16MiB", field="shape")
    assert "needs about 34 MiB" in line and "limit of 16 MiB" in line, line
    assert os.listdir(tmp_path) == []

"""The library's JSON calls through ctypes (kw_pattern_info_json,
kw_recon_report_json, libencode/kw_pattern.h and recon/kw_recon.h) against
the files `kweave pattern` and `kweave recon --json` write for the same
case: the library's text holds the command's keys, in the command's order,
with the same values, less the keys the command adds (the names of files).
Source of truth: the command's own files."""
import ctypes
import json

import numpy as np

from conftest import encode, run, sizes
from test_pattern_api import GOLDEN, UNIFORM, create, options


def lib_text(lib, fn, obj):
    """Call kw_*_json(obj, &text): the text as a dict (order kept), freed."""
    lib.kw_last_error.restype = ctypes.c_char_p
    text = ctypes.c_void_p()
    st = fn(obj, ctypes.byref(text))
    assert st == 0, lib.kw_last_error()
    s = ctypes.string_at(text).decode()
    lib.kw_free(text)
    assert s.endswith("\n")
    return json.loads(s)


def same_but(lib_d, file_d, added):
    """lib_d equals file_d with the command's keys `added` left out, order included."""
    want = {k: v for k, v in file_d.items() if k not in added}
    assert list(lib_d) == list(want)
    assert lib_d == want


def test_pattern_sidecars_match_the_command(lib, tmp_path):
    run("pattern", "--kind", "uniform", "--matrix", "64x64", "--accel", "2", "--acs", "8",
        "--out", tmp_path / "m.npy")
    o = options(lib)
    o.kind = UNIFORM
    o.dims[0] = o.dims[1] = 64
    o.accel[0] = 2
    o.acs[0] = 8
    p = create(lib, o)
    same_but(lib_text(lib, lib.kw_pattern_info_json, p),
             json.load(open(tmp_path / "m.json")), ())
    lib.kw_pattern_destroy(p)

    run("pattern", "--kind", "golden", "--matrix", "64x64", "--spokes", "12",
        "--out", tmp_path / "t.npy")
    o = options(lib)
    o.kind = GOLDEN
    o.dims[0] = o.dims[1] = 64
    o.spokes = 12
    p = create(lib, o)
    same_but(lib_text(lib, lib.kw_pattern_info_json, p),
             json.load(open(tmp_path / "t.json")), ("times",))
    lib.kw_pattern_destroy(p)


class ReconOptions(ctypes.Structure):
    """kw_recon_options (recon/kw_recon.h)."""
    _fields_ = [("struct_size", ctypes.c_size_t), ("method", ctypes.c_char_p),
                ("combine", ctypes.c_char_p), ("lambda_", ctypes.c_double),
                ("iterations", ctypes.c_int), ("stop", ctypes.c_double),
                ("tolerance", ctypes.c_double), ("oversampling", ctypes.c_double),
                ("kernel", ctypes.c_int * 2), ("replicas", ctypes.c_int),
                ("seed", ctypes.c_long), ("keep_coils", ctypes.c_int), ("dcf", ctypes.c_int),
                ("want_gfactor", ctypes.c_int), ("estimate_sens", ctypes.c_int)]


class Geometry(ctypes.Structure):
    """kw_recon_geometry (recon/kw_recon.h)."""
    _fields_ = [("ndim", ctypes.c_int), ("dims", ctypes.POINTER(ctypes.c_size_t)),
                ("trajectory", ctypes.c_void_p), ("traj_ndim", ctypes.c_int),
                ("sens", ctypes.c_void_p), ("sens_ndim", ctypes.c_int),
                ("sens_dims", ctypes.POINTER(ctypes.c_size_t)), ("noise_cov", ctypes.c_void_p),
                ("image_dims", ctypes.c_void_p), ("weights", ctypes.c_void_p),
                ("sampling", ctypes.c_void_p)]


def test_recon_report_matches_the_command(lib, tmp_path):
    k, side = encode(tmp_path, "ks", "--phantom", "weave", "--matrix", "32x32", "--fov", "240mm",
                     "--coils", "4", "--sens-out", tmp_path / "maps.npy")
    run("recon", "--in", tmp_path / "ks.npy", "--method", "sense", "--gfactor",
        tmp_path / "g.npy", "--json", tmp_path / "r.json")
    file_d = json.load(open(tmp_path / "r.json"))
    maps = np.ascontiguousarray(np.load(tmp_path / "maps.npy"), dtype=np.complex64)
    k = np.ascontiguousarray(k, dtype=np.complex64)
    o = ReconOptions()
    lib.kw_recon_options_init(ctypes.byref(o))
    assert o.struct_size == ctypes.sizeof(ReconOptions)
    o.method = b"sense"
    o.want_gfactor = 1
    kd, sd = sizes(*k.shape), sizes(*maps.shape)
    g = Geometry(ndim=k.ndim, dims=kd, sens=maps.ctypes.data, sens_ndim=maps.ndim, sens_dims=sd)
    r = ctypes.c_void_p()
    lib.kw_last_error.restype = ctypes.c_char_p
    assert lib.kw_recon_create(ctypes.byref(r), ctypes.byref(g), ctypes.byref(o)) == 0, \
        lib.kw_last_error()
    img = np.zeros(maps.shape[1:], np.float32)
    gf = np.zeros(maps.shape[1:], np.float32)
    assert lib.kw_recon_execute(r, k.ctypes.data, img.ctypes.data_as(ctypes.c_void_p),
                                gf.ctypes.data_as(ctypes.c_void_p), None, None) == 0, \
        lib.kw_last_error()
    lib_d = lib_text(lib, lib.kw_recon_report_json, r)
    lib.kw_recon_destroy(r)
    assert lib_d["sens_source"] == "given" and file_d["sens_source"] == "file (sidecar)"
    del lib_d["sens_source"]
    same_but(lib_d, file_d, ("input", "sens_source", "gfactor_file", "output"))

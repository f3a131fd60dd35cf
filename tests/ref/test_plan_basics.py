"""`kweave plan` Cartesian basics against scipy.constants (CODATA 2018) and
hand-worked examples; bad input exits 2 naming the field."""
import json
import math
import os

import pytest
import scipy.constants as sc

from conftest import run, bad, lib


def plan_json(tmp_path, *args):
    out = tmp_path / "plan.json"
    p = run("plan", *args, "--json", out, check=False)
    assert p.returncode in (0, 3), p.stderr
    return p, json.loads(out.read_text())


def test_larmor_and_polarization_against_scipy_codata(tmp_path):
    # scipy.constants carries CODATA 2018: 'proton gyromag. ratio in MHz/T'.
    gbar = sc.physical_constants["proton gyromag. ratio in MHz/T"][0] * 1e6
    gamma = sc.physical_constants["proton gyromag. ratio"][0]
    p, j = plan_json(tmp_path, "--b0", "2T", "--temperature", "298K")
    assert j["larmor_hz"] == pytest.approx(2 * gbar, rel=1e-10)
    pol = math.tanh(gamma * sc.hbar * 2.0 / (2 * sc.k * 298.0))
    assert j["polarization"] == pytest.approx(pol, rel=1e-9)
    # common practice, no source: "about 7 per million" at 2 T, room temperature
    assert 6.5e-6 < j["polarization"] < 7.5e-6
    assert "Caution" in p.stdout and "IEC 60601-2-33" in p.stdout


def test_issue_keys_and_worked_example(tmp_path):
    # Worked by hand: 256 mm, 256, 250 Hz/pixel -> 64 kHz, dwell 15.625 us,
    # readout 4 ms, G = 64000 / (42.577478518e6 * 0.256) = 5.871649 mT/m.
    p, j = plan_json(tmp_path, "--fov", "256mm", "--matrix", "256", "--bandwidth", "250Hz/pixel",
                     "--b0", "3T", "--gmax", "40mT/m", "--slew", "200T/m/s")
    for k in ["larmor_hz", "pixel_size_m", "delta_k_per_m", "k_max_per_m", "dwell_s",
              "readout_duration_s", "bandwidth_hz", "bandwidth_per_pixel_hz",
              "readout_gradient_T_per_m", "polarization", "feasible"]:
        assert k in j, k
    assert j["dwell_s"] == pytest.approx(15.625e-6, rel=1e-12)
    assert j["readout_duration_s"] == pytest.approx(4e-3, rel=1e-12)
    assert j["bandwidth_hz"] == pytest.approx(64000, rel=1e-12)
    assert j["readout_gradient_T_per_m"] == pytest.approx(5.871649e-3, rel=1e-6)
    assert j["pixel_size_m"] == pytest.approx([1e-3, 1e-3])
    assert j["k_max_per_m"] == pytest.approx([500, 500])
    assert j["feasible"] is True and p.returncode == 0


def test_bandwidth_forms_agree(tmp_path):
    _, a = plan_json(tmp_path, "--matrix", "256x192", "--fov", "256mm,192mm", "--bandwidth", "32kHz")
    _, b = plan_json(tmp_path, "--matrix", "256x192", "--fov", "256mm,192mm",
                     "--bandwidth", "125Hz/pixel")
    _, c = plan_json(tmp_path, "--matrix", "256x192", "--fov", "256mm,192mm",
                     "--bandwidth", "125Hz/pixel", "--bandwidth", "32kHz")
    for j in (a, b, c):
        assert j["bandwidth_hz"] == pytest.approx(32000)
        assert j["bandwidth_per_pixel_hz"] == pytest.approx(125)
        assert j["pixel_size_m"] == pytest.approx([1e-3, 1e-3])


def test_readout_over_gmax_is_infeasible(tmp_path):
    # 32 kHz over 50 mm needs 32000 / (42.577e6 * 0.05) = 15.03 mT/m > 10 mT/m
    p, j = plan_json(tmp_path, "--fov", "50mm", "--matrix", "128", "--bandwidth", "32kHz",
                     "--gmax", "10mT/m")
    assert p.returncode == 3 and j["feasible"] is False


@pytest.mark.parametrize("args,field", [
    (["--fov", "0mm"], "fov"),
    (["--fov", "-5mm"], "fov"),
    (["--fov", "256"], "fov"),
    (["--matrix", "0"], "matrix"),
    (["--matrix", "256x"], "matrix"),
    (["--bandwidth", "32kHz", "--bandwidth", "250Hz/pixel"], "bandwidth"),
    (["--bandwidth", "32kHz", "--bandwidth", "33kHz"], "bandwidth"),
    (["--bandwidth", "32mm"], "bandwidth"),
    (["--b0", "-3T"], "b0"),
    (["--gmax", "0mT/m"], "gmax"),
    (["--slew", "nanT/m/s"], "slew"),
    (["--temperature", "-4K"], "temperature"),
    (["--sequence", "flash"], "sequence"),
    (["--wobble", "1"], "wobble"),
])
def test_bad_input(args, field):
    bad("plan", *args, field=field)


def test_unwritable_json_leaves_nothing(tmp_path):
    out = tmp_path / "nodir" / "p.json"
    bad("plan", "--json", out)
    assert not out.exists()


# ---- the library's protocol input and JSON report (kw_plan_input.h) through
# ctypes, as the Python package will call them: the same JSON bytes and the
# same error lines as the command.

def _plan_lib(lib):
    import ctypes as C
    vp = C.c_void_p
    lib.kw_protocol_input_create.argtypes = [C.POINTER(vp)]
    lib.kw_protocol_input_destroy.argtypes = [vp]
    lib.kw_protocol_input_destroy.restype = None
    lib.kw_protocol_input_set.argtypes = [vp, C.c_char_p, C.c_char_p]
    lib.kw_protocol_input_parse.argtypes = [vp, C.c_char_p, C.c_size_t]
    lib.kw_protocol_input_finish.argtypes = [vp, vp]
    lib.kw_plan_create.argtypes = [C.POINTER(vp), vp]
    lib.kw_plan_destroy.argtypes = [vp]
    lib.kw_plan_destroy.restype = None
    lib.kw_plan_report_json.argtypes = [vp, C.c_double, C.POINTER(C.c_void_p)]
    lib.kw_free.argtypes = [vp]
    lib.kw_free.restype = None
    lib.kw_last_error.restype = C.c_char_p
    lib.kw_last_error_param.restype = C.c_char_p
    lib.kw_protocol_keys.restype = C.POINTER(C.c_char_p)
    return lib


def _lib_plan_json(lib, text=b"", **keys):
    """(status, json text or error line, error param) from the library."""
    import ctypes as C
    _plan_lib(lib)
    inp = C.c_void_p()
    assert lib.kw_protocol_input_create(C.byref(inp)) == 0
    try:
        st = lib.kw_protocol_input_parse(inp, text, len(text))
        for k, v in keys.items():
            if st == 0:
                st = lib.kw_protocol_input_set(inp, k.replace("_", "-").encode(), v.encode())
        proto = C.create_string_buffer(4096)  # room for a kw_protocol
        if st == 0:
            st = lib.kw_protocol_input_finish(inp, proto)
        if st:
            return st, lib.kw_last_error().decode(), lib.kw_last_error_param().decode()
        rep = C.c_void_p()
        assert lib.kw_plan_create(C.byref(rep), proto) == 0
        out = C.c_void_p()
        st = lib.kw_plan_report_json(rep, 0.0, C.byref(out))
        lib.kw_plan_destroy(rep)
        assert st == 0
        s = C.string_at(out).decode()
        lib.kw_free(out)
        return 0, s, ""
    finally:
        lib.kw_protocol_input_destroy(inp)


def test_library_keys_are_the_commands_options(lib):
    _plan_lib(lib)
    k, keys = lib.kw_protocol_keys(), []
    while k[len(keys)]:
        keys.append(k[len(keys)].decode())
    help_text = run("plan", "--help", check=False).stdout
    for key in keys:
        assert f"--{key} " in help_text, key
    assert len(keys) == 23


@pytest.mark.parametrize("text,opts", [
    (b"", ["--fov", "256mm,192mm", "--matrix", "256x192", "--bandwidth", "250Hz/pixel"]),
    (b"sequence = epi\nmatrix = 96\nfov = 240mm\npartial-fourier = 0.75\n", []),
    (b"sequence = spiral\nmatrix = 128\n", ["--max-readout", "8ms"]),
    (b"slice = 0.4mm\nte = 2ms\n", []),  # infeasible: nearest_feasible
])
def test_library_json_is_the_commands_json(lib, tmp_path, text, opts):
    prot = tmp_path / "p.protocol"
    prot.write_bytes(text)
    out = tmp_path / "plan.json"
    p = run("plan", "--protocol", prot, *opts, "--json", out, check=False)
    assert p.returncode in (0, 3), p.stderr
    keys = {opts[i][2:]: opts[i + 1] for i in range(0, len(opts), 2)}
    st, js, _ = _lib_plan_json(lib, text, **keys)
    assert st == 0, js
    assert js == out.read_text()
    assert json.loads(js)["safety_caution"]


@pytest.mark.parametrize("key,value", [
    ("fov", "-1mm"), ("fov", "256"), ("matrix", "0"), ("sequence", "fse"), ("te", "0ms"),
    ("gmax", "40"), ("shots", "0"), ("bandwidth", "-3kHz"), ("averages", "1.5"),
])
def test_library_errors_are_the_commands(lib, key, value):
    st, why, param = _lib_plan_json(lib, **{key: value})
    assert st != 0
    assert param == key
    line = bad("plan", f"--{key}", value, field=key)
    assert line == "kweave: error: " + why

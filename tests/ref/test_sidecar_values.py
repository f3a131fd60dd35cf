"""Numbers from sidecars and specs are range-checked before any conversion
(issue 18: each case below was undefined behaviour -- signed overflow or a
float-to-int conversion out of range -- found by the adversarial pass; under
`make asan` UBSan with float-cast-overflow would stop on any of them). Each
must exit 2 with one line naming the field; kw_checked_whole() is the one
conversion (libencode/kw_base.h)."""
import json

import numpy as np
import pytest

from conftest import bad, run


@pytest.fixture(scope="module")
def acq(tmp_path_factory):
    d = tmp_path_factory.mktemp("sidecar-values")
    run("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "32", "--coils", "2",
        "--out", d / "ks.npy")
    run("encode", "--phantom", "weave3d", "--matrix", "32x32", "--fov", "220mm,220mm,120mm",
        "--slices", "3", "--slice-thickness", "5mm", "--out", d / "ms.npy")
    return d


def with_sidecar(acq, tmp_path, name, change):
    side = json.loads((acq / f"{name}.json").read_text())
    change(side)
    (tmp_path / f"{name}.npy").write_bytes((acq / f"{name}.npy").read_bytes())
    (tmp_path / f"{name}.json").write_text(json.dumps(side))
    return tmp_path / f"{name}.npy"


@pytest.mark.parametrize("field,value", [
    ("acceleration", [65536, 65536]),
    ("acceleration", 1e300),
    ("acceleration", -3),
    ("acceleration", [2.5, 2]),
    ("acs_lines", [65536, 65536, 65536]),
    ("acs_lines", 1e300),
    ("acs_lines", 3.5),
    ("acs_lines", "many"),
])
def test_sampling_claims_out_of_range(acq, tmp_path, field, value):
    ks = with_sidecar(acq, tmp_path, "ks", lambda s: s.__setitem__(field, value))
    bad("recon", "--in", ks, "--out", tmp_path / "img.npy", field=field)
    assert not (tmp_path / "img.npy").exists()


@pytest.mark.parametrize("count", [1e300, -1, 2.5, 2 ** 63])
def test_slice_count_out_of_range(acq, tmp_path, count):
    ms = with_sidecar(acq, tmp_path, "ms", lambda s: s["slices"].__setitem__("count", count))
    bad("recon", "--in", ms, "--out", tmp_path / "img.npy", field="sidecar")


def test_a_sweep_matrix_of_16_5_names_the_value(tmp_path):
    spec = {"phantom": "weave", "matrix": 16.5, "coils": 2, "patterns": [{"kind": "uniform"}],
            "acceleration": [2], "methods": ["fft"]}
    (tmp_path / "s.json").write_text(json.dumps(spec))
    line = bad("sweep", "--spec", tmp_path / "s.json", "--out", tmp_path / "o", field="matrix")
    assert "16.5" in line


def test_npy_with_text_after_the_header_dict_is_refused_as_numpy_refuses_it(tmp_path):
    """Issue 18: strict parsers (one .npy header parser for both readers,
    cli/npyhdr.c)."""
    np.save(tmp_path / "a.npy", np.zeros((4, 4), np.float32))
    b = (tmp_path / "a.npy").read_bytes()
    i = b.index(b"}")
    (tmp_path / "bad.npy").write_bytes(b[:i + 1] + b"x" + b[i + 2:])
    with pytest.raises(Exception):
        np.load(tmp_path / "bad.npy")
    line = bad("render", "--in", tmp_path / "bad.npy", "--out", tmp_path / "b.png", field="in")
    assert "text after the dictionary" in line
    # the block-wise reader (multi-slice recon) uses the same parser
    k = np.zeros((2, 3, 8, 8), np.complex64)
    np.save(tmp_path / "ms.npy", k)
    b = (tmp_path / "ms.npy").read_bytes()
    i = b.index(b"}")
    (tmp_path / "msbad.npy").write_bytes(b[:i + 1] + b"x" + b[i + 2:])
    line = bad("recon", "--in", tmp_path / "msbad.npy", "--slices", "1", "--out",
               tmp_path / "i.npy")
    assert "text after the dictionary" in line


@pytest.mark.parametrize("tail", [b" x", b"\x00", b"{}"])
def test_json_sidecar_with_anything_after_the_value_is_refused(acq, tmp_path, tail):
    """Python's json refuses these too (strict JSON, RFC 8259)."""
    ks = with_sidecar(acq, tmp_path, "ks", lambda s: None)
    side = tmp_path / "ks.json"
    side.write_bytes(side.read_bytes().rstrip() + tail)
    with pytest.raises(ValueError):
        json.loads(side.read_bytes())
    line = bad("recon", "--in", ks, "--out", tmp_path / "img.npy")
    assert "not valid JSON" in line

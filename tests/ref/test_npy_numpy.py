"""The .npy reader and writer against numpy itself (numpy.lib.format, the
reference implementation of the format): files numpy writes (every supported
dtype, byte order and header version) load in kweave, and what kweave writes
back loads in numpy with the right dtype, shape and values. The reader and
writer are called through ctypes in build/libkwcli.so (KWEAVE_CLI_LIB)."""
import ctypes
import os

import numpy as np
import pytest


class Arr(ctypes.Structure):
    _fields_ = [("dtype", ctypes.c_int), ("ndim", ctypes.c_int),
                ("dims", ctypes.c_size_t * 8), ("data", ctypes.c_void_p)]


@pytest.fixture(scope="module")
def cli():
    lib = os.environ.get("KWEAVE_CLI_LIB")
    if not lib:
        pytest.skip("npy ctypes checks need KWEAVE_CLI_LIB")
    return ctypes.CDLL(lib)


DTYPES = ["<c8", "<c16", ">c8", "<f4", ">f8", "<f8", "<i2", ">i2", "|u1", "|b1"]


@pytest.mark.parametrize("dt", DTYPES)
@pytest.mark.parametrize("shape", [(5,), (3, 4), (2, 3, 5), ()])
def test_numpy_written_loads_in_kweave(cli, tmp_path, dt, shape):
    rng = np.random.default_rng(1)
    a = rng.standard_normal(shape) * 50
    if np.dtype(dt).kind == "c":
        a = a + 1j * rng.standard_normal(shape)
    a = np.asarray(a).astype(dt)
    src = tmp_path / "a.npy"
    np.save(src, a)
    arr = Arr()
    assert cli.kw_npy_read(str(src).encode(), ctypes.byref(arr)) == 0
    assert arr.ndim == len(shape)
    assert tuple(arr.dims[: arr.ndim]) == shape
    out = tmp_path / "b.npy"
    assert cli.kw_npy_write(str(out).encode(), ctypes.byref(arr)) == 0
    cli.kw_array_free(ctypes.byref(arr))
    b = np.load(out)
    kind = np.dtype(dt).kind
    expect = {"c": np.complex64, "f": np.float32, "i": np.float32, "u": np.uint8, "b": np.uint8}[kind]
    assert b.dtype == expect and b.shape == shape
    np.testing.assert_allclose(b, a.astype(expect), rtol=1e-6)


@pytest.mark.parametrize("version", [(1, 0), (2, 0), (3, 0)])
def test_header_versions(cli, tmp_path, version):
    a = np.arange(12, dtype=np.complex64).reshape(3, 4) * (1 + 2j)
    p = tmp_path / "v.npy"
    with open(p, "wb") as f:
        np.lib.format.write_array(f, a, version=version)
    arr = Arr()
    assert cli.kw_npy_read(str(p).encode(), ctypes.byref(arr)) == 0
    got = np.ctypeslib.as_array(ctypes.cast(arr.data, ctypes.POINTER(ctypes.c_float)), shape=(24,))
    np.testing.assert_array_equal(got.view(np.complex64).reshape(3, 4), a)
    cli.kw_array_free(ctypes.byref(arr))


@pytest.mark.parametrize("dt", ["<c8", "<c16", ">f8", "<f4", "<i2", "|u1"])
@pytest.mark.parametrize("shape", [(3, 4), (2, 3, 5), (4, 1, 3, 2)])
def test_np_fft_output_fortran_ordered_npy_reads_as_c_order(cli, tmp_path, dt, shape):
    """np.save of a Fortran-ordered array (what np.fft.fftn of a transposed
    array gives) keeps a[i, j, ...] in place (issue 16: it was refused)."""
    a = (np.arange(np.prod(shape)).reshape(shape) % 7 + 1).astype(dt)
    if a.dtype.kind == "c":
        a = a * (1 - 2j)
    f = np.asfortranarray(a)
    assert f.flags.f_contiguous and not f.flags.c_contiguous
    p = tmp_path / "f.npy"
    np.save(p, f)
    arr = Arr()
    assert cli.kw_npy_read(str(p).encode(), ctypes.byref(arr)) == 0
    assert tuple(arr.dims[:arr.ndim]) == shape
    kind = {"c": (np.complex64, 2), "u": (np.uint8, 1)}.get(a.dtype.kind, (np.float32, 1))
    ctype = ctypes.c_uint8 if kind[0] == np.uint8 else ctypes.c_float
    n = int(np.prod(shape)) * kind[1]
    got = np.ctypeslib.as_array(ctypes.cast(arr.data, ctypes.POINTER(ctype)), shape=(n,))
    np.testing.assert_array_equal(got.view(kind[0]).reshape(shape), a.astype(kind[0]))
    cli.kw_array_free(ctypes.byref(arr))


def test_np_fft_fftn_saved_kspace_reconstructs_as_its_c_order_copy(tmp_path):
    """The natural numpy script: k = np.fft.fftn(...) of a transposed array;
    recon of the Fortran-ordered file equals recon of the C-ordered one."""
    import subprocess
    rng = np.random.default_rng(0)
    img = rng.standard_normal((32, 24, 4)) + 1j * rng.standard_normal((32, 24, 4))
    k = np.asfortranarray(np.fft.fftn(img.T, axes=(1, 2)), np.complex64)   # (4, 24, 32)
    assert k.flags.f_contiguous and not k.flags.c_contiguous
    np.save(tmp_path / "f.npy", k)
    np.save(tmp_path / "c.npy", np.ascontiguousarray(k))
    kw = os.environ["KWEAVE"]
    for n in ("f", "c"):
        subprocess.run([kw, "recon", "--in", tmp_path / f"{n}.npy", "--out", tmp_path / f"{n}o.npy"],
                       check=True, capture_output=True)
    assert (tmp_path / "fo.npy").read_bytes() == (tmp_path / "co.npy").read_bytes()


def test_bad_files_refused(cli, tmp_path):
    good = tmp_path / "g.npy"
    np.save(good, np.ones((4, 4), np.complex64))
    raw = good.read_bytes()
    cases = {
        "empty": b"",
        "magic": b"\x92NUMPY" + raw[6:],
        "truncated_header": raw[:30],
        "truncated_data": raw[:-5],
        "extra_data": raw + b"\0" * 8,
        "object": raw.replace(b"<c8", b"|O8"),
        "lying_shape": raw.replace(b"(4, 4)", b"(9, 4)"),
    }
    for name, data in cases.items():
        p = tmp_path / f"{name}.npy"
        p.write_bytes(data)
        arr = Arr()
        assert cli.kw_npy_read(str(p).encode(), ctypes.byref(arr)) != 0, name
        assert arr.data is None, name

"""Shared helpers for the reference checks (run by /usr/bin/python3 -m pytest).

KWEAVE     path of the kweave binary (CLI checks)
KWEAVE_LIB path of libkweave.so (ctypes checks; unset under sanitizers, where
           those checks are skipped)
"""
import ctypes
import json
import os
import subprocess

import numpy as np
import pytest

KWEAVE = os.environ.get("KWEAVE", os.path.join(os.path.dirname(__file__), "..", "..", "build", "kweave"))
KWEAVE_LIB = os.environ.get("KWEAVE_LIB")


def run(*args, input=None, check=True):
    """Run kweave; returns CompletedProcess (text stdout/stderr unless input is bytes)."""
    p = subprocess.run([KWEAVE, *map(str, args)], input=input, capture_output=True,
                       text=not isinstance(input, bytes), timeout=600)
    if check and p.returncode != 0:
        raise AssertionError(f"kweave {' '.join(map(str, args))} exited {p.returncode}: {p.stderr}")
    return p


def krun(d, *args, check=True):
    """kweave with the FFTW wisdom of folder d shared by the runs (and one
    thread): byte-identical outputs from run to run."""
    env = dict(os.environ, KWEAVE_WISDOM=str(d / "wisdom"), OMP_NUM_THREADS="1")
    p = subprocess.run([KWEAVE, *map(str, args)], capture_output=True, text=True, env=env, timeout=300)
    if check and p.returncode != 0:
        raise AssertionError(f"kweave {' '.join(map(str, args))} exited {p.returncode}: {p.stderr}")
    return p


def centered_ifft2(k):
    """The centered unitary inverse DFT over the last two axes (docs/api.md's
    convention, numpy.fft)."""
    ax = (-2, -1)
    return np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(k, axes=ax), axes=ax, norm="ortho"), axes=ax)


def encode(d, name, *args):
    """kweave encode --out d/name.npy ARGS; returns (k-space, sidecar dict)."""
    out = d / f"{name}.npy"
    run("encode", "--out", out, *args)
    with open(d / f"{name}.json") as f:
        return np.load(out), json.load(f)


def bad(*args, field=None, code=2, input=None):
    """Run kweave expecting a clean failure: exit `code`, one error line naming `field`."""
    p = run(*args, input=input, check=False)
    err = p.stderr if isinstance(p.stderr, str) else p.stderr.decode()
    assert p.returncode == code, f"exit {p.returncode}, stderr: {err}"
    lines = [l for l in err.splitlines() if l.strip()]
    assert len(lines) == 1, f"expected one error line, got: {err!r}"
    assert lines[0].startswith("kweave: error: "), lines[0]
    if field:
        assert field in lines[0], f"{field!r} not named in {lines[0]!r}"
    return lines[0]


@pytest.fixture(scope="session")
def lib():
    if not KWEAVE_LIB:
        pytest.skip("ctypes checks need KWEAVE_LIB (skipped under sanitizers)")
    return ctypes.CDLL(KWEAVE_LIB)


def c64(a):
    """Contiguous complex64 copy and its ctypes pointer."""
    a = np.ascontiguousarray(a, dtype=np.complex64)
    return a, a.ctypes.data_as(ctypes.c_void_p)


def f32(a):
    a = np.ascontiguousarray(a, dtype=np.float32)
    return a, a.ctypes.data_as(ctypes.c_void_p)


def sizes(*d):
    return (ctypes.c_size_t * len(d))(*d)


def relerr(a, b):
    return float(np.linalg.norm(np.ravel(a) - np.ravel(b)) / np.linalg.norm(np.ravel(b)))

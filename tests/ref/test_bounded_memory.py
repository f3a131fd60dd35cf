"""Memory is bounded by what arrives, not by what a header promises (issue 18).

A 128-byte .npy header on standard input that claims (2, 4096, 65536)
complex64 (4 GiB) used to make `kweave recon` allocate and zero 4 GiB before
it found no data. A pipe's array now grows as its data arrives (cli/npy.c),
so the run fails on the truncation at the memory of what was sent. Peak RSS
is measured in a fresh Python process whose only child is kweave
(getrusage(RUSAGE_CHILDREN).ru_maxrss, KiB on Linux)."""
import subprocess
import sys

import numpy as np

from conftest import KWEAVE

PEAK = r"""
import resource, subprocess, sys
data = sys.stdin.buffer.read()
p = subprocess.run(sys.argv[1:], input=data, capture_output=True)
sys.stdout.write("%d %d %s" % (p.returncode, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss,
                               p.stderr.decode().strip()))
"""


def peak(argv, data):
    p = subprocess.run([sys.executable, "-c", PEAK, *map(str, argv)], input=data,
                       capture_output=True, check=True)
    rc, kib, err = p.stdout.decode().split(" ", 2)
    return int(rc), int(kib), err


def lying_header(shape):
    hdr = b"{'descr': '<c8', 'fortran_order': False, 'shape': %s, }" % str(shape).encode()
    hdr += b" " * (118 - len(hdr)) + b"\n"
    return b"\x93NUMPY\x01\x00" + len(hdr).to_bytes(2, "little") + hdr + b"\0" * 128


def test_a_lying_header_on_stdin_costs_what_was_sent(tmp_path):
    rc, kib, err = peak([KWEAVE, "recon", "--in", "-", "--fov", "200mm", "--out", tmp_path / "x.npy",
                         "--max-memory", "8GiB"], lying_header((2, 4096, 65536)))
    assert rc == 2 and "truncated" in err, err
    assert kib < 200 * 1024, f"peak RSS {kib} KiB for 128 bytes of data"
    assert not (tmp_path / "x.npy").exists()


def test_a_pipe_larger_than_the_first_block_reads_whole(tmp_path):
    """More than the first 16 MiB block: the growth path gives the same array."""
    a = (np.random.default_rng(3).standard_normal((2, 1024, 1100)) * (1 + 1j)).astype(np.complex64)
    np.save(tmp_path / "a.npy", a)
    data = (tmp_path / "a.npy").read_bytes()
    for src in (["--in", "-"], ["--in", tmp_path / "a.npy"]):
        out = tmp_path / ("pipe.npy" if src[1] == "-" else "file.npy")
        p = subprocess.run([KWEAVE, "recon", *src, "--fov", "200mm", "--out", out],
                           input=data if src[1] == "-" else None, capture_output=True)
        assert p.returncode == 0, p.stderr
    assert (tmp_path / "pipe.npy").read_bytes() == (tmp_path / "file.npy").read_bytes()

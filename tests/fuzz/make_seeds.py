"""Writes the seed corpus of the fuzz targets (tests/fuzz/<target>/seed-*).
Run once with /usr/bin/python3 from the repository root; the files are kept in
git. Beside them: cov-* files, the corpus grown by the fuzz runs and reduced
with libFuzzer's -merge=1, and crash-* files, inputs that once crashed a
target (see docs/reliability.md)."""
import io
import json
import os

import numpy as np

here = os.path.dirname(os.path.abspath(__file__))


def put(target, name, data):
    d = os.path.join(here, target)
    os.makedirs(d, exist_ok=True)
    with open(os.path.join(d, "seed-" + name), "wb") as f:
        f.write(data if isinstance(data, bytes) else data.encode())


def npy(a, version=None):
    b = io.BytesIO()
    np.lib.format.write_array(b, a, version=version)
    return b.getvalue()


rng = np.random.default_rng(0)
for dt in ["<c8", "<c16", ">c8", "<f4", ">f4", "<f8", "<i2", ">i2", "|u1", "|b1"]:
    a = rng.standard_normal((2, 3)) * 10
    if np.dtype(dt).kind == "c":
        a = a + 1j * a
    put("npy", "dt" + dt.replace("<", "le").replace(">", "be").replace("|", "na"), npy(a.astype(dt)))
put("npy", "v2", npy(np.ones((3, 2, 2), np.complex64), (2, 0)))
put("npy", "v3", npy(np.ones(4, np.float32), (3, 0)))
put("npy", "scalar", npy(np.float32(3.5).reshape(())))
put("npy", "empty", npy(np.zeros((0, 4), np.float32)))
put("npy", "nan", npy(np.array([np.nan, np.inf, 1], np.float32)))
put("npy", "fortran", npy(np.asfortranarray(np.ones((2, 3), np.float32))))
put("npy", "5d", npy(np.ones((1, 2, 1, 2, 1), np.uint8)))

side = {"kweave_version": "0.1.0", "kind": "kspace", "layout": "cartesian",
        "shape": [4, 64, 64], "matrix": [64, 64], "fov_m": [0.256, 0.256],
        "phantom": "shepp-logan-modified", "coils": 4, "snr": 30, "noise_sigma": 0.01,
        "seed": 1, "scale": "unitary", "trajectory": None, "sens": "sens.npy",
        "noise_cov": None, "pattern": "mask.npy", "acceleration": 2, "acs_lines": 24,
        "protocol": {"b0_t": 3, "bandwidth_hz": 32000, "te_s": 0.005, "tr_s": 0.5}}
put("json", "sidecar", json.dumps(side, indent=2))
put("json", "noncart", json.dumps(dict(side, layout="noncartesian", trajectory="traj.npy",
                                       shape=[4, 8192])))
put("json", "nested", '{"a": [1, 2.5e-3, -0, true, false, null, "x\\u00e9"], "b": {"c": {}}}')
put("json", "numbers", '[1e308, -1e-308, 123456789012345678901234567890, 0.1]')

for i, s in enumerate(["256mm", "0.25m", "40mT/m", "150T/m/s", "3T", "32kHz", "250Hz/pixel",
                       "4.6ms", " 25 cm ", "4G/cm", "200mT/m/ms", "37C", "310K", "90deg",
                       "1.5rad", "3.5ppm", "100Hz/px", "2GiB", "512MiB", "1e-3s", "-5mm",
                       "nan", "inf", "1e400T"]):
    put("units", f"{i:02d}", s)

protos = {
    "basic": "# a 2-D gradient echo\nsequence = gre\nfov = 256mm\nmatrix = 256\nbandwidth = 32kHz\n"
             "b0 = 3T\ngmax = 40mT/m\nslew = 150T/m/s\n",
    "rect": "fov = 256mm,192mm\nmatrix = 256x192\nbandwidth = 250Hz/pixel\nb0 = 1.5T\n"
            "te = 4.6ms\ntr = 10ms\ntemperature = 310K\n",
    "3d": "fov = 256mm, 256mm, 128mm   # x, y, z\nmatrix = 128x128x64\nbandwidth = 50kHz\n"
          "raster = 10us\nrf-duration = 2ms\ntbw = 4\nslice = 5mm\n",
    "epi": "sequence = epi\nfov = 220mm\nmatrix = 64\nbandwidth = 2000Hz/pixel\nshots = 1\n"
           "partial-fourier = 0.75\nt2star = 30ms\nmax-readout = 60ms\n",
    "radial": "sequence = radial\nfov = 256mm\nmatrix = 128\nbandwidth = 64kHz\nspokes = 201\n"
              "averages = 2\nspoiler = 4\ncrusher = 2\ninterleaves = 8\n",
    "crlf": "fov = 256mm\r\nmatrix = 64\r\nbandwidth = 32kHz\r\n",
    "bad": "fov 256mm\nmatrix = = 3\n= 5\n",
}
for name, text in protos.items():
    put("protofile", name, text)

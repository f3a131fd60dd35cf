"""HDF5 input (issue 16, docs/files.md): `kweave recon` (and score, render)
read one dataset of an HDF5 file named FILE.h5:/path (.hdf5 and MATLAB v7.3
.mat too) wherever they read a .npy array.

References, all outside kweave:
- h5py (Debian's python3-h5py) writes every file: numpy complex as h5py's own
  compound (members 'r' and 'i'), MATLAB's layout of complex (a compound
  'real'/'imag') by hand, a trailing axis of 2, float32, float64 and int16;
  the v7.3-style .mat is an HDF5 file with a 512-byte user block holding a
  MATLAB-style text header (the layout MATLAB's -v7.3 files have).
- numpy (python3-numpy): docs/api.md's centered unitary inverse DFT
  fftshift(ifft2(ifftshift(k), norm="ortho")) of the values as stored, in
  double; a single coil's root-sum-of-squares is its magnitude. Relative
  error <= 1e-6 (float32 arithmetic against a double reference).
- the .npy path of the same command on the same values: byte-identical output
  (runs share one FFTW wisdom file: docs/reliability.md's promise).
"""
import json
import shutil
import subprocess

import h5py
import numpy as np
import pytest

from conftest import KWEAVE, KWEAVE_LIB, bad, krun, relerr

NX, NY = 64, 48


def ifft2c(k):
    ax = (-2, -1)
    k = np.asarray(k, dtype=np.complex128)
    return np.fft.fftshift(np.fft.ifft2(np.fft.ifftshift(k, axes=ax), axes=ax, norm="ortho"), axes=ax)


@pytest.fixture(scope="module")
def data(tmp_path_factory):
    d = tmp_path_factory.mktemp("h5")
    krun(d, "encode", "--phantom", "shepp-logan", "--matrix", f"{NX}x{NY}", "--fov", "240mm,180mm",
         "--out", d / "ks.npy")
    krun(d, "encode", "--phantom", "shepp-logan", "--matrix", f"{NX}x{NY}", "--fov", "240mm",
         "--coils", 4, "--sens-out", d / "maps.npy", "--truth", d / "truth.npy", "--out", d / "mc.npy")
    k = np.load(d / "ks.npy")
    krun(d, "recon", "--in", d / "ks.npy", "--out", d / "warm.npy")  # warm the wisdom
    krun(d, "recon", "--in", d / "ks.npy", "--out", d / "npy.npy")
    return d, k


def pairs(k, dt):
    return np.stack([k.real, k.imag], axis=-1).astype(dt)


def compound(k, names, dt):
    """A compound of the members `names` (in that order); r/real get the real parts."""
    c = np.empty(k.shape, dtype=[(names[0], dt), (names[1], dt)])
    for n in names:
        c[n] = k.real if n in ("r", "real") else k.imag
    return c


def write_mat73(path, name, value):
    """An HDF5 file as MATLAB -v7.3 writes it: a 512-byte user block with the
    MAT-file text header, the variable at the root with its MATLAB_class."""
    with h5py.File(path, "w", userblock_size=512) as f:
        ds = f.create_dataset(name, data=value)
        ds.attrs["MATLAB_class"] = np.bytes_("double")
    head = b"MATLAB 7.3 MAT-file, Platform: GLNXA64, Created on: Thu Jan  1 00:00:00 2026 HDF5 schema 1.00 ."
    with open(path, "r+b") as f:
        f.write(head.ljust(116, b" ") + b"\0" * 8 + b"\x00\x02IM")


# (file name, dataset, what h5py stores, values the stored data hold, same bytes as ks.npy?)
def layouts(k):
    k16 = np.round(pairs(k, np.float64) / np.abs(pairs(k, np.float64)).max() * 30000).astype(np.int16)
    return [
        ("c64.h5", "/ks", k.astype(np.complex64), k, True),                      # h5py: compound r/i float32
        ("c128.hdf5", "/grp/ks", k.astype(np.complex128), k, True),              # compound r/i float64
        ("ri.h5", "/ks", compound(k, ("real", "imag"), np.float32), k, True),   # compound real/imag
        ("ir.h5", "/ks", compound(k, ("imag", "real"), np.float64), k, True),   # members in the other order
        ("p32.h5", "/ks", pairs(k, np.float32), k, True),                         # trailing axis 2, float32
        ("p64.h5", "/ks", pairs(k, np.float64), k, True),                         # trailing axis 2, float64
        ("p16.h5", "/ks", k16, k16[..., 0] + 1j * k16[..., 1].astype(np.float64), False),  # int16 pairs
    ]


@pytest.mark.parametrize("i", range(7))
def test_layouts_reconstruct_like_numpy_and_npy(data, i):
    d, k = data
    name, dset, stored, values, same = layouts(k)[i]
    with h5py.File(d / name, "w") as f:
        f.create_dataset(dset, data=stored)
    out = d / f"out_{i}.npy"
    krun(d, "recon", "--in", f"{d / name}:{dset}", "--out", out)
    img = np.load(out)
    assert img.dtype == np.float32 and img.shape == (NY, NX)
    assert relerr(img, np.abs(ifft2c(values))) <= 1e-6
    if same:
        assert (d / "npy.npy").read_bytes() == out.read_bytes()


def test_mat73_complex_real_imag(data):
    d, k = data
    write_mat73(d / "k.mat", "kdata", compound(k, ("real", "imag"), np.float64))
    with open(d / "k.mat", "rb") as f:
        assert f.read(10) == b"MATLAB 7.3"
    krun(d, "recon", "--in", f"{d / 'k.mat'}:/kdata", "--out", d / "mat.npy")
    assert relerr(np.load(d / "mat.npy"), np.abs(ifft2c(k))) <= 1e-6
    assert (d / "npy.npy").read_bytes() == (d / "mat.npy").read_bytes()


def test_real_image_float_and_int16_for_score_and_render(data):
    d, k = data
    img = np.load(d / "npy.npy")
    with h5py.File(d / "img.h5", "w") as f:
        f["f8"] = img.astype(np.float64)
        f["i16"] = np.round(img / img.max() * 1000).astype(np.int16)
    p = krun(d, "score", "--ref", f"{d / 'img.h5'}:/f8", "--test", d / "npy.npy", "--json", "-")
    assert json.loads(p.stdout)["nrmse"] == 0
    np.save(d / "i16.npy", np.round(img / img.max() * 1000).astype(np.float32))
    krun(d, "render", "--in", f"{d / 'img.h5'}:/i16", "--out", d / "a.png")
    krun(d, "render", "--in", d / "i16.npy", "--out", d / "b.png")
    assert (d / "a.png").read_bytes() == (d / "b.png").read_bytes()


def test_maps_and_ref_from_hdf5_equal_npy(data):
    d, _ = data
    mc, maps, truth = np.load(d / "mc.npy"), np.load(d / "maps.npy"), np.load(d / "truth.npy")
    nc = mc.shape[0]
    cov = (np.eye(nc) + 0.1 * (np.ones((nc, nc)) - np.eye(nc)) * (1 + 0.5j)).astype(np.complex64)
    cov = (0.5 * (cov + cov.conj().T)).astype(np.complex64)  # Hermitian, positive definite
    np.save(d / "cov.npy", cov)
    with h5py.File(d / "mc.h5", "w") as f:
        f["k"] = mc
        f["maps"] = pairs(maps, np.float32)   # trailing axis 2
        f["cov"] = pairs(cov, np.float64)     # (coils, coils, 2)
        f["truth"] = truth
    for tag, args in (("n", ["--in", d / "mc.npy", "--sens", d / "maps.npy", "--ref", d / "truth.npy",
                             "--noise-cov", d / "cov.npy"]),
                      ("h", ["--in", f"{d / 'mc.h5'}:/k", "--sens", f"{d / 'mc.h5'}:/maps",
                             "--ref", f"{d / 'mc.h5'}:/truth", "--noise-cov", f"{d / 'mc.h5'}:/cov"])):
        krun(d, "recon", *args, "--combine", "optimal", "--out", d / f"mc_{tag}.npy", "--json", d / f"mc_{tag}.json")
    assert (d / "mc_n.npy").read_bytes() == (d / "mc_h.npy").read_bytes()
    sn, sh = (json.load(open(d / f"mc_{t}.json"))["scores"] for t in "nh")
    assert (sn["nrmse"], sn["psnr_db"], sn["ssim"]) == (sh["nrmse"], sh["psnr_db"], sh["ssim"])


def test_trajectory_from_hdf5_is_real(data):
    """A trajectory (samples, 2) keeps its two coordinates (no complex pairs)."""
    d, _ = data
    n = 32
    r = np.arange(2 * n) / 2 - n / 2
    ang = np.arange(24) * np.pi / 24
    traj = np.stack([np.outer(np.cos(ang), r).ravel(), np.outer(np.sin(ang), r).ravel()], 1).astype(np.float32)
    rng = np.random.default_rng(3)
    k = (rng.standard_normal((1, len(traj))) + 1j * rng.standard_normal((1, len(traj)))).astype(np.complex64)
    np.save(d / "nc.npy", k)
    np.save(d / "nc_traj.npy", traj)
    with h5py.File(d / "nc.h5", "w") as f:
        f["k"] = k
        f["traj"] = traj.astype(np.float64)
    krun(d, "recon", "--in", d / "nc.npy", "--trajectory", d / "nc_traj.npy", "--out", d / "nc_n.npy")
    krun(d, "recon", "--in", f"{d / 'nc.h5'}:/k", "--trajectory", f"{d / 'nc.h5'}:/traj", "--out", d / "nc_h.npy")
    assert (d / "nc_n.npy").read_bytes() == (d / "nc_h.npy").read_bytes()


def test_multislice_hdf5_equals_npy(data):
    d, _ = data
    krun(d, "encode", "--phantom", "weave3d", "--matrix", "32x32", "--fov", "200mm,200mm,120mm", "--slices", 3,
         "--slice-thickness", "5mm", "--slice-points", 2, "--coils", 2, "--out", d / "ms.npy")
    with h5py.File(d / "ms.h5", "w") as f:
        f["k"] = np.load(d / "ms.npy")
    krun(d, "recon", "--in", d / "ms.npy", "--out", d / "ms_n.npy")
    krun(d, "recon", "--in", f"{d / 'ms.h5'}:/k", "--out", d / "ms_h.npy")  # sidecar: ms.json
    assert (d / "ms_n.npy").read_bytes() == (d / "ms_h.npy").read_bytes()


def test_sidecar_beside_the_hdf5_file(data):
    """FILE.h5:/path takes FILE.json as its sidecar (here: a shape that differs)."""
    d, k = data
    with h5py.File(d / "side.h5", "w") as f:
        f["ks"] = k[:, :-2]
    shutil.copy(d / "ks.json", d / "side.json")
    bad("recon", "--in", f"{d / 'side.h5'}:/ks", "--out", d / "side.npy", field="shape")
    assert not (d / "side.npy").exists()


# ---- bad input: exit 2, one line naming the field and the reason, nothing written

def test_bad_input(data):
    d, k = data
    with h5py.File(d / "bad.h5", "w") as f:
        f["ks"] = k
        f["str"] = np.bytes_("not numbers")
        f["three"] = np.zeros(k.shape, dtype=[("real", "f4"), ("imag", "f4"), ("w", "f4")])
        f["names"] = np.zeros(k.shape, dtype=[("a", "f4"), ("b", "f4")])
        f["line"] = k[0]
        f["real"] = k.real
        f.create_group("grp")
        f["maps"] = np.ones((3, NY, NX), np.complex64)
    (d / "text.h5").write_text("not HDF5\n")
    out = d / "bad_out.npy"
    cases = [
        (["--in", f"{d / 'bad.h5'}:/nope"], "in", "no dataset '/nope'"),
        (["--in", f"{d / 'bad.h5'}:/grp/nope/deeper"], "in", "no dataset"),
        (["--in", f"{d / 'bad.h5'}:/str"], "in", "not numeric"),
        (["--in", f"{d / 'bad.h5'}:/three"], "in", "compound of 3 members"),
        (["--in", f"{d / 'bad.h5'}:/names"], "in", "real and imag"),
        (["--in", f"{d / 'bad.h5'}:/grp"], "in", "not a dataset"),
        (["--in", f"{d / 'bad.h5'}:/line"], "in", "dimensions"),
        (["--in", f"{d / 'bad.h5'}:/real"], "in", "must be complex"),
        (["--in", f"{d / 'bad.h5'}"], "in", "name the dataset"),
        (["--in", f"{d / 'text.h5'}:/ks"], "in", "not an HDF5 file"),
        (["--in", f"{d / 'missing.h5'}:/ks"], "in", "No such file"),
        (["--in", f"{d / 'bad.h5'}:/ks", "--sens", f"{d / 'bad.h5'}:/maps"], "sens", "one map per coil"),
        (["--in", f"{d / 'bad.h5'}:/ks", "--ref", f"{d / 'bad.h5'}:/str"], "ref", "not numeric"),
        (["--max-memory", "1MiB", "--in", f"{d / 'big.h5'}:/ks"], "in", "--max-memory"),
    ]
    with h5py.File(d / "big.h5", "w") as f:
        f.create_dataset("ks", shape=(4, 256, 256), dtype=np.complex64)  # 2 MiB, never written
    for args, field, why in cases:
        line = bad("recon", *args, "--out", out, field=field)
        assert f"error: {field}:" in line and why in line, line
        assert not out.exists()


def test_library_does_not_link_hdf5():
    if not KWEAVE_LIB or not shutil.which("readelf"):
        pytest.skip("needs KWEAVE_LIB and readelf")
    dyn = subprocess.run(["readelf", "-d", KWEAVE_LIB], capture_output=True, text=True).stdout
    assert "hdf5" not in dyn
    assert "hdf5" in subprocess.run(["readelf", "-d", KWEAVE], capture_output=True, text=True).stdout

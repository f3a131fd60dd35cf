"""HDF5 output (issue 16, docs/files.md): `kweave recon --out FILE.h5[:/dataset]`
writes the image with the run's metadata as attributes of the dataset.

References, outside kweave:
- h5py (Debian's python3-h5py) reads every file written here.
- the .npy output of the same run (same FFTW wisdom file, so the same
  bytes: docs/reliability.md's promise): the dataset equals it bit for bit.
- the attributes against the sidecar kweave encode wrote: voxel size = FOV /
  matrix (the definition of the voxel size of a Cartesian image).
"""
import json

import h5py
import numpy as np
import pytest

from conftest import bad, krun

NX, NY = 64, 48


@pytest.fixture(scope="module")
def d(tmp_path_factory):
    d = tmp_path_factory.mktemp("h5out")
    krun(d, "encode", "--phantom", "shepp-logan", "--matrix", f"{NX}x{NY}", "--fov", "240mm,180mm",
         "--coils", 4, "--sens-out", d / "maps.npy", "--out", d / "ks.npy", "--quiet")
    krun(d, "recon", "--in", d / "ks.npy", "--out", d / "warm.npy")  # warm the wisdom
    return d


def test_h5_image_equals_npy_bit_for_bit_with_its_metadata(d):
    krun(d, "recon", "--in", d / "ks.npy", "--out", d / "img.npy")
    krun(d, "recon", "--in", d / "ks.npy", "--out", d / "img.h5")  # the default dataset /image
    with h5py.File(d / "img.h5", "r") as f:
        assert list(f.keys()) == ["image"]
        ds = f["image"]
        assert ds.dtype == np.float32
        np.testing.assert_array_equal(ds[()], np.load(d / "img.npy"))
        a = dict(ds.attrs)
    side = json.loads((d / "ks.json").read_text())
    assert a["method"] == "fft" and a["combine"] == "optimal"  # the sidecar names the maps
    assert a["axes"] == "y,x"
    assert list(a["matrix"]) == [NX, NY]
    np.testing.assert_allclose(a["fov_m"], side["fov_m"], rtol=1e-12)
    np.testing.assert_allclose(a["voxel_size_m"], np.array(side["fov_m"]) / [NX, NY], rtol=1e-12)
    assert a["kweave_version"] == side["kweave_version"]
    # NIfTI's origin: the centre of the centred transform (index n/2) at 0
    np.testing.assert_allclose(a["origin_m"][:2], [-0.24 / NX * (NX // 2), 0.18 / NY * (NY // 2)],
                               rtol=1e-6)
    assert not list(d.glob(".img.h5*"))  # no temporary file left


def test_h5_complex_image_is_the_r_i_compound(d):
    krun(d, "recon", "--in", d / "ks.npy", "--out", d / "c.npy", "--complex")
    krun(d, "recon", "--in", d / "ks.npy", "--out", f"{d / 'c.h5'}:/recon/complex", "--complex")
    with h5py.File(d / "c.h5", "r") as f:
        ds = f["recon/complex"]
        t = ds.id.get_type()  # the stored type: a compound of two 32-bit floats r, i
        assert t.get_nmembers() == 2
        assert [t.get_member_name(i) for i in range(2)] == [b"r", b"i"]
        assert all(t.get_member_type(i).get_size() == 4 for i in range(2))
        v = ds[()]  # which h5py reads as numpy's complex64
    assert v.dtype == np.complex64
    np.testing.assert_array_equal(v, np.load(d / "c.npy"))
    # and kweave reads it back as the complex image it wrote
    krun(d, "score", "--ref", d / "c.npy", "--test", f"{d / 'c.h5'}:/recon/complex", "--json", d / "s.json")
    assert json.loads((d / "s.json").read_text())["nrmse"] == 0


def test_h5_coil_images_name_their_axes(d):
    krun(d, "recon", "--in", d / "ks.npy", "--out", d / "k.npy", "--keep-coils")
    krun(d, "recon", "--in", d / "ks.npy", "--out", d / "k.hdf5", "--keep-coils")
    with h5py.File(d / "k.hdf5", "r") as f:
        v = f["image"][()]
        assert f["image"].attrs["axes"] == "coil,y,x"
        assert f["image"].attrs["combine"] == "none (coil images)"
    np.testing.assert_array_equal(v, np.load(d / "k.npy"))


def test_h5_multislice_records_slice_thickness_and_gap(tmp_path):
    krun(tmp_path, "encode", "--phantom", "weave3d", "--matrix", "32x24", "--fov", "200mm,200mm,120mm",
         "--slices", 3, "--slice-thickness", "4mm", "--slice-gap", "1mm", "--coils", 2,
         "--out", tmp_path / "ms.npy", "--quiet")
    krun(tmp_path, "recon", "--in", tmp_path / "ms.npy", "--out", tmp_path / "ms_img.npy")
    krun(tmp_path, "recon", "--in", tmp_path / "ms.npy", "--out", f"{tmp_path / 'ms.h5'}:/stack")
    with h5py.File(tmp_path / "ms.h5", "r") as f:
        ds = f["stack"]
        np.testing.assert_array_equal(ds[()], np.load(tmp_path / "ms_img.npy"))
        a = dict(ds.attrs)
    assert a["axes"] == "slice,y,x"
    assert list(a["matrix"]) == [32, 24, 3]
    assert a["slice_thickness_m"] == pytest.approx(0.004) and a["slice_gap_m"] == pytest.approx(0.001)
    np.testing.assert_allclose(a["voxel_size_m"], [0.2 / 32, 0.2 / 24, 0.005], rtol=1e-9)


@pytest.mark.parametrize("target,why", [
    ("o.h5:", "names no dataset"),
    ("o.h5:/", "empty part"),
    ("o.h5:/a//b", "empty part"),
    ("o.h5:/a/", "empty part"),
    ("o.h5:/a/../b", ". or .."),
    ("o.mat:/image", ".h5 or .hdf5"),
])
def test_bad_h5_dataset_path_exits_2_naming_out(d, target, why):
    line = bad("recon", "--in", d / "ks.npy", "--out", f"{d}/{target}", field="out")
    assert why in line
    assert not (d / "o.h5").exists() and not (d / "o.mat").exists()


def test_h5_output_to_a_directory_leaves_nothing(d):
    (d / "dir.h5").mkdir()
    bad("recon", "--in", d / "ks.npy", "--out", d / "dir.h5", field="out")
    assert not list(d.glob(".dir.h5*"))


def test_encode_writes_kspace_to_hdf5_with_its_sidecar_as_attributes(tmp_path):
    """encode --out FILE.h5[:/dataset]: the k-space bit for bit as the .npy
    path writes it, the sidecar beside the file (FILE.json) and as attributes
    (its scalar keys, and the whole text as kweave_sidecar); recon of the
    dataset equals recon of the .npy."""
    base = ["encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "32", "--coils", "2",
            "--quiet"]
    krun(tmp_path, *base, "--out", tmp_path / "k.npy")
    krun(tmp_path, *base, "--out", tmp_path / "k.h5")
    krun(tmp_path, *base, "--out", f"{tmp_path}/g.h5:/raw/ks")
    with h5py.File(tmp_path / "k.h5", "r") as f:
        ks = f["kspace"]
        assert ks.dtype == np.complex64
        np.testing.assert_array_equal(ks[()], np.load(tmp_path / "k.npy"))
        side = json.loads((tmp_path / "k.json").read_text())
        assert json.loads(ks.attrs["kweave_sidecar"]) == side
        np.testing.assert_array_equal(ks.attrs["fov_m"], side["fov_m"])
        assert ks.attrs["coils"] == side["coils"]
    with h5py.File(tmp_path / "g.h5", "r") as f:
        np.testing.assert_array_equal(f["raw/ks"][()], np.load(tmp_path / "k.npy"))
    krun(tmp_path, "recon", "--in", tmp_path / "k.npy", "--out", tmp_path / "a.npy")
    krun(tmp_path, "recon", "--in", f"{tmp_path}/k.h5:/kspace", "--out", tmp_path / "b.npy")
    assert (tmp_path / "a.npy").read_bytes() == (tmp_path / "b.npy").read_bytes()


def test_encode_bad_hdf5_dataset_path_writes_nothing(tmp_path):
    bad("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "16",
        "--out", f"{tmp_path}/k.h5:/a//b", field="out")
    assert list(tmp_path.iterdir()) == []

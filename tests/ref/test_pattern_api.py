"""The pattern API (libencode/kw_pattern.h) through ctypes against numpy
constructions (outside reference):
- a uniform RY x RZ ky-kz mask with an ACS block equals the numpy mask
  (kz % RZ == 0) & (ky % RY == 0) | ACS, with k = i - n/2 (kw_sampling.h);
- kw_mask_fill() over (nz, ny, nx) equals numpy's repeat of that plane
  along x;
- the golden-angle trajectory equals numpy's (n - N/2) (cos, sin) of
  s x pi / phi (Winkelmann et al. 2007) to float precision."""
import ctypes

import numpy as np
import pytest

from conftest import sizes


class Options(ctypes.Structure):
    """kw_pattern_options, field for field (libencode/kw_pattern.h)."""
    _fields_ = [("struct_size", ctypes.c_size_t), ("kind", ctypes.c_int), ("ndim", ctypes.c_int),
                ("dims", ctypes.c_size_t * 3), ("accel", ctypes.c_double * 3),
                ("acs", ctypes.c_size_t * 3), ("fraction", ctypes.c_double),
                ("ellipse", ctypes.c_int), ("power", ctypes.c_double), ("shift", ctypes.c_long),
                ("seed", ctypes.c_uint64), ("spokes", ctypes.c_size_t), ("tiny", ctypes.c_int),
                ("readout_oversampling", ctypes.c_int), ("dwell_s", ctypes.c_double),
                ("te_s", ctypes.c_double), ("fov_m", ctypes.c_double), ("gmax", ctypes.c_double),
                ("slew", ctypes.c_double), ("raster", ctypes.c_double),
                ("interleaves", ctypes.c_int), ("max_readout_s", ctypes.c_double),
                ("shots", ctypes.c_int)]


class MaskOpts(ctypes.Structure):
    """kw_mask_options (libencode/kw_sampling.h)."""
    _fields_ = [("struct_size", ctypes.c_size_t), ("kind", ctypes.c_int),
                ("dims", ctypes.c_size_t * 2),
                ("accel_y", ctypes.c_double), ("accel_z", ctypes.c_double),
                ("acs_y", ctypes.c_size_t), ("acs_z", ctypes.c_size_t),
                ("fraction", ctypes.c_double), ("ellipse", ctypes.c_int),
                ("power", ctypes.c_double), ("shift", ctypes.c_long), ("seed", ctypes.c_uint64)]


UNIFORM, GOLDEN = 2, 7


def create(lib, o):
    lib.kw_pattern_mask.restype = ctypes.POINTER(ctypes.c_uint8)
    lib.kw_pattern_trajectory.restype = ctypes.POINTER(ctypes.c_float)
    lib.kw_last_error.restype = ctypes.c_char_p
    p = ctypes.c_void_p()
    st = lib.kw_pattern_create(ctypes.byref(p), ctypes.byref(o))
    assert st == 0, lib.kw_last_error()
    return p


def options(lib):
    o = Options()
    lib.kw_pattern_options_init(ctypes.byref(o))
    assert o.struct_size == ctypes.sizeof(Options)  # the layout above matches
    return o


def uniform_plane(nz, ny, rz, ry, az, ay):
    kz = np.arange(nz)[:, None] - nz // 2
    ky = np.arange(ny)[None, :] - ny // 2
    m = (kz % rz == 0) & (ky % ry == 0)
    acs = (kz >= -(az // 2)) & (kz < -(az // 2) + az) & (ky >= -(ay // 2)) & (ky < -(ay // 2) + ay)
    return (m | acs).astype(np.uint8)


@pytest.mark.parametrize("nz,ny,rz,ry,az,ay", [(32, 48, 2, 3, 6, 10), (17, 40, 3, 2, 5, 8)])
def test_uniform_plane_matches_numpy(lib, nz, ny, rz, ry, az, ay):
    o = options(lib)
    o.kind, o.ndim = UNIFORM, 3
    o.dims[:] = [nz, ny, 8]
    o.accel[:] = [rz, ry, 1]
    o.acs[:] = [az, ay, 0]
    p = create(lib, o)
    got = np.ctypeslib.as_array(lib.kw_pattern_mask(p), shape=(nz, ny)).copy()
    lib.kw_pattern_destroy(p)
    assert np.array_equal(got, uniform_plane(nz, ny, rz, ry, az, ay))

    mo = MaskOpts()
    lib.kw_mask_options_init(ctypes.byref(mo))
    assert mo.struct_size == ctypes.sizeof(MaskOpts)  # the layout above matches
    mo.kind, mo.accel_y, mo.accel_z, mo.acs_y, mo.acs_z = 1, ry, rz, ay, az
    mo.dims[:] = [nz, ny]
    full = np.zeros((nz, ny, 8), np.uint8)
    assert lib.kw_mask_fill(ctypes.byref(mo), 3, sizes(nz, ny, 8),
                            full.ctypes.data_as(ctypes.c_void_p), None) == 0
    assert np.array_equal(full, np.repeat(uniform_plane(nz, ny, rz, ry, az, ay)[:, :, None], 8, 2))


def test_golden_trajectory_matches_numpy(lib):
    n, spokes = 32, 9
    o = options(lib)
    o.kind = GOLDEN
    o.dims[:] = [n, n, 0]
    o.spokes = spokes
    p = create(lib, o)
    got = np.ctypeslib.as_array(lib.kw_pattern_trajectory(p), shape=(spokes * n, 2)).copy()
    lib.kw_pattern_destroy(p)
    phi = (1 + np.sqrt(5)) / 2
    th = np.mod(np.arange(spokes) * np.pi / phi, np.pi)
    kr = np.arange(n) - n // 2
    ref = np.stack([np.outer(np.cos(th), kr).ravel(), np.outer(np.sin(th), kr).ravel()], 1)
    assert np.max(np.abs(got - ref)) < 1e-5 * n

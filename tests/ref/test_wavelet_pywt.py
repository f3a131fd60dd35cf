"""kw_wavelet against PyWavelets (the outside reference):
pywt.wavedec2(x, 'dbN', mode='periodization', level=L) packed by
pywt.coeffs_to_array must equal kw_wavelet_forward coefficient by coefficient
(1e-5 relative), pywt.waverec2 must equal kw_wavelet_inverse, and the filter
taps (Daubechies 1992, Table 6.1) must equal pywt.Wavelet('dbN').rec_lo."""
import ctypes

import numpy as np
import pytest

from conftest import c64, f32, relerr

pywt = pytest.importorskip("pywt")
pytestmark = pytest.mark.filterwarnings("ignore:Level value")


def plan(lib, order, ny, nx, levels):
    p = ctypes.c_void_p()
    st = lib.kw_wavelet_create(ctypes.byref(p), order, ctypes.c_size_t(ny), ctypes.c_size_t(nx), levels)
    assert st == 0
    return p


def packed(x, order, levels):
    c = pywt.wavedec2(x, "db%d" % order, mode="periodization", level=levels)
    return pywt.coeffs_to_array(c)[0]


@pytest.mark.parametrize("order", [1, 2, 3, 4])
def test_filter_taps_match_pywt(lib, order):
    h = (ctypes.c_double * 16)()
    n = ctypes.c_int()
    assert lib.kw_wavelet_filter(order, h, ctypes.byref(n)) == 0
    ref = pywt.Wavelet("db%d" % order).rec_lo
    assert n.value == len(ref)
    assert np.max(np.abs(np.array(h[: n.value]) - ref)) < 1e-12


@pytest.mark.parametrize("order,ny,nx,levels", [
    (4, 64, 64, 3), (4, 32, 48, 2), (1, 16, 8, 3), (2, 64, 32, 4),
    (3, 24, 40, 3), (4, 128, 96, 5), (4, 8, 8, 3), (2, 4, 12, 1)])
def test_forward_inverse_match_pywt(lib, order, ny, nx, levels):
    rng = np.random.default_rng(order * 1000 + ny + nx)
    x = rng.standard_normal((ny, nx))
    p = plan(lib, order, ny, nx, levels)
    xin, pin = f32(x)
    out, pout = f32(np.zeros_like(x))
    assert lib.kw_wavelet_forward(p, pin, pout) == 0
    ref = packed(x, order, levels)
    assert relerr(out, ref) < 1e-5
    # inverse of pywt's coefficients against pywt.waverec2
    cin, pc = f32(ref)
    back, pb = f32(np.zeros_like(x))
    assert lib.kw_wavelet_inverse(p, pc, pb) == 0
    c = pywt.array_to_coeffs(ref, pywt.coeffs_to_array(
        pywt.wavedec2(x, "db%d" % order, mode="periodization", level=levels))[1], output_format="wavedec2")
    assert relerr(back, pywt.waverec2(c, "db%d" % order, mode="periodization")) < 1e-5
    lib.kw_wavelet_destroy(p)


def test_complex_is_real_and_imaginary_parts(lib):
    rng = np.random.default_rng(5)
    z = rng.standard_normal((32, 64)) + 1j * rng.standard_normal((32, 64))
    p = plan(lib, 4, 32, 64, 3)
    zin, pin = c64(z)
    out, pout = c64(np.zeros_like(z))
    assert lib.kw_wavelet_forward_c(p, pin, pout) == 0
    ref = packed(z.real, 4, 3) + 1j * packed(z.imag, 4, 3)
    assert relerr(out, ref) < 1e-5
    lib.kw_wavelet_destroy(p)

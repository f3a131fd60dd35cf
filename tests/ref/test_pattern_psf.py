"""Point-spread functions against numpy/scipy/pywt (outside references):
- kw_psf_execute equals numpy's fftshift(ifftn(ifftshift(w))) for the same mask;
- kw_psf_ndft equals a direct numpy sum exp(+2 pi i k.x / N) / N^2;
- the FWHM of a centred block of M of N lines equals the full width at half
  maximum of the Dirichlet kernel sin(pi M y / N) / (N sin(pi y / N)),
  solved by scipy.optimize.brentq (the closed-form PSF of the block);
- the transform point spread equals W F* M F W* e_i computed with
  pywt.waverec2 / wavedec2 (db4, periodization) and numpy's FFT
  (Lustig, Donoho & Pauly 2007)."""
import ctypes

import numpy as np
import pytest

from conftest import c64, f32, sizes

pywt = pytest.importorskip("pywt")
scipy_opt = pytest.importorskip("scipy.optimize")
pytestmark = pytest.mark.filterwarnings("ignore:Level value")


class Metrics(ctypes.Structure):
    _fields_ = [("rank", ctypes.c_int), ("dims", ctypes.c_size_t * 3), ("peak", ctypes.c_double),
                ("fwhm", ctypes.c_double * 3), ("lobe", ctypes.c_double * 3),
                ("peak_sidelobe", ctypes.c_double), ("sidelobe_at", ctypes.c_long * 3),
                ("energy_outside", ctypes.c_double)]


def psf_c(lib, w):
    p = ctypes.c_void_p()
    assert lib.kw_psf_create(ctypes.byref(p), w.ndim, sizes(*w.shape)) == 0
    wa, pw = f32(w)
    out, po = c64(np.zeros(w.shape))
    assert lib.kw_psf_execute(p, pw, po) == 0
    lib.kw_psf_destroy(p)
    return out


def measure(lib, psf):
    m = Metrics()
    a, pa = c64(psf)
    assert lib.kw_psf_measure(pa, psf.ndim, sizes(*psf.shape), ctypes.byref(m)) == 0
    return m


def np_psf(w):
    return np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(w)))


@pytest.mark.parametrize("shape", [(64, 48), (37, 20), (128, 128), (15, 33)])
def test_psf_matches_numpy(lib, shape):
    rng = np.random.default_rng(sum(shape))
    w = (rng.random(shape) < 0.3).astype(np.float32)
    w[shape[0] // 2, shape[1] // 2] = 1
    got = psf_c(lib, w)
    ref = np_psf(w)
    assert np.max(np.abs(got - ref)) < 1e-6 * max(1.0, np.max(np.abs(ref)))


def test_ndft_matches_numpy(lib):
    rng = np.random.default_rng(3)
    n, m, s = 24, 20, 300
    k = rng.uniform(-n / 2, n / 2, (s, 3)).astype(np.float32)
    w = rng.random(s).astype(np.float32)
    ka, pk = f32(k)
    wa, pw = f32(w)
    out, po = c64(np.zeros((m, m)))
    assert lib.kw_psf_ndft(pk, ctypes.c_size_t(3), pw, ctypes.c_size_t(s), ctypes.c_size_t(n),
                           ctypes.c_size_t(m), po, None, None) == 0
    x = np.arange(m) - m // 2
    X, Y = np.meshgrid(x, x)
    ref = np.zeros((m, m), complex)
    for j in range(s):
        ref += w[j] * np.exp(2j * np.pi * (k[j, 0] * X + k[j, 1] * Y) / n)
    ref /= n * n
    assert np.max(np.abs(out - ref)) < 1e-6


@pytest.mark.parametrize("n,mlines", [(256, 16), (256, 32), (128, 24), (512, 40), (64, 64),
                                     (256, 160)])
def test_fwhm_of_centre_block_matches_dirichlet(lib, n, mlines):
    """FWHM of a block of M of N lines (M = N: the full grid; an off-centre
    block is partial Fourier, whose magnitude PSF is the same kernel)."""
    w = np.zeros((n, 4), np.float32)
    w[n - mlines:, :] = 1 if mlines > n // 2 + 16 else 0
    if not w.any():
        w[n // 2 - mlines // 2: n // 2 - mlines // 2 + mlines, :] = 1
    fw = (ctypes.c_double * 2)()
    wa, pw = f32(w)
    assert lib.kw_psf_fwhm_cartesian(pw, 2, sizes(*w.shape), fw) == 0
    d = lambda y: abs(np.sin(np.pi * mlines * y / n) / (n * np.sin(np.pi * y / n))) if y else mlines / n
    half = scipy_opt.brentq(lambda y: d(y) - 0.5 * mlines / n, 1e-9, n / mlines)
    assert abs(fw[0] - 2 * half) < 1e-6 * 2 * half, (fw[0], 2 * half)
    if mlines == n:  # the textbook sinc width, 1.2067 pixels
        assert abs(fw[0] - 1.2067) < 1e-3


def test_fwhm_of_nyquist_radial_is_the_disc_airy_width(lib, tmp_path):
    """Radial spokes with area (ramp) weights cover a disc of radius N/2:
    the PSF is 2 J1(x)/x with x = pi N r (r in pixels / N); its half maximum
    solved with scipy.special.j1 gives FWHM = 2 x / (pi) pixels = 1.410.
    The discrete spokes approximate the disc: 1 % tolerance (ours)."""
    special = pytest.importorskip("scipy.special")
    xh = scipy_opt.brentq(lambda x: 2 * special.j1(x) / x - 0.5, 0.5, 3.5)
    want = 2 * xh / np.pi
    n, S = 64, 101
    th = np.arange(S) * np.pi / S
    kr = np.arange(n) - n // 2
    k = np.stack([np.outer(np.cos(th), kr).ravel(), np.outer(np.sin(th), kr).ravel()], 1)
    w = np.where(np.abs(np.tile(kr, S)) > 0, np.pi * np.abs(np.tile(kr, S)) / S, np.pi / (4 * S))
    ka, pk = f32(k)
    wa, pw = f32(w)
    fw = (ctypes.c_double * 2)()
    assert lib.kw_psf_fwhm_ndft(pk, ctypes.c_size_t(2), pw, ctypes.c_size_t(len(w)),
                                ctypes.c_size_t(n), fw) == 0
    for v in fw:
        assert abs(v - want) < 0.01 * want, (v, want)


def tpsf_ref(w, level, levels=4):
    ny, nx = w.shape
    by, bx = ny >> level, nx >> level
    ci = (by + by // 2, bx + bx // 2)
    z = np.zeros((ny, nx))
    z[ci] = 1
    slices = pywt.coeffs_to_array(pywt.wavedec2(z, "db4", mode="periodization", level=levels))[1]
    coeffs = pywt.array_to_coeffs(z, slices, output_format="wavedec2")
    img = pywt.waverec2(coeffs, "db4", mode="periodization")
    ks = np.fft.fftshift(np.fft.fftn(np.fft.ifftshift(img), norm="ortho")) * w
    back = np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(ks), norm="ortho"))
    c = pywt.coeffs_to_array(pywt.wavedec2(back.real, "db4", mode="periodization", level=levels))[0] \
        + 1j * pywt.coeffs_to_array(pywt.wavedec2(back.imag, "db4", mode="periodization", level=levels))[0]
    own = abs(c[ci])
    c[ci] = 0
    return np.max(np.abs(c)) / own


def test_tpsf_matches_pywt(lib):
    rng = np.random.default_rng(9)
    w = (rng.random((64, 64)) < 0.25).astype(np.float32)
    p = ctypes.c_void_p()
    assert lib.kw_tpsf_create(ctypes.byref(p), ctypes.c_size_t(64), ctypes.c_size_t(64), 4, 4) == 0
    wa, pw = f32(w)
    out = (ctypes.c_double * 4)()
    assert lib.kw_tpsf_execute(p, pw, out) == 0
    lib.kw_tpsf_destroy(p)
    for level in range(1, 5):
        ref = tpsf_ref(w, level)
        assert abs(out[level - 1] - ref) < 1e-4 * ref, (level, out[level - 1], ref)
    # uniform undersampling is coherent: an exact replica of the coefficient
    u = np.zeros((64, 64), np.float32)
    u[::4, :] = 1
    assert abs(tpsf_ref(u, 1) - 1) < 1e-6

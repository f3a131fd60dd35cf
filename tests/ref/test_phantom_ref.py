"""Analytic phantoms against outside references (run by /usr/bin/python3):
- the exact Fourier transform of each shape kind against numerical quadrature
  of the same shape (scipy.special.roots_legendre Gauss-Legendre nodes,
  periodic trapezoid rule in angle);
- the modified Shepp-Logan phantom against scikit-image's
  shepp_logan_phantom() (400 x 400, both area-averaged to 100 x 100).
Library calls go through ctypes on build/libkweave.so."""
import ctypes

import numpy as np
import pytest
from scipy.special import roots_legendre


class Shape(ctypes.Structure):
    _fields_ = [("kind", ctypes.c_int), ("center", ctypes.c_double * 3),
                ("axes", ctypes.c_double * 3), ("angle", ctypes.c_double),
                ("value", ctypes.c_double), ("tissue", ctypes.c_int),
                ("parent", ctypes.c_int), ("df_hz", ctypes.c_double)]


ELLIPSE, RECT, ELLIPSOID, BOX = 0, 1, 2, 3


def shape_ft(lib, sh, f):
    f = np.ascontiguousarray(f, dtype=np.float64)
    out = np.zeros((len(f), 2))
    st = lib.kw_shape_ft_many(ctypes.byref(sh), ctypes.c_size_t(len(f)),
                              f.ctypes.data_as(ctypes.c_void_p),
                              out.ctypes.data_as(ctypes.c_void_p))
    assert st == 0
    return out[:, 0] + 1j * out[:, 1]


def make_shape(kind, c, ax, ang):
    s = Shape()
    s.kind = kind
    s.center[:] = list(c)
    s.axes[:] = list(ax)
    s.angle = ang
    s.tissue = -1
    s.parent = -1
    return s


def quad_ellipse(c, a, b, ang, f, nr=160, nphi=512):
    """integral over the ellipse of exp(-i 2 pi f.x): x = c + R (a r cos p, b r sin p),
    dx = a b r dr dp; Gauss-Legendre in r, trapezoid (spectrally exact for a
    periodic integrand) in p."""
    r, wr = roots_legendre(nr)
    r = 0.5 * (r + 1)
    wr = 0.5 * wr
    p = np.arange(nphi) * 2 * np.pi / nphi
    R, P = np.meshgrid(r, p, indexing="ij")
    u, v = a * R * np.cos(P), b * R * np.sin(P)
    x = c[0] + u * np.cos(ang) - v * np.sin(ang)
    y = c[1] + u * np.sin(ang) + v * np.cos(ang)
    w = (wr[:, None] * R) * a * b * (2 * np.pi / nphi)
    return np.array([np.sum(w * np.exp(-2j * np.pi * (fx * x + fy * y))) for fx, fy, _ in f])


def quad_ellipsoid(c, ax, ang, f, nr=80, nt=80, nphi=256):
    r, wr = roots_legendre(nr)
    r = 0.5 * (r + 1)
    wr = 0.5 * wr
    ct, wt = roots_legendre(nt)        # cos(theta) in [-1, 1]
    p = np.arange(nphi) * 2 * np.pi / nphi
    R, CT, P = np.meshgrid(r, ct, p, indexing="ij")
    st = np.sqrt(1 - CT ** 2)
    u, v, z = ax[0] * R * st * np.cos(P), ax[1] * R * st * np.sin(P), ax[2] * R * CT
    x = c[0] + u * np.cos(ang) - v * np.sin(ang)
    y = c[1] + u * np.sin(ang) + v * np.cos(ang)
    zz = c[2] + z
    w = (wr[:, None, None] * R ** 2) * wt[None, :, None] * (2 * np.pi / nphi) * ax[0] * ax[1] * ax[2]
    return np.array([np.sum(w * np.exp(-2j * np.pi * (fx * x + fy * y + fz * zz))) for fx, fy, fz in f])


def quad_rect(c, a, b, ang, f, n=200):
    s, ws = roots_legendre(n)
    U, V = np.meshgrid(a * s, b * s, indexing="ij")
    W = np.outer(ws, ws) * a * b
    x = c[0] + U * np.cos(ang) - V * np.sin(ang)
    y = c[1] + U * np.sin(ang) + V * np.cos(ang)
    return np.array([np.sum(W * np.exp(-2j * np.pi * (fx * x + fy * y))) for fx, fy, _ in f])


def check(F, Q, scale):
    # relative error over the set, and each sample against the shape's volume
    rel = np.linalg.norm(F - Q) / np.linalg.norm(Q)
    worst = np.max(np.abs(F - Q)) / scale
    assert rel <= 1e-6, rel
    assert worst <= 1e-6, worst
    return rel


def test_ellipse_ft_vs_quadrature(lib):
    rng = np.random.default_rng(11)
    c, a, b, ang = (0.13, -0.21), 0.31, 0.17, 0.7
    f = np.zeros((40, 3))
    f[:, :2] = rng.uniform(-12, 12, (40, 2))   # up to 12 cycles per phantom unit
    f[0, :2] = 0                               # and the DC value, pi a b
    F = shape_ft(lib, make_shape(ELLIPSE, (*c, 0), (a, b, 0), ang), f)
    Q = quad_ellipse(c, a, b, ang, f)
    check(F, Q, np.pi * a * b)
    assert abs(F[0] - np.pi * a * b) < 1e-12


def test_ellipsoid_ft_vs_quadrature(lib):
    rng = np.random.default_rng(12)
    c, ax, ang = (0.1, -0.05, 0.2), (0.3, 0.2, 0.25), -0.4
    f = rng.uniform(-5, 5, (12, 3))
    f[0] = 0
    F = shape_ft(lib, make_shape(ELLIPSOID, c, ax, ang), f)
    Q = quad_ellipsoid(c, ax, ang, f)
    check(F, Q, 4 / 3 * np.pi * np.prod(ax))


def test_rect_ft_vs_quadrature(lib):
    rng = np.random.default_rng(13)
    c, a, b, ang = (-0.2, 0.1, 0), 0.12, 0.3, 0.3
    f = np.zeros((30, 3))
    f[:, :2] = rng.uniform(-10, 10, (30, 2))
    F = shape_ft(lib, make_shape(RECT, c, (a, b, 0), ang), f)
    Q = quad_rect(c[:2], a, b, ang, f)
    check(F, Q, 4 * a * b)


PHANTOM_BYTES = 65536


def rasterize(lib, name, n, offset, sup=4):
    buf = ctypes.create_string_buffer(PHANTOM_BYTES)
    assert lib.kw_phantom_make(buf, name.encode()) == 0
    out = np.zeros((n, n), dtype=np.float32)
    dims = (ctypes.c_size_t * 2)(n, n)  # (ny, nx), C order
    st = lib.kw_phantom_rasterize_grid(buf, dims, None, ctypes.c_int(sup),
                                       ctypes.c_double(offset),
                                       out.ctypes.data_as(ctypes.c_void_p))
    assert st == 0
    return out


def test_modified_shepp_logan_vs_skimage(lib):
    """scikit-image's shepp_logan_phantom() is the modified (Toft) phantom on a
    400 x 400 grid whose pixel centres are symmetric about the middle
    (+-(N-1)/N); kweave's own grid is the centered DFT's (x = 0 at pixel N/2),
    half a pixel away. Compare on skimage's grid (offset 0.5), both block-
    averaged 4 x 4 to 100 x 100."""
    from skimage.data import shepp_logan_phantom
    ref = shepp_logan_phantom()
    assert ref.shape == (400, 400)
    ours = rasterize(lib, "shepp-logan-modified", 400, 0.5)
    A = ours.reshape(100, 4, 100, 4).mean((1, 3))
    B = ref.reshape(100, 4, 100, 4).mean((1, 3))
    r = np.corrcoef(A.ravel(), B.ravel())[0, 1]
    print(f"correlation with skimage shepp_logan_phantom: {r:.5f}")
    assert r >= 0.99
    # and the flipped images do not match: orientation (y up) is right
    assert np.corrcoef(A[::-1].ravel(), B.ravel())[0, 1] < 0.9


def test_rasterize_area_average(lib):
    """A pixel half covered by a shape gets half its value: the area of the
    disk of the modified phantom's outer ellipse, pi a b (times 1), equals the
    sum of the rasterised pixel values of shape 0 alone within 0.1%."""
    img = rasterize(lib, "shepp-logan-modified", 256, 0.0, sup=8)
    # total integral of the additive phantom = sum_s value_s * pi a_s b_s
    geo = [(0.69, 0.92, 1), (0.6624, 0.874, -0.8), (0.11, 0.31, -0.2), (0.16, 0.41, -0.2),
           (0.21, 0.25, 0.1), (0.046, 0.046, 0.1), (0.046, 0.046, 0.1), (0.046, 0.023, 0.1),
           (0.023, 0.023, 0.1), (0.023, 0.046, 0.1)]
    total = sum(v * np.pi * a * b for a, b, v in geo)
    got = img.sum() * (2 / 256) ** 2
    assert abs(got - total) / total < 1e-3, (got, total)


def test_gauss_legendre_vs_scipy(lib):
    """Nodes and weights for the slice-profile quadrature against
    scipy.special.roots_legendre."""
    for n in (1, 2, 5, 8, 16, 32):
        x, w = (ctypes.c_double * n)(), (ctypes.c_double * n)()
        assert lib.kw_gauss_legendre(n, x, w) == 0
        order = np.argsort(x[:])
        X, W = roots_legendre(n)
        assert np.max(np.abs(np.array(x[:])[order] - X)) < 1e-14
        assert np.max(np.abs(np.array(w[:])[order] - W)) < 1e-13

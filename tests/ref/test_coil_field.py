"""Coil fields against outside references (run by /usr/bin/python3):
- complete elliptic integrals against scipy.special.ellipk/ellipe;
- the on-axis field of a circular loop, B = mu0 I R^2 / (2 (R^2 + z^2)^(3/2))
  (textbook magnetostatics, e.g. Griffiths, Introduction to Electrodynamics,
  Example 5.6);
- the off-axis field against the closed form with complete elliptic integrals
  evaluated with scipy.special.ellipk/ellipe (Smythe 1950, sec. 7.10), and
  against a direct numerical Biot-Savart line integral (scipy.integrate.quad).
Library calls through ctypes on build/libkweave.so."""
import ctypes

import numpy as np
from scipy.integrate import quad
from scipy.special import ellipe, ellipk

MU0 = 1.25663706212e-6  # CODATA 2018


def d3(v):
    return (ctypes.c_double * 3)(*v)


def field(lib, c, n, a, I, r):
    b = (ctypes.c_double * 3)()
    st = lib.kw_loop_field(d3(c), d3(n), ctypes.c_double(a), ctypes.c_double(I), d3(r), b)
    assert st == 0
    return np.array(b[:])


def test_elliptic_integrals(lib):
    for m in [0.0, 1e-6, 0.1, 0.5, 0.9, 0.999, 0.999999]:
        K, E = ctypes.c_double(), ctypes.c_double()
        assert lib.kw_ellip_ke(ctypes.c_double(m), ctypes.byref(K), ctypes.byref(E)) == 0
        assert abs(K.value - ellipk(m)) <= 1e-13 * ellipk(m), m
        assert abs(E.value - ellipe(m)) <= 1e-13 * ellipe(m), m
    K, E = ctypes.c_double(), ctypes.c_double()
    assert lib.kw_ellip_ke(ctypes.c_double(1.0), ctypes.byref(K), ctypes.byref(E)) != 0


def test_on_axis(lib):
    a, I = 0.05, 2.0
    for z in [0.0, 0.01, 0.05, -0.2, 1.0]:
        b = field(lib, (0, 0, 0), (0, 0, 1), a, I, (0, 0, z))
        want = MU0 * I * a ** 2 / (2 * (a ** 2 + z ** 2) ** 1.5)
        assert abs(b[2] - want) <= 1e-12 * want
        assert abs(b[0]) < 1e-20 and abs(b[1]) < 1e-20


def closed_form(a, I, rho, z):
    q = (a + rho) ** 2 + z ** 2
    g = (a - rho) ** 2 + z ** 2
    m = 4 * a * rho / q
    K, E = ellipk(m), ellipe(m)
    k0 = MU0 * I / (2 * np.pi * np.sqrt(q))
    bz = k0 * (K + (a * a - rho * rho - z * z) / g * E)
    br = k0 * z / rho * (-K + (a * a + rho * rho + z * z) / g * E)
    return br, bz


def biot_savart(a, I, r):
    """B(r) = mu0 I / 4 pi  closed-integral dl x (r - l) / |r - l|^3 for the
    loop l(t) = a (cos t, sin t, 0), counter-clockwise about +z."""
    def comp(i):
        def f(t):
            l = np.array([a * np.cos(t), a * np.sin(t), 0.0])
            dl = np.array([-a * np.sin(t), a * np.cos(t), 0.0])
            d = r - l
            return np.cross(dl, d)[i] / np.linalg.norm(d) ** 3
        return quad(f, 0, 2 * np.pi, epsabs=1e-13, epsrel=1e-11, limit=200)[0]
    return MU0 * I / (4 * np.pi) * np.array([comp(0), comp(1), comp(2)])


def test_off_axis_closed_form_and_biot_savart(lib):
    rng = np.random.default_rng(3)
    a, I = 0.06, 1.0
    for _ in range(8):
        rho, z, phi = rng.uniform(0.005, 0.2), rng.uniform(-0.15, 0.15), rng.uniform(0, 2 * np.pi)
        r = np.array([rho * np.cos(phi), rho * np.sin(phi), z])
        b = field(lib, (0, 0, 0), (0, 0, 1), a, I, r)
        br, bz = closed_form(a, I, rho, z)
        want = np.array([br * np.cos(phi), br * np.sin(phi), bz])
        assert np.linalg.norm(b - want) <= 1e-10 * np.linalg.norm(want)
        bs = biot_savart(a, I, r)
        assert np.linalg.norm(b - bs) <= 1e-8 * np.linalg.norm(bs)


def test_tilted_loop_matches_rotated_frame(lib):
    """A loop centred at c with normal n gives the field of the z-axis loop in
    the rotated frame (checked with the numerical Biot-Savart integral)."""
    a = 0.05
    c = np.array([0.2, 0.0, 0.0])
    n = np.array([-1.0, 0.0, 0.0])    # normal pointing at the origin
    r = np.array([0.05, 0.03, 0.01])
    b = field(lib, c, n, a, 1.0, r)
    # frame with e3 = n: e1 = z, e2 = n x e1 = (-x) x z = +y ... right-handed
    e3 = n
    e1 = np.array([0.0, 0.0, 1.0])
    e2 = np.cross(e3, e1)
    R = np.stack([e1, e2, e3])        # rows: local axes
    bl = biot_savart(a, 1.0, R @ (r - c))
    assert np.linalg.norm(b - R.T @ bl) <= 1e-8 * np.linalg.norm(bl)

"""Shortest gradient lobes against a linear program solved by scipy
(scipy.optimize.linprog): for N raster steps, the largest area any raster
waveform can reach with |g| <= gmax, |g[i+1] - g[i]| <= slew x raster and
g = 0 at both ends; the fewest steps that reach the area is the true optimum.
kweave's trapezoid (corners on the raster) may need at most one step more."""
import ctypes

import numpy as np
import pytest
from scipy.optimize import linprog

from conftest import lib  # noqa: F401


class Limits(ctypes.Structure):
    _fields_ = [("gmax", ctypes.c_double), ("slew", ctypes.c_double), ("raster", ctypes.c_double)]


class Trap(ctypes.Structure):
    _fields_ = [("amp", ctypes.c_double), ("ramp", ctypes.c_double), ("flat", ctypes.c_double)]


def lp_max_area(n, gmax, slew, dt):
    # variables g[1..n-1] (g[0] = g[n] = 0); area = dt * sum(g) by the trapezoid rule
    m = n - 1
    if m < 1:
        return 0.0
    rows, rhs = [], []
    step = slew * dt
    for i in range(m + 1):  # differences g[i+1] - g[i], i = 0..n-1, both signs
        r = np.zeros(m)
        if i < m:
            r[i] += 1
        if i >= 1:
            r[i - 1] -= 1
        rows.append(r); rhs.append(step)
        rows.append(-r); rhs.append(step)
    res = linprog(-np.ones(m) * dt, A_ub=np.array(rows), b_ub=np.array(rhs),
                  bounds=[(-gmax, gmax)] * m, method="highs")
    assert res.status == 0
    return -res.fun


def lp_min_steps(area, gmax, slew, dt):
    # start a few steps below the continuous optimum (the LP can only do better
    # than the continuous waveform by less than a step or two)
    tmin = 2 * np.sqrt(area / slew) if area <= gmax ** 2 / slew else area / gmax + gmax / slew
    n = max(2, int(tmin / dt) - 3)
    assert n == 2 or lp_max_area(n, gmax, slew, dt) < area
    while lp_max_area(n, gmax, slew, dt) < area * (1 - 1e-12):
        n += 1
    return n


@pytest.mark.parametrize("gmax,slew,dt", [(0.04, 200.0, 10e-6), (0.08, 120.0, 4e-6), (0.025, 70.0, 10e-6)])
def test_lobe_duration_against_linprog(lib, gmax, slew, dt):
    f = lib.kw_trapezoid_for_area
    f.argtypes = [ctypes.c_double, ctypes.POINTER(Limits), ctypes.POINTER(Trap)]
    f.restype = ctypes.c_int
    lim = Limits(gmax, slew, dt)
    for area in np.geomspace(2e-8, 3e-5, 12):
        t = Trap()
        assert f(area, ctypes.byref(lim), ctypes.byref(t)) == 0
        n = round((2 * t.ramp + t.flat) / dt)
        n_lp = lp_min_steps(area, gmax, slew, dt)
        assert n_lp <= n <= n_lp + 1, (area, n, n_lp)
        # exact area, limits kept
        assert t.amp * (t.ramp + t.flat) == pytest.approx(area, rel=1e-9)
        assert abs(t.amp) <= gmax * (1 + 1e-9) and abs(t.amp) / t.ramp <= slew * (1 + 1e-9)

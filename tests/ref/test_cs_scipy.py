"""FISTA and ADMM for total variation against scipy.optimize (Debian's
python3-scipy): with one coil of ones on a full Cartesian grid E is the
unitary DFT, so the CS problem is TV denoising of z = E^H y,
    min_x 1/2 ||x - z||^2 + lambda sum_i sqrt(|D_x x|_i^2 + |D_y x|_i^2),
with periodic forward differences (recon/kw_tv.h). scipy's L-BFGS-B solves
it on a real image with the norm smoothed by eps = 1e-9 (objective change
below lambda n eps); kweave's solution must match to 1e-3 relative and reach
the same objective to 1e-5 relative."""
import ctypes

import numpy as np
import pytest
from scipy.optimize import minimize

from conftest import c64, sizes


class SolverOpts(ctypes.Structure):
    _fields_ = [("struct_size", ctypes.c_size_t),
                ("iterations", ctypes.c_int), ("stop", ctypes.c_double),
                ("lambda_", ctypes.c_double), ("reg", ctypes.c_int),
                ("wavelet_order", ctypes.c_int), ("wavelet_levels", ctypes.c_int),
                ("rho", ctypes.c_double), ("inner", ctypes.c_int)]


def tv_objective(x, z, lam, eps=1e-9):
    dx = np.roll(x, -1, 1) - x
    dy = np.roll(x, -1, 0) - x
    return 0.5 * np.sum((x - z) ** 2) + lam * np.sum(np.sqrt(dx ** 2 + dy ** 2 + eps ** 2))


def tv_grad(x, z, lam, eps=1e-9):
    dx = np.roll(x, -1, 1) - x
    dy = np.roll(x, -1, 0) - x
    m = np.sqrt(dx ** 2 + dy ** 2 + eps ** 2)
    gx, gy = dx / m, dy / m
    # adjoint of the forward differences: D^T g = roll(g, +1) - g
    return (x - z) + lam * ((np.roll(gx, 1, 1) - gx) + (np.roll(gy, 1, 0) - gy))


@pytest.mark.parametrize("solver", ["kw_fista", "kw_admm"])
def test_tv_matches_scipy(lib, solver):
    n = 12
    rng = np.random.default_rng(5)
    truth = np.zeros((n, n))
    truth[3:9, 2:7] = 1.0
    truth[5:11, 6:10] += 0.5
    z = truth + 0.1 * rng.standard_normal((n, n))
    lam = 0.08

    res = minimize(lambda v: tv_objective(v.reshape(n, n), z, lam), z.ravel(),
                   jac=lambda v: tv_grad(v.reshape(n, n), z, lam).ravel(),
                   method="L-BFGS-B", options={"maxiter": 20000, "ftol": 1e-15, "gtol": 1e-10})
    ref = res.x.reshape(n, n)
    f_ref = tv_objective(ref, z, lam)

    # y = centred unitary DFT of z
    y = np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(z), norm="ortho")).astype(np.complex64)
    enc = ctypes.c_void_p()
    assert lib.kw_encoder_create(ctypes.byref(enc), 2, sizes(n, n), None) == 0  # NULL: defaults (one coil, full grid)
    opts = SolverOpts()
    lib.kw_solver_options_init(ctypes.byref(opts))
    assert opts.struct_size == ctypes.sizeof(SolverOpts)  # the layout above matches
    opts.iterations, opts.stop, opts.lambda_, opts.reg, opts.inner = 3000, 1e-10, lam, 2, 50
    sol = ctypes.c_void_p()
    assert lib.kw_solver_create(ctypes.byref(sol), enc, 2, sizes(n, n), ctypes.byref(opts)) == 0
    yb, yp = c64(y)
    xb, xp = c64(np.zeros((n, n)))
    fn = getattr(lib, solver)
    assert fn(sol, yp, xp, None, None) == 0
    lib.kw_solver_destroy(sol)
    lib.kw_encoder_destroy(enc)
    x = xb.real.astype(np.float64)
    assert np.abs(xb.imag).max() < 1e-5
    f_kw = tv_objective(x, z, lam)
    assert f_kw <= f_ref * (1 + 1e-5), (f_kw, f_ref)
    assert np.linalg.norm(x - ref) / np.linalg.norm(ref) < 1e-3

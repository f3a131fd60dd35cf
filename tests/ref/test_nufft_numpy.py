"""The NUFFT and the exact NDFT against a non-uniform DFT written in numpy
(Debian's python3-numpy, float64): the definition of kw_nufft.h,
    forward y_j = N^-1/2 sum_n x_n exp(-2 pi i sum_d k_jd n_d / N_d),
    adjoint x_n = N^-1/2 sum_j y_j exp(+2 pi i sum_d k_jd n_d / N_d),
n_d = i_d - N_d // 2, trajectory columns x, y(, z) = last image axis first.
Relative l2 error at most the requested tolerance (1e-3 and 1e-6), 2-D and 3-D."""
import ctypes

import numpy as np
import pytest

from conftest import c64, f32, relerr, sizes


class Opts(ctypes.Structure):
    _fields_ = [("struct_size", ctypes.c_size_t), ("tolerance", ctypes.c_double), ("oversampling", ctypes.c_double),
                ("nthreads", ctypes.c_int), ("measure", ctypes.c_int)]


def ndft_matrix(shape, traj):
    """A[j, n] = N^-1/2 exp(-2 pi i k_j . n / N) over the C-ordered pixels."""
    grids = np.meshgrid(*[np.arange(n) - n // 2 for n in shape], indexing="ij")
    phase = np.zeros((traj.shape[0], int(np.prod(shape))))
    nd = len(shape)
    for d, n in enumerate(shape):
        phase += np.outer(traj[:, nd - 1 - d].astype(np.float64), grids[d].ravel() / n)
    return np.exp(-2j * np.pi * phase) / np.sqrt(np.prod(shape))


CASES = [((24, 20), 700, 1e-3), ((24, 20), 700, 1e-6), ((8, 10, 12), 500, 1e-3),
         ((8, 10, 12), 500, 1e-6)]


@pytest.mark.parametrize("shape,ns,tol", CASES)
def test_nufft_matches_numpy_ndft(lib, shape, ns, tol):
    rng = np.random.default_rng(17 + ns)
    nd = len(shape)
    half = np.array(shape[::-1], dtype=np.float64) / 2
    traj = (rng.uniform(-1, 1, (ns, nd)) * half).astype(np.float32)
    traj = np.where(traj >= half, -half, traj).astype(np.float32)
    A = ndft_matrix(shape, traj)
    x = (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)).astype(np.complex64)
    y = (rng.standard_normal(ns) + 1j * rng.standard_normal(ns)).astype(np.complex64)
    y_ref = A @ x.ravel().astype(np.complex128)
    x_ref = (A.conj().T @ y.astype(np.complex128)).reshape(shape)

    tr, trp = f32(traj)
    plan = ctypes.c_void_p()
    opts = Opts()
    lib.kw_nufft_options_init(ctypes.byref(opts))
    assert opts.struct_size == ctypes.sizeof(Opts)  # the layout above matches
    opts.tolerance, opts.nthreads = tol, 1
    assert lib.kw_nufft_create(ctypes.byref(plan), nd, sizes(*shape), ctypes.c_size_t(ns),
                               trp, ctypes.byref(opts)) == 0
    xb, xp = c64(x)
    yb, yp = c64(y)
    yo, yop = c64(np.zeros(ns))
    xo, xop = c64(np.zeros(shape))
    assert lib.kw_nufft_forward(plan, xp, yop, ctypes.c_size_t(1)) == 0
    assert lib.kw_nufft_adjoint(plan, yp, xop, ctypes.c_size_t(1)) == 0
    lib.kw_nufft_destroy(plan)
    assert relerr(yo, y_ref) <= tol
    assert relerr(xo, x_ref) <= tol

    # the exact NDFT in C (the tests' reference) agrees to single precision
    yd, ydp = c64(np.zeros(ns))
    xd, xdp = c64(np.zeros(shape))
    assert lib.kw_ndft_forward(nd, sizes(*shape), ctypes.c_size_t(ns), trp, xp, ydp) == 0
    assert lib.kw_ndft_adjoint(nd, sizes(*shape), ctypes.c_size_t(ns), trp, yp, xdp) == 0
    assert relerr(yd, y_ref) <= 1e-6
    assert relerr(xd, x_ref) <= 1e-6

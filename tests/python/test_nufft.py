"""kweave.Nufft against a direct NDFT in numpy (the definition of
docs/api.md: centred unitary DFT evaluated off the grid), adjointness, the
LinearOperator view, bad input, memory and reference counts."""
import gc
import sys

import numpy as np
import pytest

import kweave


def ndft(traj, shape, x):
    """Direct evaluation in double: y_j = 1/sqrt(N) sum_n x[n] e^{-2 pi i k_j.n/N}."""
    grids = np.meshgrid(*[np.arange(n) - n // 2 for n in shape], indexing="ij")
    phase = np.zeros((traj.shape[0],) + tuple(shape))
    for d, n in enumerate(shape):            # image axis d is trajectory column ndim-1-d
        k = traj[:, len(shape) - 1 - d].astype(np.float64)
        phase += k.reshape((-1,) + (1,) * len(shape)) * grids[d] / n
    e = np.exp(-2j * np.pi * phase) / np.sqrt(np.prod(shape))
    return np.tensordot(e, x, axes=len(shape))


def random_case(shape, m, seed=1):
    rng = np.random.default_rng(seed)
    traj = np.stack([(rng.random(m) - 0.5) * n for n in reversed(shape)], axis=1)
    x = rng.standard_normal(shape) + 1j * rng.standard_normal(shape)
    return traj.astype(np.float32), x.astype(np.complex64)


@pytest.mark.parametrize("shape,tol", [((32, 32), 1e-3), ((24, 40), 1e-5), ((8, 12, 16), 1e-3)])
def test_forward_matches_the_direct_ndft_within_its_tolerance(shape, tol):
    traj, x = random_case(shape, 400)
    op = kweave.Nufft(traj, shape, tolerance=tol)
    y = op.forward(x)
    ref = ndft(traj, shape, x.astype(np.complex128))
    err = np.linalg.norm(y - ref) / np.linalg.norm(ref)
    assert err < tol, err
    assert y.dtype == np.complex64 and y.flags.c_contiguous and y.shape == (400,)


def test_adjoint_is_the_adjoint_to_rounding():
    shape = (32, 32)
    traj, x = random_case(shape, 500, seed=2)
    rng = np.random.default_rng(3)
    y = (rng.standard_normal(500) + 1j * rng.standard_normal(500)).astype(np.complex64)
    op = kweave.Nufft(traj, shape)
    lhs = np.vdot(op.forward(x).astype(np.complex128), y)
    rhs = np.vdot(x.astype(np.complex128), op.adjoint(y))
    assert abs(lhs - rhs) / abs(lhs) < 1e-5   # float32 arithmetic


def test_adjoint_matches_the_direct_ndft():
    shape = (16, 20)
    traj, _ = random_case(shape, 300, seed=4)
    rng = np.random.default_rng(5)
    y = rng.standard_normal(300) + 1j * rng.standard_normal(300)
    op = kweave.Nufft(traj, shape, tolerance=1e-4)
    ref = np.conj(ndft(traj, shape, np.eye(np.prod(shape)).reshape((-1,) + shape).transpose(
        tuple(range(1, 3)) + (0,)))).T @ y
    got = op.adjoint(y.astype(np.complex64)).reshape(-1)
    assert np.linalg.norm(got - ref) / np.linalg.norm(ref) < 1e-4


def test_a_coil_batch_equals_coil_by_coil():
    shape = (16, 16)
    traj, x = random_case(shape, 200)
    xs = np.stack([x, 2 * x, 1j * x])
    op = kweave.Nufft(traj, shape)
    yb = op.forward(xs)
    assert yb.shape == (3, 200)
    for c in range(3):
        assert np.array_equal(yb[c], op.forward(xs[c]))
    assert op.adjoint(yb).shape == (3, 16, 16)


def test_linear_operator_view_solves_a_least_squares_problem():
    from scipy.sparse.linalg import lsqr
    shape = (12, 12)
    traj, x = random_case(shape, 600, seed=6)
    op = kweave.Nufft(traj, shape, tolerance=1e-5)
    A = op.linear_operator()
    assert A.shape == (600, 144)
    b = op.forward(x)
    sol = lsqr(A, b, atol=1e-7, btol=1e-7, iter_lim=500)[0]
    assert np.linalg.norm(sol - x.reshape(-1)) / np.linalg.norm(x) < 1e-2
    assert np.allclose(A.rmatvec(b), op.adjoint(b).reshape(-1))


def test_inputs_of_other_dtypes_and_layouts_are_converted():
    shape = (16, 16)
    traj, x = random_case(shape, 100)
    op = kweave.Nufft(traj.astype(np.float64), shape)
    ref = op.forward(x)
    assert np.array_equal(op.forward(x.astype(np.complex128)), ref)
    big = np.zeros((16, 32), np.complex64)
    big[:, ::2] = x
    assert np.array_equal(op.forward(big[:, ::2]), ref)          # not contiguous
    ro = x.copy()
    ro.setflags(write=False)
    assert np.array_equal(op.forward(ro), ref)                   # read-only
    assert np.array_equal(op.forward(x.real), op.forward(x.real.astype(np.complex64)))


@pytest.mark.parametrize("call,msg", [
    (lambda op: op.forward(np.zeros((8, 8), np.complex64)), "image: axis 0 has 8 points"),
    (lambda op: op.forward(np.zeros((2, 2, 16, 16))), "image: has 4 axes"),
    (lambda op: op.adjoint(np.zeros(99, np.complex64)), "kspace: axis 0 has 99 points"),
    (lambda op: op.forward(np.array([["a"] * 16] * 16)), "image: dtype("),
    (lambda op: op.forward(None), "image: missing"),
])
def test_bad_arrays_raise_input_error(call, msg):
    traj, _ = random_case((16, 16), 100)
    op = kweave.Nufft(traj, (16, 16))
    with pytest.raises(kweave.InputError) as e:
        call(op)
    assert msg in str(e.value)
    assert isinstance(e.value, ValueError)


@pytest.mark.parametrize("kwargs,msg", [
    (dict(tolerance=1.0), "tolerance"),
    (dict(oversampling=3.0), "oversampling"),
])
def test_bad_options_raise_with_the_library_message(kwargs, msg):
    traj, _ = random_case((16, 16), 100)
    with pytest.raises(kweave.InputError) as e:
        kweave.Nufft(traj, (16, 16), **kwargs)
    assert msg in str(e.value)


def test_bad_trajectories_raise():
    with pytest.raises(kweave.InputError, match="trajectory: has 3 columns"):
        kweave.Nufft(np.zeros((10, 3), np.float32), (16, 16))
    with pytest.raises(kweave.InputError):
        kweave.Nufft(np.full((10, 2), np.nan, np.float32), (16, 16))
    with pytest.raises(kweave.InputError):
        kweave.Nufft(np.full((10, 2), 100, np.float32), (16, 16))
    with pytest.raises(kweave.InputError, match="trajectory: complex values"):
        kweave.Nufft(np.zeros((10, 2), np.complex64), (16, 16))


def rss_kib():
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1]) * 4


def test_a_thousand_calls_keep_memory_and_references_flat():
    shape = (16, 16)
    traj, x = random_case(shape, 200)
    refs = (sys.getrefcount(traj), sys.getrefcount(x))
    for _ in range(50):                      # warm up allocator and plans
        kweave.Nufft(traj, shape).forward(x)
    gc.collect()
    before = rss_kib()
    for _ in range(1000):
        op = kweave.Nufft(traj, shape)
        op.adjoint(op.forward(x))
    del op
    gc.collect()
    grown = rss_kib() - before
    assert grown < 2048, f"RSS grew by {grown} KiB over 1000 plans"
    assert (sys.getrefcount(traj), sys.getrefcount(x)) == refs

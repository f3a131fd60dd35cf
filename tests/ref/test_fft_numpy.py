"""The centered unitary FFT against numpy.fft (reference library, Debian's
python3-numpy): docs/api.md's definition
    inverse = fftshift(ifftn(ifftshift(x, axes), axes, norm="ortho"), axes)
on random data, sizes even, odd and prime, 1 to 3 dims; relative error <= 1e-5."""
import ctypes

import numpy as np
import pytest

from conftest import c64, relerr, sizes

CASES = [(16,), (17,), (12, 10), (7, 13), (6, 9), (8, 8, 8), (5, 7, 3), (4, 6, 11)]


@pytest.mark.parametrize("shape", CASES)
@pytest.mark.parametrize("direction", ["forward", "inverse"])
def test_fft_matches_numpy(lib, shape, direction):
    rng = np.random.default_rng(sum(shape))
    batch = 3
    x = (rng.standard_normal((batch, *shape)) + 1j * rng.standard_normal((batch, *shape))).astype(np.complex64)
    axes = tuple(range(1, len(shape) + 1))
    f = np.fft.fftn if direction == "forward" else np.fft.ifftn
    ref = np.fft.fftshift(f(np.fft.ifftshift(x.astype(np.complex128), axes=axes), axes=axes, norm="ortho"), axes=axes)

    plan = ctypes.c_void_p()
    assert lib.kw_fft_create(ctypes.byref(plan), len(shape), sizes(*shape), ctypes.c_size_t(batch), 0) == 0
    buf, ptr = c64(x)
    fn = lib.kw_fft_forward if direction == "forward" else lib.kw_fft_inverse
    assert fn(plan, ptr) == 0
    lib.kw_fft_destroy(plan)
    assert relerr(buf, ref) <= 1e-5

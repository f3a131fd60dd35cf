"""kweave: MRI k-space encoding and image reconstruction (libkweave) for numpy.

Every call is a libkweave call; the names, defaults and units are those of
the `kweave` command (options as keywords, '-' written '_'; quantities as
strings with units such as "256mm" or as numbers in SI units). See
docs/python.md.
"""
from . import _kweave
from ._kweave import *  # noqa: F401,F403
from ._kweave import Error, InputError, SAFETY_CAUTION, __version__, version  # noqa: F401


class Nufft(_kweave.Nufft):
    __doc__ = _kweave.Nufft.__doc__

    def linear_operator(self, coils=None):
        """A scipy.sparse.linalg.LinearOperator view: image (flattened) ->
        samples (flattened); with `coils`, a leading coil axis on both."""
        import numpy as np
        from scipy.sparse.linalg import LinearOperator

        shape = self.shape
        npix = int(np.prod(shape))
        lead = () if coils is None else (coils,)
        c = 1 if coils is None else coils

        def matvec(x):
            return self.forward(np.reshape(x, lead + tuple(shape))).reshape(-1)

        def rmatvec(y):
            return self.adjoint(np.reshape(y, lead + (self.nsamples,))).reshape(-1)

        return LinearOperator((c * self.nsamples, c * npix), matvec=matvec,
                              rmatvec=rmatvec, dtype=np.complex64)

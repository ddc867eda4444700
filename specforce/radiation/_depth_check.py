"""Private numba kernel: the first optical depth that is negative or not finite. Not API; the
transfer's runs (:func:`specforce.radiation.transfer.spectral_fluxes`) and
:mod:`specforce.radiation.bounds` call it."""

import math

import numba as nb

from ..cache import keep_compiled_kernels

keep_compiled_kernels()  # before the kernels are decorated


@nb.njit(cache=True, nogil=True)
def first_invalid(tau, lo, hi):
    """(layer, point) of the first value of ``tau`` (layers, points) at the points lo..hi-1, layer by
    layer, that is negative or not finite; (-1, -1) where none is. Each row in one pass that the
    compiler vectorises, instead of numpy's several passes and masks."""
    for r in range(tau.shape[0]):
        row = tau[r]
        ok = True
        for i in range(lo, hi):
            ok &= (row[i] >= 0.0) & (row[i] < math.inf)  # NaN fails both
        if not ok:
            for i in range(lo, hi):
                if not (row[i] >= 0.0 and row[i] < math.inf):
                    return r, i
    return -1, -1

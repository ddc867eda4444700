"""Arithmetic the numba kernels share (private): their fast-math flags, and a vectorisable exp(-t).

libm's exp is a scalar call that keeps the compiler from vectorising the loops around it (it
took about half of the transfer's time); :func:`exp_neg_into` is plain arithmetic. Used by
:mod:`specforce.radiation.transfer` and the kernels of :mod:`specforce.absorption`.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np

from .cache import keep_compiled_kernels

keep_compiled_kernels()  # before the kernels are decorated

#: numba fast-math flags of the kernels that must be evaluated as written: every LLVM fast-math
#: flag but reassociation and reciprocals ("reassoc", "arcp"). Loops still vectorise and
#: multiply-adds contract, but sums keep their order and an argument reduction its two steps.
#: A set, not a frozenset: numba takes nothing else.
FASTMATH = {"nnan", "ninf", "nsz", "contract", "afn"}

_LOG2E = 1.4426950408889634
_LN2_HI = 0.6931471803691238  # ln 2 to 32 bits: k * _LN2_HI is exact for |k| < 2**21
_LN2_LO = 1.9082149292705877e-10  # ln 2 - _LN2_HI
_EXP_MAX = 700.0  # exp(-700) = 1e-304: larger arguments are taken as 700


@nb.njit(cache=True, fastmath=FASTMATH, inline="always")
def exp_neg_into(t, m, out, kbits, scale):
    """out[q] = exp(-t[q]) for q < m and t >= 0 (t above _EXP_MAX taken as _EXP_MAX), in two
    loops the compiler can vectorise (libm's exp is a scalar call): exp(x) = 2^k exp(r) with
    k = round(x / ln 2) and r = x - k ln 2 in two parts, |r| <= ln 2 / 2 (the argument
    reduction of Cody & Waite 1980), exp(r) by its
    Taylor series to r^12 (truncation below 2e-16), and 2^k built from its exponent bits in
    ``kbits`` (int64), read back through ``scale`` (its float64 view). Within 2e-15 relative of
    math.exp (tests/test_transfer.py).

    Kernels in other files inline it; numba's cache checks only a kernel's own file, so the
    cache folder follows a digest of every kernel module (:mod:`specforce.cache`).

    References
    ----------
    Cody, W. J. & Waite, W. (1980), Software Manual for the Elementary Functions, Prentice-Hall
    (from memory).
    """
    for q in range(m):
        x = -min(t[q], _EXP_MAX)
        k = math.floor(x * _LOG2E + 0.5)
        r = (x - k * _LN2_HI) - k * _LN2_LO
        out[q] = 1.0 + r * (1.0 + r * (1.0 / 2.0 + r * (1.0 / 6.0 + r * (1.0 / 24.0 + r * (
            1.0 / 120.0 + r * (1.0 / 720.0 + r * (1.0 / 5040.0 + r * (1.0 / 40320.0 + r * (
                1.0 / 362880.0 + r * (1.0 / 3628800.0 + r * (1.0 / 39916800.0 + r / 479001600.0)))))))))))
        kbits[q] = (np.int64(k) + 1023) << 52
    for q in range(m):
        out[q] *= scale[q]


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def exp_neg(t):
    """exp(-t) of an array of t >= 0 by :func:`exp_neg_into` (for its tests)."""
    flat = np.ascontiguousarray(t).ravel()
    out = np.empty(flat.size)
    kbits = np.empty(flat.size, np.int64)
    exp_neg_into(flat, flat.size, out, kbits, kbits.view(np.float64))
    return out



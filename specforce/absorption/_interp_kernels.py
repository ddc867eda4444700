"""Private numba kernels: 6-point (quintic) Lagrange interpolation from uniform samples. Not API.

The tiered line sum (:mod:`specforce.absorption._tiered`) spreads line impulses onto its
Fourier grids and interpolates each tier down to the next and to the points with these.
Serial and without the GIL: a calculation runs one layer per thread.
"""

import math

import numba as nb
import numpy as np

from .._fastmath import FASTMATH
from ..cache import keep_compiled_kernels

keep_compiled_kernels()  # before the kernels are decorated


@nb.njit(cache=True, inline="always", fastmath=FASTMATH)
def lagrange6(t):
    """Weights of the 6-point Lagrange interpolant on nodes -2..3 at 0 <= t < 1."""
    # w_i = c_i prod_{j != i} (t - n_j) over the nodes n = -2..3, from prefix and suffix products
    f0, f1, f2, f3, f4, f5 = t + 2.0, t + 1.0, t, t - 1.0, t - 2.0, t - 3.0
    p1 = f0
    p2 = p1 * f1
    p3 = p2 * f2
    p4 = p3 * f3
    p5 = p4 * f4
    s4 = f5
    s3 = f4 * s4
    s2 = f3 * s3
    s1 = f2 * s2
    s0 = f1 * s1
    w0 = s0 * (-1.0 / 120.0)
    w1 = p1 * s1 * (1.0 / 24.0)
    w2 = p2 * s2 * (-1.0 / 12.0)
    w3 = p3 * s3 * (1.0 / 12.0)
    w4 = p4 * s4 * (-1.0 / 24.0)
    w5 = p5 * (1.0 / 120.0)
    return w0, w1, w2, w3, w4, w5


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def spread6(pos, values, out):
    """out[floor(p) + k] += values * lagrange6(p - floor(p))[k + 2], k = -2..3: the transpose of
    :func:`interp_add` (an impulse spread so that convolving it interpolates the kernel)."""
    for j in range(pos.shape[0]):
        m = int(math.floor(pos[j]))
        w0, w1, w2, w3, w4, w5 = lagrange6(pos[j] - m)
        v = values[j]
        out[m - 2] += w0 * v
        out[m - 1] += w1 * v
        out[m] += w2 * v
        out[m + 1] += w3 * v
        out[m + 2] += w4 * v
        out[m + 3] += w5 * v


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def interp_add(src_start, src_h, src, x, out):
    """out[i] += the 6-point (quintic) Lagrange interpolant of the uniform samples ``src``
    (at src_start + k src_h) at x[i]. Every x[i] must lie at least two steps inside the samples.
    Serial and without the GIL. The positions are (x[i] - src_start) times 1 / src_h, which may
    differ from the quotient in its last bit (a shift below 1e-15 of a step)."""
    inv = 1.0 / src_h
    for i in range(x.shape[0]):
        pos = (x[i] - src_start) * inv
        m = int(math.floor(pos))
        w0, w1, w2, w3, w4, w5 = lagrange6(pos - m)
        out[i] += (w0 * src[m - 2] + w1 * src[m - 1] + w2 * src[m] + w3 * src[m + 1] + w4 * src[m + 2]
                   + w5 * src[m + 3])


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def interp_add_grid(src_start, src_h, src, start, h, n, out):
    """:func:`interp_add` at the uniform points start + i h (i < n). Where src_h / h is a whole
    number r (the tiers of the tiered method), the points fall on r phases of the samples, each
    with the same six weights, which are computed once per phase. Serial and without the GIL."""
    r = src_h / h
    ri = int(round(r))
    if ri < 1 or abs(r - ri) > 1e-9 * r:
        x = np.empty(n)
        for i in range(n):
            x[i] = start + i * h
        interp_add(src_start, src_h, src, x, out)
        return
    p0 = (start - src_start) / src_h
    weights = np.empty((ri, 6))
    first = np.empty(ri, np.int64)
    for q in range(ri):
        pos = p0 + q / ri
        m = int(math.floor(pos))
        first[q] = m
        w0, w1, w2, w3, w4, w5 = lagrange6(pos - m)
        weights[q, 0] = w0
        weights[q, 1] = w1
        weights[q, 2] = w2
        weights[q, 3] = w3
        weights[q, 4] = w4
        weights[q, 5] = w5
    for blk in range((n + ri - 1) // ri):
        for q in range(ri):
            i = blk * ri + q
            if i >= n:
                break
            m = first[q] + blk
            out[i] += (weights[q, 0] * src[m - 2] + weights[q, 1] * src[m - 1] + weights[q, 2] * src[m]
                       + weights[q, 3] * src[m + 1] + weights[q, 4] * src[m + 2] + weights[q, 5] * src[m + 3])

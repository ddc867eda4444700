"""Private numba kernels: 6-point (quintic) Lagrange interpolation from uniform samples, and the
sum of transformed impulses times their kernels' spectra. Not API.

The tiered line sum (:mod:`specforce.absorption._tiered`) spreads line impulses onto its
Fourier grids, convolves them with its kernels there, and interpolates each tier down to the
next and to the points with these.
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


@nb.njit(cache=True, inline="always", fastmath=FASTMATH)
def _add6(out, m, w0, w1, w2, w3, w4, w5, v):
    """out[m - 2 .. m + 3] += the six weights times v."""
    out[m - 2] += w0 * v
    out[m - 1] += w1 * v
    out[m] += w2 * v
    out[m + 1] += w3 * v
    out[m + 2] += w4 * v
    out[m + 3] += w5 * v


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def spread6(pos, values, out):
    """out[floor(p) + k] += values * lagrange6(p - floor(p))[k + 2], k = -2..3: the transpose of
    :func:`interp_add` (an impulse spread so that convolving it interpolates the kernel)."""
    for j in range(pos.shape[0]):
        m = int(math.floor(pos[j]))
        w0, w1, w2, w3, w4, w5 = lagrange6(pos[j] - m)
        v = values[j]
        _add6(out, m, w0, w1, w2, w3, w4, w5, v)


_INV_2LN2 = 0.5 / math.log(2.0)
_INV_PI = 1.0 / math.pi


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def spread6_series(pos, strength, alpha_d, gamma_l, mask, out2, out4, out6):
    """:func:`spread6` of the three terms of the asymptotic Voigt series of the lines where ``mask``
    holds, each impulse's weights computed once: c2 = S gamma / pi, c4 = c2 (3 s^2 - gamma^2) and
    c6 = c2 (gamma^4 - 10 gamma^2 s^2 + 15 s^4) into ``out2``, ``out4`` and ``out6``, with
    s^2 = alpha^2 / (2 ln 2) (see :mod:`specforce.absorption._tiered`). ``alpha_d`` and
    ``gamma_l`` are the Doppler and Lorentz half-widths [cm-1]."""
    for j in range(pos.shape[0]):
        if not mask[j]:
            continue
        g = gamma_l[j]
        var = alpha_d[j] * alpha_d[j] * _INV_2LN2
        c2 = strength[j] * g * _INV_PI
        g2 = g * g
        c4 = c2 * (3.0 * var - g2)
        c6 = c2 * (g2 * g2 - 10.0 * g2 * var + 15.0 * var * var)
        m = int(math.floor(pos[j]))
        w0, w1, w2, w3, w4, w5 = lagrange6(pos[j] - m)
        _add6(out2, m, w0, w1, w2, w3, w4, w5, c2)
        _add6(out4, m, w0, w1, w2, w3, w4, w5, c4)
        _add6(out6, m, w0, w1, w2, w3, w4, w5, c6)


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def spread6_near(pos, strength, alpha_d, gamma_l, sub, exact, j2, j4, j6, area_w, out):
    """:func:`spread6` of the near parts of the lines not ``exact`` (the smooth lines of
    :mod:`specforce.absorption._tiered`): S (1 - gamma / pi (J2 + (3 s^2 - gamma^2) J4
    + (gamma^4 - 10 gamma^2 s^2 + 15 s^4) J6) - sub area_w), the line's area less its far wing
    beyond the window whose moments are J2, J4, J6 and whose area is ``area_w``."""
    for j in range(pos.shape[0]):
        if exact[j]:
            continue
        g = gamma_l[j]
        var = alpha_d[j] * alpha_d[j] * _INV_2LN2
        g2 = g * g
        near = 1.0 - g * _INV_PI * (j2 + (3.0 * var - g2) * j4 + (g2 * g2 - 10.0 * g2 * var + 15.0 * var * var) * j6)
        v = strength[j] * (near - sub[j] * area_w)
        m = int(math.floor(pos[j]))
        w0, w1, w2, w3, w4, w5 = lagrange6(pos[j] - m)
        _add6(out, m, w0, w1, w2, w3, w4, w5, v)


# Points per block of interp_add: its work arrays (7 x 8 bytes a point) stay in the L1 cache
_BLOCK_POINTS = 256


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def interp_add(src_start, src_h, src, x, out):
    """out[i] += the 6-point (quintic) Lagrange interpolant of the uniform samples ``src``
    (at src_start + k src_h) at x[i]. Every x[i] must lie at least two steps inside the samples.
    Serial and without the GIL. The positions are (x[i] - src_start) times 1 / src_h, which may
    differ from the quotient in its last bit (a shift below 1e-15 of a step).

    In blocks of points: first every point's first sample and six weights, a loop without
    gathers that the compiler vectorises (its positions are >= 2, so int() is their floor), then
    the sums of the samples times the weights; 1.7 times faster than both in one loop, which did
    not vectorise. The same bits."""
    inv = 1.0 / src_h
    n = x.shape[0]
    first = np.empty(_BLOCK_POINTS, np.int64)
    w = np.empty((6, _BLOCK_POINTS))
    for b0 in range(0, n, _BLOCK_POINTS):
        size = min(n - b0, _BLOCK_POINTS)
        xb, ob, fb = x[b0:b0 + size], out[b0:b0 + size], first[:size]
        w0, w1, w2, w3, w4, w5 = w[0, :size], w[1, :size], w[2, :size], w[3, :size], w[4, :size], w[5, :size]
        for q in range(size):
            pos = (xb[q] - src_start) * inv
            m = int(pos)
            fb[q] = m - 2
            w0[q], w1[q], w2[q], w3[q], w4[q], w5[q] = lagrange6(pos - m)
        for q in range(size):
            k = fb[q]
            ob[q] += (w0[q] * src[k] + w1[q] * src[k + 1] + w2[q] * src[k + 2] + w3[q] * src[k + 3]
                      + w4[q] * src[k + 4] + w5[q] * src[k + 5])


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


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH)
def spectrum_times_kernel(spectrum, kernel, out, add):
    """out[f] (+)= spectrum[f] kernel[f]: a row of transformed impulses (complex) times the real
    spectrum of its kernel, added to ``out`` where ``add`` (numpy's ``s[0] * k[0] + s[1] * k[1]
    + ...`` row by row, without its temporary arrays; multiply-adds may be fused). One row per
    call, so that one compiled version serves any number of rows."""
    if add:
        for f in range(out.shape[0]):
            out[f] += spectrum[f] * kernel[f]
    else:
        for f in range(out.shape[0]):
            out[f] = spectrum[f] * kernel[f]

"""Private numba kernels for line shapes and absorption. Not API.

Public code calls :mod:`specforce.absorption.lineshapes` and :mod:`specforce.absorption.linesum`.
Each kernel has a plain numpy reference in the tests.
"""

import math

import numba as nb
import numpy as np

from ..cache import keep_compiled_kernels
from ._outer_kernels import outer_pieces

keep_compiled_kernels()  # before the kernels are decorated

SQRT_PI = math.sqrt(math.pi)
SQRT_LN2 = math.sqrt(math.log(2.0))
INV_SQRT_PI = 1.0 / SQRT_PI


def weideman_coefficients(n=32):
    """Coefficients of Weideman's rational approximation of w(z) (Weideman 1994, Sec. 4)."""
    m = 2 * n
    k = np.arange(-m + 1, m)
    ell = math.sqrt(n / math.sqrt(2.0))
    theta = k * np.pi / m
    t = ell * np.tan(theta / 2.0)
    f = np.exp(-t * t) * (ell * ell + t * t)
    f = np.concatenate(([0.0], f))
    a = np.real(np.fft.fft(np.fft.fftshift(f))) / (2 * m)
    return np.ascontiguousarray(a[1 : n + 1][::-1]), ell


_WEIDEMAN_A, _WEIDEMAN_L = weideman_coefficients(32)
# Beyond |x| + y >= _ASYMPTOTIC_S the continued fraction is used.
_ASYMPTOTIC_S = 15.0
# Between _RATIONAL_S and _ASYMPTOTIC_S: the 8th convergent of the Laplace continued fraction
# w = (i/sqrt(pi)) / (z - (1/2) / (z - 1 / (z - (3/2) / (z - ...)))) (e.g. Gautschi 1970, SIAM J.
# Numer. Anal. 7, 187, from memory), written as z P(z^2) / Q(z^2); Q is proportional to the Hermite
# polynomial H_8, whose zeros lie below 3.82. Against scipy's wofz it is within 2.3e-10 relative
# there (measured; tests/test_lineshapes.py), and it costs about a third of Weideman's N = 32.
_RATIONAL_S = 8.0
_CF8_P = (-34.875, 46.25, -13.5)  # z^2 coefficients 0..2 of P; the z^6 coefficient is 1
_CF8_Q = (6.5625, -52.5, 52.5, -14.0)  # of Q; the z^8 coefficient is 1
# Between _RATIONAL12_S and _RATIONAL_S the 12th convergent (H_12's zeros lie below 4.4): within
# 2.4e-10 relative of wofz where K exceeds 1e-6 of its peak K(0, y), and 5e-11 of the peak
# absolute elsewhere (measured; tests/test_lineshapes.py).
_RATIONAL12_S = 6.0
_CF12_P = (-1115.15625, 2605.3125, -1569.75, 355.5, -32.5)  # the z^10 coefficient is 1
_CF12_Q = (162.421875, -1949.0625, 3248.4375, -1732.5, 371.25, -33.0)  # the z^12 coefficient is 1
# Lorentz replaces Voigt where y = sqrt(ln2) gamma_L / alpha_D exceeds this (relative
# difference at line centre about 1/(2 y^2) = 5e-5).
LORENTZ_Y = 100.0


@nb.njit(cache=True, inline="always")
def faddeeva_real(x, y):
    """Re w(x + iy) for y >= 0: the Voigt function K(x, y)."""
    s = abs(x) + y
    z = complex(x, y)
    if s >= _ASYMPTOTIC_S:
        # Laplace continued fraction truncated after three terms:
        # w ~ (i/sqrt(pi)) (z^2 - 1) / (z (z^2 - 3/2)).
        z2 = z * z
        w = 1j * INV_SQRT_PI * (z2 - 1.0) / (z * (z2 - 1.5))
        return w.real
    if s >= _RATIONAL_S:
        u = z * z
        num = z * (_CF8_P[0] + u * (_CF8_P[1] + u * (_CF8_P[2] + u)))
        den = _CF8_Q[0] + u * (_CF8_Q[1] + u * (_CF8_Q[2] + u * (_CF8_Q[3] + u)))
        w = 1j * INV_SQRT_PI * num / den
        return w.real
    if s >= _RATIONAL12_S:
        u = z * z
        num = z * (_CF12_P[0] + u * (_CF12_P[1] + u * (_CF12_P[2] + u * (_CF12_P[3] + u * (_CF12_P[4] + u)))))
        den = _CF12_Q[0] + u * (_CF12_Q[1] + u * (_CF12_Q[2] + u * (_CF12_Q[3] + u * (_CF12_Q[4] + u * (
            _CF12_Q[5] + u)))))
        w = 1j * INV_SQRT_PI * num / den
        return w.real
    ell = _WEIDEMAN_L
    a = _WEIDEMAN_A
    lz = ell - 1j * z
    zz = (ell + 1j * z) / lz
    p = 0.0 + 0.0j
    for c in a:
        p = p * zz + c
    w = 2.0 * p / (lz * lz) + INV_SQRT_PI / lz
    return w.real


@nb.njit(cache=True, inline="always")
def voigt_value(dnu, alpha_d, gamma_l):
    """Area-normalised Voigt profile [cm] at offset dnu [cm-1] from line centre."""
    if alpha_d <= 0.0:
        return gamma_l / math.pi / (dnu * dnu + gamma_l * gamma_l)
    y = SQRT_LN2 * gamma_l / alpha_d
    if y > LORENTZ_Y:
        return gamma_l / math.pi / (dnu * dnu + gamma_l * gamma_l)
    x = SQRT_LN2 * dnu / alpha_d
    return SQRT_LN2 * INV_SQRT_PI / alpha_d * faddeeva_real(x, y)


@nb.njit(cache=True)
def voigt_array(dnu, alpha_d, gamma_l):
    out = np.empty(dnu.shape[0])
    for i in range(dnu.shape[0]):
        out[i] = voigt_value(dnu[i], alpha_d, gamma_l)
    return out


@nb.njit(cache=True, nogil=True)
def voigt_per_line(dnu, alpha_d, gamma_l):
    """Voigt profile of each line (its own widths) at one offset dnu [cm-1]."""
    out = np.empty(alpha_d.shape[0])
    for i in range(alpha_d.shape[0]):
        out[i] = voigt_value(dnu, alpha_d[i], gamma_l[i])
    return out


@nb.njit(cache=True)
def faddeeva_real_array(x, y):
    out = np.empty(x.shape[0])
    for i in range(x.shape[0]):
        out[i] = faddeeva_real(x[i], y[i])
    return out


@nb.njit(cache=True, inline="always")
def smoothstep(u):
    """C3 step: 0 for u <= 0, 1 for u >= 1, 35u^4 - 84u^5 + 70u^6 - 20u^7 between."""
    if u <= 0.0:
        return 0.0
    if u >= 1.0:
        return 1.0
    u4 = u * u * u * u
    return u4 * (35.0 + u * (-84.0 + u * (70.0 - 20.0 * u)))


@nb.njit(cache=True, inline="always")
def chi_perrin_hartmann(adnu, b1, b2, b3):
    """Sub-Lorentzian factor chi(|dnu|) of Perrin & Hartmann (1989), piecewise exponential."""
    if adnu <= 3.0:
        return 1.0
    if adnu <= 30.0:
        return math.exp(-b1 * (adnu - 3.0))
    if adnu <= 120.0:
        return math.exp(-b1 * 27.0 - b2 * (adnu - 30.0))
    return math.exp(-b1 * 27.0 - b2 * 90.0 - b3 * (adnu - 120.0))


@nb.njit(cache=True, inline="always")
def sub_lorentzian_exponential(adnu, onset, rate):
    """Exponential sub-Lorentzian factor: 1 inside ``onset``, exp(-rate (|dnu| - onset)) beyond."""
    if adnu <= onset:
        return 1.0
    return math.exp(-rate * (adnu - onset))


@nb.njit(cache=True, inline="always")
def far_wing(t, adnu, table):
    """Far-wing factor of treatment ``t`` at |dnu| (the kind code in column 2 of the table;
    see specforce.absorption.treatments): 0 none, 1 Perrin & Hartmann chi, 2 exponential."""
    kind = int(table[t, 2])
    if kind == 1:
        return chi_perrin_hartmann(adnu, table[t, 3], table[t, 4], table[t, 5])
    if kind == 2:
        return sub_lorentzian_exponential(adnu, table[t, 3], table[t, 4])
    return 1.0


@nb.njit(cache=True, inline="always")
def line_value(dnu, alpha_d, gamma_l, sub, t, table):
    """Profile of one line of treatment ``t`` (a row of the treatment table: cut-off, taper,
    far-wing kind and parameters), less its pedestal ``sub``."""
    adnu = abs(dnu)
    cutoff = table[t, 0]
    if adnu >= cutoff:
        return 0.0
    v = voigt_value(dnu, alpha_d, gamma_l)
    if table[t, 2] != 0.0:
        v *= far_wing(t, adnu, table)
    v -= sub
    taper = table[t, 1]
    if taper > 0.0:
        v *= 1.0 - smoothstep((adnu - (cutoff - taper)) / taper)
    return v


_NBLK = 64


@nb.njit(cache=True, inline="always")
def _block(b, n, grid0, step, reach, centre):
    """Grid indices [i0, i1) of parallel block b of n points, and the range [l0, l1) of
    lines (sorted by centre) that reach it; empty ranges when the block is empty."""
    size = (n + _NBLK - 1) // _NBLK
    i0 = min(n, b * size)
    i1 = min(n, i0 + size)
    if i0 >= i1:
        return i0, i1, 0, 0
    lo = grid0 + i0 * step - reach
    hi = grid0 + (i1 - 1) * step + reach
    return i0, i1, np.searchsorted(centre, lo), np.searchsorted(centre, hi, side="right")


@nb.njit(cache=True, parallel=True)
def direct_sum(grid0, step, n, centre, strength, alpha_d, gamma_l, sub, treatment, table, reach):
    """Reference: every line on every grid point within its cut-off.

    Parallel over blocks of the grid; lines are sorted by centre; ``treatment`` is each
    line's row of ``table``; ``reach`` is the largest cut-off in it [cm-1].
    """
    out = np.zeros(n)
    for b in nb.prange(_NBLK):
        i0, i1, l0, l1 = _block(b, n, grid0, step, reach, centre)
        for j in range(l0, l1):
            c = centre[j]
            t = treatment[j]
            cutoff = table[t, 0]
            a = max(i0, int(math.ceil((c - cutoff - grid0) / step)))
            e = min(i1, int(math.floor((c + cutoff - grid0) / step)) + 1)
            for i in range(a, e):
                out[i] += strength[j] * line_value(grid0 + i * step - c, alpha_d[j], gamma_l[j], sub[j], t, table)
    return out


@nb.njit(cache=True, inline="always")
def _point_block(b, x, reach, centre):
    """Indices [i0, i1) of parallel block b of the sorted points x, and the range [l0, l1) of
    lines (sorted by centre) within ``reach`` of it; empty ranges when the block is empty."""
    n = x.shape[0]
    size = (n + _NBLK - 1) // _NBLK
    i0 = min(n, b * size)
    i1 = min(n, i0 + size)
    if i0 >= i1:
        return i0, i1, 0, 0
    return i0, i1, np.searchsorted(centre, x[i0] - reach), np.searchsorted(centre, x[i1 - 1] + reach, side="right")


@nb.njit(cache=True, parallel=True)
def direct_points(x, centre, strength, alpha_d, gamma_l, sub, treatment, table, reach):
    """Reference at arbitrary sorted points: every line at every point within its cut-off
    (``treatment``: each line's row of ``table``; ``reach``: the largest cut-off [cm-1])."""
    out = np.zeros(x.shape[0])
    for blk in nb.prange(_NBLK):
        i0, i1, l0, l1 = _point_block(blk, x, reach, centre)
        for j in range(l0, l1):
            c = centre[j]
            t = treatment[j]
            cutoff = table[t, 0]
            a = max(i0, np.searchsorted(x, c - cutoff))
            e = min(i1, np.searchsorted(x, c + cutoff, side="right"))
            for i in range(a, e):
                out[i] += strength[j] * line_value(x[i] - c, alpha_d[j], gamma_l[j], sub[j], t, table)
    return out


@nb.njit(cache=True, inline="always")
def _window(adnu, delta):
    # 1 inside delta/2, falls smoothly to 0 at delta.
    return 1.0 - smoothstep(2.0 * adnu / delta - 1.0)


@nb.njit(cache=True, parallel=True)
def multigrid_sum(grid0, h0, n0, ratio, nlev, dfac, base, centre, strength, alpha_d, gamma_l, sub, treatment, table,
                  cutoff):
    """Fast sum on a hierarchy of grids (spacing h0 * ratio**k, k = 0..nlev-1).

    A line with base grid b is split by smooth windows W_k (1 inside delta_k/2,
    0 beyond delta_k = dfac * h_k) into pieces f (W_k - W_{k-1}) evaluated on
    grid k, and the rest f (1 - W_{nlev-2}) on the top grid; W_{b-1} = 0.
    Grid arrays carry a margin of 3 points each side, then are interpolated
    down grid by grid with 4-point cubic Lagrange interpolation. Every line's
    treatment (its row of ``table``) has the cut-off ``cutoff`` [cm-1].
    """
    pad = 3
    grids = []
    for k in range(nlev):
        hk = h0 * ratio**k
        nk = (n0 - 1) // ratio**k + 2
        grids.append(np.zeros(nk + 2 * pad))
    for k in range(nlev):
        hk = h0 * ratio**k
        arr = grids[k]
        nk = arr.shape[0]
        start = grid0 - pad * hk
        delta_k = dfac * hk
        delta_prev = dfac * hk / ratio
        reach = cutoff if k == nlev - 1 else delta_k
        for blk in nb.prange(_NBLK):
            i0, i1, l0, l1 = _block(blk, nk, start, hk, reach, centre)
            for j in range(l0, l1):
                bj = base[j]
                if bj > k:
                    continue
                c = centre[j]
                a = max(i0, int(math.ceil((c - reach - start) / hk)))
                e = min(i1, int(math.floor((c + reach - start) / hk)) + 1)
                for i in range(a, e):
                    dnu = start + i * hk - c
                    adnu = abs(dnu)
                    if k == nlev - 1:
                        w = 1.0
                    else:
                        w = _window(adnu, delta_k)
                    if k > bj:
                        w -= _window(adnu, delta_prev)
                    if w == 0.0:
                        continue
                    arr[i] += w * strength[j] * line_value(dnu, alpha_d[j], gamma_l[j], sub[j], treatment[j], table)
    # interpolate from the top grid down
    for k in range(nlev - 1, 0, -1):
        coarse = grids[k]
        fine = grids[k - 1]
        nf = fine.shape[0]
        # fine index i <-> coarse position (i - pad) / ratio + pad
        for i in nb.prange(nf):
            pos = (i - pad) / ratio + pad
            m = int(math.floor(pos))
            t = pos - m
            if t == 0.0:
                if 0 <= m < coarse.shape[0]:
                    fine[i] += coarse[m]
                continue
            if m - 1 < 0 or m + 2 >= coarse.shape[0]:
                continue
            # cubic Lagrange on m-1, m, m+1, m+2
            c0 = -t * (t - 1.0) * (t - 2.0) / 6.0
            c1 = (t + 1.0) * (t - 1.0) * (t - 2.0) / 2.0
            c2 = -(t + 1.0) * t * (t - 2.0) / 2.0
            c3 = (t + 1.0) * t * (t - 1.0) / 6.0
            fine[i] += c0 * coarse[m - 1] + c1 * coarse[m] + c2 * coarse[m + 1] + c3 * coarse[m + 2]
    return grids[0][pad : pad + n0].copy()


# --- the tiered method on arbitrary (sorted) points: see specforce/absorption/_tiered.py ---


@nb.njit(cache=True, inline="always")
def _outer_radius(alpha_d, gamma_l):
    """(|dnu| beyond which |x| + y >= _ASYMPTOTIC_S [cm-1], whether the line is Lorentzian); the
    pieces beyond go through :func:`specforce.absorption._outer_kernels.outer_pieces`."""
    if alpha_d <= 0.0:
        return 0.0, True
    y = SQRT_LN2 * gamma_l / alpha_d
    if y > LORENTZ_Y:
        return 0.0, True
    return max(0.0, _ASYMPTOTIC_S - y) * alpha_d / SQRT_LN2, False


@nb.njit(cache=True, inline="always")
def _work(size):
    """Work arrays of ``size`` items for outer_pieces: offsets, values, arguments, exponent bits."""
    kbits = np.empty(size, np.int64)
    return np.empty(size), np.empty(size), np.empty(size), kbits


@nb.njit(cache=True, nogil=True, error_model="numpy")
def windowed_sum_uniform(start, h, n, tier, delta_k, delta_prev, base, centre, strength, alpha_d, gamma_l, sub,
                         treatment, table):
    """Pieces f (W_k - W_{k-1}) of the lines whose base tier is <= ``tier`` on the uniform
    grid start + i h (i < n); a line whose base tier equals ``tier`` gives f W_k.

    W_k is 1 inside delta_k / 2 and falls to 0 at delta_k; lines with base < 0 are skipped.
    ``treatment`` is each line's row of ``table``.
    The inner part |dnu| < delta_prev / 2, where W_k - W_{k-1} = 0, is not visited near the
    centre; where |x| + y >= 15 the points go together through ``outer_pieces``.
    Serial and without the GIL: callers run one call per thread.
    """
    out = np.zeros(n)
    size = int(2.0 * delta_k / h) + 4
    d, val, arg, kbits = _work(size)
    scale = kbits.view(np.float64)
    for j in range(centre.shape[0]):
        bj = base[j]
        if bj < 0 or bj > tier:
            continue
        c = centre[j]
        a = max(0, int(math.ceil((c - delta_k - start) / h)))
        e = min(n, int(math.floor((c + delta_k - start) / h)) + 1)
        if e <= a:
            continue
        if e - a > d.shape[0]:
            d, val, arg, kbits = _work(e - a)
            scale = kbits.view(np.float64)
        hole = 0.5 * delta_prev if bj < tier else 0.0
        r, lorentz = _outer_radius(alpha_d[j], gamma_l[j])
        ia = min(e, max(a, int(math.ceil((c - r - start) / h))))
        ib = max(ia, min(e, int(math.floor((c + r - start) / h)) + 1))
        for i in range(ia, ib):
            dnu = start + i * h - c
            adnu = abs(dnu)
            if adnu < hole:
                continue
            w = _window(adnu, delta_k)
            if bj < tier:
                w -= _window(adnu, delta_prev)
            if w == 0.0:
                continue
            out[i] += w * strength[j] * line_value(dnu, alpha_d[j], gamma_l[j], sub[j], treatment[j], table)
        for lo, hi in ((a, ia), (ib, e)):
            for q in range(hi - lo):
                d[q] = start + (lo + q) * h - c
            outer_pieces(out, lo, hi - lo, d, strength[j], alpha_d[j], gamma_l[j], sub[j], treatment[j], table,
                         lorentz, delta_k, delta_prev if bj < tier else 0.0, val, arg, kbits, scale)
    return out


@nb.njit(cache=True, inline="always")
def _search_from(x, v, start, right):
    """np.searchsorted(x, v, side="right" if right else "left") for sorted x, given that the
    answer is at least ``start``: by doubling steps from ``start``, then bisection (a few
    steps where the answer is near, instead of a search of the whole array)."""
    n = x.shape[0]
    lo = start  # x[i] < v (left) or x[i] <= v (right) for every i < lo
    step = 1
    hi = lo
    while hi < n and (x[hi] <= v if right else x[hi] < v):
        lo = hi + 1
        hi = lo + step
        step *= 2
    hi = min(hi, n)
    while lo < hi:
        mid = (lo + hi) // 2
        if x[mid] <= v if right else x[mid] < v:
            lo = mid + 1
        else:
            hi = mid
    return lo


@nb.njit(cache=True, nogil=True, error_model="numpy")
def windowed_sum_points(x, delta0, base, centre, strength, alpha_d, gamma_l, sub, treatment, table):
    """Core pieces f W_0 of the lines whose base tier is 0, at the sorted points ``x``
    (serial and without the GIL); where |x| + y >= 15 the points go together through
    ``outer_pieces``."""
    out = np.zeros(x.shape[0])
    d, val, arg, kbits = _work(1024)
    scale = kbits.view(np.float64)
    a = 0
    e = 0
    for j in range(centre.shape[0]):
        if base[j] != 0:
            continue
        c = centre[j]
        # the lines are sorted by centre: each search starts where the previous line's ended
        a = _search_from(x, c - delta0, a, False)
        e = _search_from(x, c + delta0, max(a, e), True)
        if e <= a:
            continue
        if e - a > d.shape[0]:
            d, val, arg, kbits = _work(e - a)
            scale = kbits.view(np.float64)
        r, lorentz = _outer_radius(alpha_d[j], gamma_l[j])
        ia = min(e, max(a, _search_from(x, c - r, a, False)))
        ib = max(ia, min(e, _search_from(x, c + r, ia, True)))
        for i in range(ia, ib):
            dnu = x[i] - c
            w = _window(abs(dnu), delta0)
            if w == 0.0:
                continue
            out[i] += w * strength[j] * line_value(dnu, alpha_d[j], gamma_l[j], sub[j], treatment[j], table)
        for lo, hi in ((a, ia), (ib, e)):
            for q in range(hi - lo):
                d[q] = x[lo + q] - c
            outer_pieces(out, lo, hi - lo, d, strength[j], alpha_d[j], gamma_l[j], sub[j], treatment[j], table,
                         lorentz, delta0, 0.0, val, arg, kbits, scale)
    return out

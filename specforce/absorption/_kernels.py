"""Private numba kernels for line shapes and absorption. Not API.

Public code calls :mod:`specforce.absorption.lineshapes` and :mod:`specforce.absorption.linesum`.
Each kernel has a plain numpy reference in the tests.
"""

import math

import numba as nb
import numpy as np

from ..cache import keep_compiled_kernels

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
    if abs(x) + y >= _RATIONAL12_S:
        return _faddeeva_rational(x, y)
    return _weideman_real(x, y)


@nb.njit(cache=True, inline="always")
def _faddeeva_rational(x, y):
    """Re w(x + iy) where |x| + y >= _RATIONAL12_S: continued fractions."""
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
    u = z * z
    num = z * (_CF12_P[0] + u * (_CF12_P[1] + u * (_CF12_P[2] + u * (_CF12_P[3] + u * (_CF12_P[4] + u)))))
    den = _CF12_Q[0] + u * (_CF12_Q[1] + u * (_CF12_Q[2] + u * (_CF12_Q[3] + u * (_CF12_Q[4] + u * (
        _CF12_Q[5] + u)))))
    w = 1j * INV_SQRT_PI * num / den
    return w.real


@nb.njit(cache=True)
def _weideman_real(x, y):
    """Re w(x + iy) by Weideman's rational sum (N = 32), where |x| + y < _RATIONAL12_S: called, not
    inlined, so that the kernels that use it compile it once (the line sums evaluate it in batches,
    :func:`weideman_real_into`, or rarely)."""
    z = complex(x, y)
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
def _complex_divide(ar, ai, br, bi):
    """(ar + i ai) / (br + i bi) as numba divides complex numbers (CPython's algorithm, scaled by
    the larger part of the divisor), in real arithmetic: the same bits. A zero divisor gives NaN
    (numba raises); the divisors here are never zero."""
    if abs(br) >= abs(bi):
        if br == 0.0 and bi == 0.0:
            return math.nan, math.nan
        ratio = bi / br
        denom = br + bi * ratio
        return (ar + ai * ratio) / denom, (ai - ar * ratio) / denom
    ratio = br / bi
    denom = br * ratio + bi
    return (ar * ratio + ai) / denom, (ai * ratio - ar) / denom


_WEIDEMAN_BATCH = 256  # points whose sums advance together, coefficient by coefficient


@nb.njit(cache=True, nogil=True, error_model="numpy")
def weideman_real_into(x, y, n, out):
    """out[q] = K(x[q], y[q]) for q < n, all with |x| + y < _RATIONAL12_S: Weideman's sum as
    :func:`faddeeva_real` computes it there, with the same bits (tested), but written in real
    arithmetic with the points of a batch advancing together through the coefficients.

    Per point the sum is a chain of 32 dependent complex multiply-adds, which runs at the
    latency of the multiply; across points the chains are independent and the compiler puts them
    in vector registers (measured: about 14 ns per point against 95 ns one point at a time).
    """
    zr = np.empty(_WEIDEMAN_BATCH)
    zi = np.empty(_WEIDEMAN_BATCH)
    pr = np.empty(_WEIDEMAN_BATCH)
    pi = np.empty(_WEIDEMAN_BATCH)
    ell = _WEIDEMAN_L
    for b0 in range(0, n, _WEIDEMAN_BATCH):
        m = min(_WEIDEMAN_BATCH, n - b0)
        for q in range(m):
            # zz = (ell + i z) / (ell - i z), z = x + i y
            zr[q], zi[q] = _complex_divide(ell - y[b0 + q], x[b0 + q], ell + y[b0 + q], -x[b0 + q])
            pr[q] = 0.0
            pi[q] = 0.0
        for c in _WEIDEMAN_A:
            for q in range(m):
                a, b = pr[q], pi[q]
                pr[q] = (a * zr[q] - b * zi[q]) + c
                pi[q] = a * zi[q] + b * zr[q]
        for q in range(m):
            lr, li = ell + y[b0 + q], -x[b0 + q]  # lz = ell - i z
            ar, ai = _complex_divide(2.0 * pr[q], 2.0 * pi[q], lr * lr - li * li, lr * li + li * lr)
            br, _ = _complex_divide(INV_SQRT_PI, 0.0, lr, li)
            out[b0 + q] = ar + br


@nb.njit(cache=True, inline="always")
def _voigt_xy(dnu, alpha_d, gamma_l):
    """(True, the Lorentz profile [cm], 0, 0) where a line is Lorentzian at offset dnu [cm-1] (no
    Doppler width, or y above LORENTZ_Y); else (False, 0, x, y), the Voigt function's arguments."""
    if alpha_d <= 0.0:
        return True, gamma_l / math.pi / (dnu * dnu + gamma_l * gamma_l), 0.0, 0.0
    y = SQRT_LN2 * gamma_l / alpha_d
    if y > LORENTZ_Y:
        return True, gamma_l / math.pi / (dnu * dnu + gamma_l * gamma_l), 0.0, 0.0
    return False, 0.0, SQRT_LN2 * dnu / alpha_d, y


@nb.njit(cache=True, inline="always")
def voigt_of_k(alpha_d, k):
    """The area-normalised Voigt profile [cm] of a line of Doppler half-width ``alpha_d`` [cm-1]
    where its Voigt function K(x, y) is ``k``."""
    return SQRT_LN2 * INV_SQRT_PI / alpha_d * k


@nb.njit(cache=True, inline="always")
def voigt_value(dnu, alpha_d, gamma_l):
    """Area-normalised Voigt profile [cm] at offset dnu [cm-1] from line centre."""
    lorentz, v, x, y = _voigt_xy(dnu, alpha_d, gamma_l)
    if lorentz:
        return v
    return voigt_of_k(alpha_d, faddeeva_real(x, y))


@nb.njit(cache=True, inline="always")
def voigt_value_rational(dnu, alpha_d, gamma_l):
    """:func:`voigt_value` where :func:`weideman_point` does not hold (the continued fractions or
    Lorentz), without Weideman's branch: smaller code where the caller sums those points apart."""
    lorentz, v, x, y = _voigt_xy(dnu, alpha_d, gamma_l)
    if lorentz:
        return v
    return voigt_of_k(alpha_d, _faddeeva_rational(x, y))


@nb.njit(cache=True, inline="always")
def weideman_point(dnu, alpha_d, gamma_l, cutoff):
    """(True, x, y) where :func:`line_value` at offset dnu [cm-1] (cut-off ``cutoff`` [cm-1])
    evaluates K(x, y) by Weideman's sum (there it equals ``_treated(voigt_of_k(alpha_d, K), |dnu|,
    cutoff, ...)``); False elsewhere (with x, y, or 0, 0 beyond the cut-off
    or for a Lorentzian line). The same tests, on the same values, as line_value's."""
    if abs(dnu) >= cutoff:
        return False, 0.0, 0.0
    lorentz, _, x, y = _voigt_xy(dnu, alpha_d, gamma_l)
    return not lorentz and abs(x) + y < _RATIONAL12_S, x, y


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
def _treated(v, adnu, cutoff, sub, t, table):
    """A line's Voigt value ``v`` at |dnu| = ``adnu`` inside its cut-off, with its treatment (row
    ``t`` of ``table``): far-wing factor, less the pedestal ``sub``, times the taper."""
    if table[t, 2] != 0.0:
        v *= far_wing(t, adnu, table)
    v -= sub
    taper = table[t, 1]
    if taper > 0.0:
        v *= 1.0 - smoothstep((adnu - (cutoff - taper)) / taper)
    return v


@nb.njit(cache=True, inline="always")
def line_value(dnu, alpha_d, gamma_l, sub, t, table):
    """Profile of one line of treatment ``t`` (a row of the treatment table: cut-off, taper,
    far-wing kind and parameters), less its pedestal ``sub``."""
    adnu = abs(dnu)
    cutoff = table[t, 0]
    if adnu >= cutoff:
        return 0.0
    return _treated(voigt_value(dnu, alpha_d, gamma_l), adnu, cutoff, sub, t, table)


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

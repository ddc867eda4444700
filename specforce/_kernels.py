"""Private numba kernels for line shapes and absorption. Not API.

Public code calls :mod:`specforce.lineshapes` and :mod:`specforce.absorption`.
Each kernel has a plain numpy reference in the tests.
"""

import math

import numba as nb
import numpy as np

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


@nb.njit(cache=True)
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
def line_value(dnu, alpha_d, gamma_l, cutoff, taper, sub, chi_on, b1, b2, b3):
    """Profile of one line with cut-off, taper, pedestal subtraction and chi factor."""
    adnu = abs(dnu)
    if adnu >= cutoff:
        return 0.0
    v = voigt_value(dnu, alpha_d, gamma_l)
    if chi_on:
        v *= chi_perrin_hartmann(adnu, b1, b2, b3)
    v -= sub
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
def direct_sum(grid0, step, n, centre, strength, alpha_d, gamma_l, sub, chi_on, cutoff, taper, b1, b2, b3):
    """Reference: every line on every grid point within the cut-off.

    Parallel over blocks of the grid; lines are sorted by centre.
    """
    out = np.zeros(n)
    for b in nb.prange(_NBLK):
        i0, i1, l0, l1 = _block(b, n, grid0, step, cutoff, centre)
        for j in range(l0, l1):
            c = centre[j]
            a = max(i0, int(math.ceil((c - cutoff - grid0) / step)))
            e = min(i1, int(math.floor((c + cutoff - grid0) / step)) + 1)
            for i in range(a, e):
                out[i] += strength[j] * line_value(
                    grid0 + i * step - c, alpha_d[j], gamma_l[j], cutoff, taper, sub[j], chi_on[j], b1, b2, b3
                )
    return out


@nb.njit(cache=True, inline="always")
def _window(adnu, delta):
    # 1 inside delta/2, falls smoothly to 0 at delta.
    return 1.0 - smoothstep(2.0 * adnu / delta - 1.0)


@nb.njit(cache=True, parallel=True)
def multilevel_sum(
    grid0, h0, n0, ratio, nlev, dfac, base, centre, strength, alpha_d, gamma_l, sub, chi_on, cutoff, taper, b1, b2, b3
):
    """Fast sum on a hierarchy of grids (spacing h0 * ratio**k, k = 0..nlev-1).

    A line with base level b is split by smooth windows W_k (1 inside delta_k/2,
    0 beyond delta_k = dfac * h_k) into pieces f (W_k - W_{k-1}) evaluated on
    level k, and the rest f (1 - W_{nlev-2}) on the top level; W_{b-1} = 0.
    Level arrays carry a margin of 3 points each side, then are interpolated
    down level by level with 4-point cubic Lagrange interpolation.
    """
    pad = 3
    levels = []
    for k in range(nlev):
        hk = h0 * ratio**k
        nk = (n0 - 1) // ratio**k + 2
        levels.append(np.zeros(nk + 2 * pad))
    for k in range(nlev):
        hk = h0 * ratio**k
        arr = levels[k]
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
                    arr[i] += w * strength[j] * line_value(
                        dnu, alpha_d[j], gamma_l[j], cutoff, taper, sub[j], chi_on[j], b1, b2, b3
                    )
    # interpolate from the top level down
    for k in range(nlev - 1, 0, -1):
        coarse = levels[k]
        fine = levels[k - 1]
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
    return levels[0][pad : pad + n0].copy()

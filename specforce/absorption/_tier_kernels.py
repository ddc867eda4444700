"""Private numba kernels of the tiered line sum (see :mod:`specforce.absorption._tiered`): the
lines' windowed pieces on a uniform tier and at the graded points. Not API.

Each line's points split by the Voigt function's approximation (see
:func:`specforce.absorption._kernels.faddeeva_real`):

* where |x| + y >= 15 (most of them), the points go together through
  :func:`specforce.absorption._outer_kernels.outer_pieces`;
* nearer the centre, point by point through :func:`~specforce.absorption._kernels.line_value`,
  except Weideman's sum (|x| + y < 6), the costliest part of a job's line sums: each kernel first
  gathers the (x, y) of those evaluations for a block of lines, sums them for all of the block's
  points together (:func:`~specforce.absorption._kernels.weideman_real_into`), then walks the
  block's lines again and adds every piece in the order it always did. The sums are the same bits
  as evaluating point by point (tested).
"""

import math

import numba as nb
import numpy as np

from ..cache import keep_compiled_kernels
from ._kernels import (
    _ASYMPTOTIC_S,
    _RATIONAL12_S,
    LORENTZ_Y,
    SQRT_LN2,
    _treated,
    _window,
    line_value,
    voigt_of_k,
    voigt_value_rational,
    weideman_point,
    weideman_real_into,
)
from ._outer_kernels import outer_pieces

keep_compiled_kernels()  # before the kernels are decorated

# Weideman sums gathered before a block of lines is summed (the buffers grow for a line that needs more)
_BLOCK_SUMS = 2048


@nb.njit(cache=True, inline="always")
def _radius_below(alpha_d, gamma_l, s):
    """(|dnu| [cm-1] within which |x| + y < s, whether the line is Lorentzian: then 0)."""
    if alpha_d <= 0.0:
        return 0.0, True
    y = SQRT_LN2 * gamma_l / alpha_d
    if y > LORENTZ_Y:
        return 0.0, True
    return max(0.0, s - y) * alpha_d / SQRT_LN2, False


@nb.njit(cache=True, inline="always")
def _outer_radius(alpha_d, gamma_l):
    """(|dnu| beyond which |x| + y >= _ASYMPTOTIC_S [cm-1], whether the line is Lorentzian); the
    pieces beyond go through :func:`specforce.absorption._outer_kernels.outer_pieces`."""
    return _radius_below(alpha_d, gamma_l, _ASYMPTOTIC_S)


@nb.njit(cache=True, inline="always")
def _work(size):
    """Work arrays of ``size`` items for outer_pieces: offsets, values, arguments, exponent bits."""
    kbits = np.empty(size, np.int64)
    return np.empty(size), np.empty(size), np.empty(size), kbits


@nb.njit(cache=True, inline="always")
def _sums(size):
    """Work arrays of ``size`` items for the Weideman sums: x, y and K."""
    return np.empty(size), np.empty(size), np.empty(size)


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


@nb.njit(cache=True)
def line_tiers(width, exact, treatment, widen, unit, log_ratio, ntier):
    """Each line's base tier and whether it is treated exactly: exact where ``exact`` says so or its
    treatment's ``widen`` does; an exact line's base is floor(log(width / unit) / log_ratio) + 1,
    clipped to 0..``ntier``, the others' -1 (``width``: Voigt half-widths, ``unit``: the finest
    tier's spacing times the resolution, both [cm-1]). One pass instead of numpy's masks; it keeps
    the GIL, taking tens of microseconds. Its log may differ from numpy's in the last bit, so a width
    within that of a tier boundary could take the other tier (either is valid: the method's error
    does not depend on it)."""
    n = width.shape[0]
    base = np.empty(n, np.int64)
    out = np.empty(n, np.bool_)
    for j in range(n):
        e = exact[j] or widen[treatment[j]]
        out[j] = e
        base[j] = -1
        if e:
            lev = int(math.floor(math.log(max(width[j] / unit, 1e-300)) / log_ratio)) + 1
            base[j] = min(max(lev, 0), ntier)
    return base, out


@nb.njit(cache=True)
def stretches(centre, base, radius, min_gap, lower, upper):
    """The intervals [c - radius, c + radius] around the sorted ``centre`` [cm-1] of the lines whose
    ``base`` is >= 0 (every line where ``base`` is empty), merged where less than ``min_gap`` apart,
    clipped to [lower, upper]; those outside it left out. Returns (starts, ends) [cm-1]. Keeps the
    GIL (tens of microseconds)."""
    n = centre.shape[0]
    every = base.shape[0] == 0
    starts = np.empty(n)
    ends = np.empty(n)
    limit = 2.0 * radius + min_gap
    m = 0
    first = -1.0
    prev = -1.0
    found = False
    for j in range(n + 1):
        if j < n:
            if not every and base[j] < 0:
                continue
            c = centre[j]
            if not found:
                first, prev, found = c, c, True
                continue
            if c - prev <= limit:
                prev = c
                continue
        elif not found:
            break
        lo, hi = first - radius, prev + radius  # a stretch ends at prev
        if hi >= lower and lo <= upper:
            starts[m] = max(lo, lower)
            ends[m] = min(hi, upper)
            m += 1
        if j < n:
            first, prev = centre[j], centre[j]
    return starts[:m], ends[:m]


@nb.njit(cache=True)
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


@nb.njit(cache=True, inline="always")
def _weideman_radius(alpha_d, gamma_l):
    """A bound on |dnu| [cm-1] where :func:`~specforce.absorption._kernels.weideman_point` can hold:
    (6 - y) alpha / sqrt(ln 2), widened by 1e-9 against rounding; 0 where it never holds."""
    r, _ = _radius_below(alpha_d, gamma_l, _RATIONAL12_S)
    return r * (1.0 + 1e-9)


@nb.njit(cache=True, nogil=True, error_model="numpy")
def windowed_sum_points(x, delta0, base, centre, strength, alpha_d, gamma_l, sub, treatment, table):
    """Core pieces f W_0 of the lines whose base tier is 0, at the sorted points ``x``
    (serial and without the GIL); where |x| + y >= 15 the points go together through
    ``outer_pieces``, and Weideman's sums go together block by block (see the module docstring)."""
    out = np.zeros(x.shape[0])
    d, val, arg, kbits = _work(1024)
    scale = kbits.view(np.float64)
    bx, by, bk = _sums(_BLOCK_SUMS)
    nlines = centre.shape[0]
    a0 = 0
    e0 = 0
    j0 = 0
    while j0 < nlines:
        # first the (x, y) of the Weideman sums of lines j0 .. j1 - 1, as many as the buffers hold
        q = 0
        a, e = a0, e0  # the lines are sorted by centre: each search starts where the previous line's ended
        j = j0
        while j < nlines:
            if base[j] != 0:
                j += 1
                continue
            c = centre[j]
            a = _search_from(x, c - delta0, a, False)
            e = _search_from(x, c + delta0, max(a, e), True)
            r6 = _weideman_radius(alpha_d[j], gamma_l[j])
            if e <= a or r6 <= 0.0:
                j += 1
                continue
            i6a = _search_from(x, c - r6, a, False)
            i6b = max(i6a, min(e, _search_from(x, c + r6, i6a, True)))
            if q + i6b - i6a > bx.shape[0]:
                if q > 0:
                    break  # the block ends before this line
                bx, by, bk = _sums(i6b - i6a)
            cutoff = table[treatment[j], 0]
            for i in range(i6a, i6b):
                weideman, xv, yv = weideman_point(x[i] - c, alpha_d[j], gamma_l[j], cutoff)
                if weideman:
                    bx[q] = xv
                    by[q] = yv
                    q += 1
            j += 1
        j1 = j
        weideman_real_into(bx, by, q, bk)
        # then the same lines' pieces, in the order of the lines and points
        q = 0
        a, e = a0, e0
        for j in range(j0, j1):
            if base[j] != 0:
                continue
            c = centre[j]
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
            t = treatment[j]
            cutoff = table[t, 0]
            for i in range(ia, ib):
                dnu = x[i] - c
                adnu = abs(dnu)
                weideman, _, _ = weideman_point(dnu, alpha_d[j], gamma_l[j], cutoff)
                if weideman:  # the Voigt profile from the K summed above
                    f = voigt_of_k(alpha_d[j], bk[q])
                    q += 1
                else:
                    f = voigt_value_rational(dnu, alpha_d[j], gamma_l[j])
                w = _window(adnu, delta0)
                if w != 0.0 and adnu < cutoff:  # line_value's value, as it would compute it
                    out[i] += w * strength[j] * _treated(f, adnu, cutoff, sub[j], t, table)
            for lo, hi in ((a, ia), (ib, e)):
                for p in range(hi - lo):
                    d[p] = x[lo + p] - c
                outer_pieces(out, lo, hi - lo, d, strength[j], alpha_d[j], gamma_l[j], sub[j], treatment[j], table,
                             lorentz, delta0, 0.0, val, arg, kbits, scale)
        a0, e0 = a, e
        j0 = j1
    return out

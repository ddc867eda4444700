"""Private numba kernels: line pieces away from the line centre, many points at once. Not API.

Most of the tiered line sum's evaluations lie where |x| + y >= 15 (measured: 97 % of those on
the uniform tiers and 82 % at the graded points, MLS, 500-1500 cm-1), where the Voigt function
is the three-term Laplace continued fraction of :func:`specforce.absorption._kernels.faddeeva_real`.
Written there per point with complex arithmetic and branches, it keeps the compiler from
vectorising the loop; here each line's outer points go through branch-free real arithmetic
(and the vectorisable exp of :mod:`specforce._fastmath` for the far-wing factors), giving the
same values as :func:`specforce.absorption._kernels.line_value` to rounding.
"""

import math

import numba as nb

from .._fastmath import FASTMATH, exp_neg_into
from ..cache import keep_compiled_kernels

keep_compiled_kernels()  # before the kernels are decorated

SQRT_LN2 = math.sqrt(math.log(2.0))
INV_SQRT_PI = 1.0 / math.sqrt(math.pi)


@nb.njit(cache=True, inline="always", fastmath=FASTMATH)
def _step(u):
    """The C3 step of :func:`specforce.absorption._kernels.smoothstep`, without branches."""
    u = min(max(u, 0.0), 1.0)
    u4 = u * u * u * u
    return u4 * (35.0 + u * (-84.0 + u * (70.0 - 20.0 * u)))


@nb.njit(cache=True, nogil=True, fastmath=FASTMATH, error_model="numpy")
def outer_pieces(out, i0, m, d, strength, alpha_d, gamma_l, sub, t, table, lorentz, delta_k, delta_prev,
                 val, arg, kbits, scale):
    """out[i0 + q] += W(|d[q]|) strength f(d[q]) for q < m: one line's pieces at offsets d [cm-1]
    from its centre, all where |x| + y >= 15 (or the line is Lorentzian: ``lorentz``).

    f is the line's profile with its treatment (row ``t`` of ``table``: cut-off, taper, far-wing
    kind and parameters) less its pedestal ``sub``, as :func:`~specforce.absorption._kernels.line_value`
    gives it; W is 1 - step(2 |d| / delta_k - 1), less 1 - step(2 |d| / delta_prev - 1) where
    delta_prev > 0 (the tiered method's windows). ``val``, ``arg`` (float64), ``kbits`` (int64)
    and ``scale`` (its float64 view) are work arrays of at least m items.
    """
    cutoff = table[t, 0]
    taper = table[t, 1]
    kind = int(table[t, 2])
    p0, p1, p2 = table[t, 3], table[t, 4], table[t, 5]
    y = SQRT_LN2 * gamma_l / alpha_d if not lorentz else 0.0
    y2 = y * y
    norm = SQRT_LN2 * INV_SQRT_PI / alpha_d if not lorentz else 0.0
    xscale = SQRT_LN2 / alpha_d if not lorentz else 0.0
    if lorentz:
        for q in range(m):
            val[q] = gamma_l / math.pi / (d[q] * d[q] + gamma_l * gamma_l)
    else:
        for q in range(m):
            # Re (i / sqrt(pi)) (z^2 - 1) / (z (z^2 - 3/2)), z = x + iy, in real arithmetic
            x = d[q] * xscale
            x2 = x * x
            nr = x2 - y2 - 1.0
            ni = 2.0 * x * y
            dr = x * (x2 - 3.0 * y2 - 1.5)
            di = y * (3.0 * x2 - y2 - 1.5)
            val[q] = norm * INV_SQRT_PI * (nr * di - ni * dr) / (dr * dr + di * di)
    if kind == 1:  # Perrin & Hartmann's chi: exp(-arg), piecewise linear arg in |dnu|
        for q in range(m):
            adnu = abs(d[q])
            arg[q] = (max(p0 * (min(adnu, 30.0) - 3.0), 0.0) + max(p1 * (min(adnu, 120.0) - 30.0), 0.0)
                      + max(p2 * (adnu - 120.0), 0.0))
    elif kind == 2:  # exponential: exp(-rate (|dnu| - onset)) beyond the onset
        for q in range(m):
            arg[q] = max(p1 * (abs(d[q]) - p0), 0.0)
    if kind == 1 or kind == 2:
        exp_neg_into(arg, m, arg, kbits, scale)
    far = kind == 1 or kind == 2
    tapered = taper > 0.0
    inv_taper = 1.0 / taper if tapered else 0.0
    cut_lo = cutoff - taper
    windowed = delta_prev > 0.0
    to_k = 2.0 / delta_k
    to_prev = 2.0 / delta_prev if windowed else 0.0
    # the pieces into ``val`` in a loop without branches, then added to ``out``: written into ``out``
    # directly, the loop did not vectorise (``out`` may overlap the work arrays as far as the
    # compiler knows) and took twice as long (measured)
    for q in range(m):
        adnu = abs(d[q])
        v = val[q] * (arg[q] if far else 1.0) - sub  # arg is not set without a far-wing factor
        v = v * (1.0 - _step((adnu - cut_lo) * inv_taper) if tapered else 1.0)
        v = v if adnu < cutoff else 0.0
        w = 1.0 - _step(adnu * to_k - 1.0)
        w = w - ((1.0 - _step(adnu * to_prev - 1.0)) if windowed else 0.0)
        val[q] = w * strength * v
    for q in range(m):
        out[i0 + q] += val[q]

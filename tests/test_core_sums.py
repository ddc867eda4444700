"""Weideman's sums computed many points at once (specforce.absorption._kernels.weideman_real_into)
and the core line sums that gather them block by block (specforce.absorption._tier_kernels):
the same bits as the point-by-point kernels."""

import math

import numba as nb
import numpy as np

from specforce.absorption import _kernels as k
from specforce.absorption import _tier_kernels as tk
from specforce.absorption._outer_kernels import outer_pieces
from specforce.absorption.treatments import ChiPerrinHartmann, LineTreatment, treatment_table


def test_weideman_sums_together_equal_the_pointwise_voigt_function():
    # The batch form rewrites the complex arithmetic of faddeeva_real's Weideman branch in real
    # arithmetic, with numba's complex division: it must give the same bits, over the whole region
    # |x| + y < 6 (y = 0 and points on its edge included) and more points than one batch.
    rng = np.random.default_rng(1)
    n = 3000
    y = np.concatenate((rng.uniform(0.0, 6.0, n), np.zeros(50), np.full(50, 1e-12)))
    x = rng.uniform(-1.0, 1.0, y.size) * (6.0 - y)
    x[:20] = 0.0
    x[20:40] = np.nextafter(6.0 - y[20:40], 0.0)
    inside = np.abs(x) + y < 6.0
    x, y = x[inside], y[inside]
    out = np.full(x.size + 5, -1.0)
    k.weideman_real_into(x, y, x.size, out)
    np.testing.assert_array_equal(out[:x.size], k.faddeeva_real_array(x, y))
    assert np.all(out[x.size:] == -1.0)  # nothing written beyond n


@nb.njit
def _pointwise_core_sum(x, delta0, base, centre, strength, alpha_d, gamma_l, sub, treatment, table):
    # The core sum as it was before the Weideman sums were gathered: every line's points near its
    # centre one at a time through line_value, the rest through outer_pieces.
    out = np.zeros(x.shape[0])
    m = x.shape[0]
    d, val, arg, kbits = np.empty(m), np.empty(m), np.empty(m), np.empty(m, np.int64)
    scale = kbits.view(np.float64)
    for j in range(centre.shape[0]):
        if base[j] != 0:
            continue
        c = centre[j]
        a = np.searchsorted(x, c - delta0)
        e = np.searchsorted(x, c + delta0, side="right")
        if e <= a:
            continue
        r, lorentz = tk._outer_radius(alpha_d[j], gamma_l[j])
        ia = min(e, max(a, np.searchsorted(x, c - r)))
        ib = max(ia, min(e, np.searchsorted(x, c + r, side="right")))
        for i in range(ia, ib):
            dnu = x[i] - c
            w = k._window(abs(dnu), delta0)
            if w == 0.0:
                continue
            out[i] += w * strength[j] * k.line_value(dnu, alpha_d[j], gamma_l[j], sub[j], treatment[j], table)
        for lo, hi in ((a, ia), (ib, e)):
            for q in range(hi - lo):
                d[q] = x[lo + q] - c
            outer_pieces(out, lo, hi - lo, d, strength[j], alpha_d[j], gamma_l[j], sub[j], treatment[j], table,
                         lorentz, delta0, 0.0, val, arg, kbits, scale)
    return out


def test_core_sums_gathered_block_by_block_equal_the_pointwise_sum():
    # Invented lines (not real transitions): Doppler-dominated, pressure-broadened (no Weideman
    # sums), Lorentzian, lines off the core tier, and one line wide enough that its Weideman sums
    # alone outgrow a block's buffers; sorted graded-like points. Enough Weideman sums for several
    # blocks (tk._BLOCK_SUMS each), so that a line starting a new block is checked too. A value
    # of K taken for the wrong point changes the sum far beyond rounding.
    rng = np.random.default_rng(7)
    n = 600
    centre = np.sort(rng.uniform(600.0, 700.0, n))
    alpha = rng.uniform(5e-4, 2e-3, n)
    gamma = alpha * rng.choice([0.05, 0.5, 3.0, 20.0, 200.0], n)
    alpha[5] = 0.0  # Lorentzian
    alpha[300], gamma[300] = 0.3, 0.01  # wide: thousands of points within |x| + y < 6
    strength = 10 ** rng.uniform(-3, 0, n)
    base = np.where(rng.random(n) < 0.9, 0, 1).astype(np.int64)
    treatments = (LineTreatment(25.0, 1.0, True),
                  LineTreatment(250.0, 1.0, False, ChiPerrinHartmann().at_temperature(250.0)))
    table = treatment_table(treatments, full=1e9)
    treatment = rng.choice([0, 1], n).astype(np.int64)
    sub = np.where(treatment == 0, 1e-6, 0.0)
    near = (centre[:, None] + rng.normal(0, 3e-3, (n, 30))).ravel()
    x = np.sort(np.concatenate((rng.uniform(590.0, 710.0, 20000), near, centre[300] + np.linspace(-0.04, 0.04, 4001))))
    delta0 = 0.05
    args = (x, delta0, base, centre, strength, alpha, gamma, sub, treatment, table)
    got = tk.windowed_sum_points(*args)
    sums = 0
    for j in np.flatnonzero(base == 0):
        for v in x[np.abs(x - centre[j]) <= delta0] - centre[j]:
            sums += bool(k.weideman_point(v, alpha[j], gamma[j], table[treatment[j], 0])[0])
    assert sums > 3 * tk._BLOCK_SUMS
    np.testing.assert_array_equal(got, _pointwise_core_sum(*args))
    assert np.count_nonzero(got) > 10000


def _stretches_numpy(centres, radius, lower, upper):
    # the numpy form the kernel replaces
    if centres.size == 0:
        return []
    gaps = np.flatnonzero(np.diff(centres) > 2.0 * radius + 20.0)
    starts = np.concatenate(([centres[0]], centres[gaps + 1])) - radius
    ends = np.concatenate((centres[gaps], [centres[-1]])) + radius
    keep = (ends >= lower) & (starts <= upper)
    return list(zip(np.maximum(starts[keep], lower), np.minimum(ends[keep], upper)))


def test_stretches_equal_the_numpy_form():
    from specforce.absorption._tiered import _stretches

    rng = np.random.default_rng(3)
    for trial in range(200):
        n = int(rng.integers(0, 60))
        centre = np.sort(rng.uniform(0.0, 500.0, n))
        base = rng.integers(-1, 3, n)
        radius = float(rng.uniform(0.1, 15.0))
        lower, upper = sorted(rng.uniform(-50.0, 550.0, 2))
        want = _stretches_numpy(centre[base >= 0], radius, lower, upper)
        assert list(_stretches(centre, radius, lower, upper, base)) == want
        assert list(_stretches(centre, radius, lower, upper)) == _stretches_numpy(centre, radius, lower, upper)


def test_line_tiers_equal_the_numpy_form():
    # Base tiers by the numpy expressions the kernel replaces (numpy's log and the kernel's may differ
    # in the last bit; a line whose width sits that close to a tier boundary is not drawn here).
    rng = np.random.default_rng(4)
    n = 5000
    width = 10 ** rng.uniform(-5, 2, n)
    exact = rng.random(n) < 0.6
    treatment = rng.integers(0, 3, n)
    widen = np.array([False, True, False])
    unit, ratio, ntier = 8 * 0.0025, 4, 5
    base, got_exact = tk.line_tiers(width, exact, treatment, widen, unit, math.log(ratio), ntier)
    want_exact = exact | (treatment == 1)
    lev = np.floor(np.log(np.maximum(width / unit, 1e-300)) / math.log(ratio)).astype(np.int64) + 1
    want = np.full(n, -1, np.int64)
    want[want_exact] = np.clip(lev[want_exact], 0, ntier)
    np.testing.assert_array_equal(got_exact, want_exact)
    np.testing.assert_array_equal(base, want)
    assert set(np.unique(base)) == {-1, 0, 1, 2, 3, 4, 5}

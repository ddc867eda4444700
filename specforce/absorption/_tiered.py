"""Private: the tiered method for a sum of line profiles at arbitrary sorted points. Not API.

Public code calls :func:`specforce.absorption.linesum.optical_depth`. The method splits
each line profile f (a Voigt profile with its treatment's cut-off, taper, pedestal and
far-wing factor, as in :func:`specforce.absorption._kernels.line_value`) by smooth windows W_k (1
inside delta_k / 2, falling to 0 at delta_k, a C3 smoothstep in between) into

* a core piece f W_0, evaluated exactly at the points themselves, for lines
  narrower than ``resolve`` steps of the finest uniform tier;
* pieces f (W_k - W_{k-1}) on uniform tiers of spacing h_k = h_1 ratio^(k-1),
  k = 1..L (a line starts on the coarsest tier that still resolves it), each
  interpolated down to the tier below with 6-point (quintic) Lagrange
  interpolation, as in
  the multigrid method of Fomin (1995) and Sparks (1997);
* the far wing f (1 - W_L), beyond R / 2 with R = delta_L, computed for all
  lines at once by fast Fourier transform convolution on a grid of spacing
  h_F = ratio h_L. Lines that reach more than twice ``far_split`` (R_2, 25 cm-1)
  split that wing once more: f (W_{R_2} - W_L) on the grid h_F, and the distant
  wing f (1 - W_{R_2}), smooth on the scale of R_2 / 2 and of the taper, on a
  coarse grid of spacing h_C = min(R_2 / (2 m), ``coarse_step``, taper / 4),
  interpolated to the grid h_F with the same 6-point Lagrange weights. So the fine transform
  spans the range plus about R_2 whatever the cut-off (CO2 lines with the chi
  factor reach 250 cm-1), and the long reach costs a transform of a few
  thousand points. Far from its centre (|dnu| >= R / 2, R at least ``kappa``
  times the widest half-width in the set) a Voigt profile is given to relative
  order (w / dnu)^6 by its asymptotic expansion (the Lorentz series, each term
  convolved with the Gaussian's even moments)::

      f ~ (gamma / pi) [dnu^-2 + (3 s^2 - gamma^2) dnu^-4 + (gamma^4 - 10 gamma^2 s^2 + 15 s^4) dnu^-6],

  with s^2 = alpha^2 / (2 ln 2) the Gaussian variance, so the far wings of all
  lines are three convolutions of line "impulses" with the fixed kernels
  (1 - W_L) T / dnu^n (T the cut-off taper, times the far-wing factor, one set of kernels
  per line treatment).
  An impulse at a position between grid nodes is spread over the 6 nearest nodes
  with the same Lagrange weights, which interpolates the kernel to the line's
  exact position.

The distant wings need not be summed anew for every set of points: :func:`distant_wings`
sums them once for a layer's lines over a whole range (R_2 fixed at ``far_split``, the coarse
grid set by the treatments alone, so that windows of lines add up on one grid), and
:func:`tiered_sum` given them (``distant=``) interpolates them and needs only the lines within
R_2 of its points; it then keeps R within R_2 / 2.

Lines whose optical depth at centre is below ``exact_tau`` (``smooth`` lines)
keep their exact far wings but their near part, of area
S (1 - int (1 - W_L) f), becomes a Gaussian of standard deviation 1.5 h_F on
the FFT grid (area kept, shape smoothed over a few h_F). Their share of the flux is linear in the
optical depth, so moving their absorption by a fraction of a wavenumber leaves
the fluxes unchanged to first order; the error this leaves is measured in
tests/test_longwave.py and benchmarks/bench_longwave.py.

Costs: per exact line about 2 delta_k / h_k evaluations per tier (a few
hundred), per smooth line O(1); per layer a few FFTs of (range + 3 min(cut-off, R_2)) / h_F
points, and for long-reaching lines a few of (range + 3 cut-off) / h_C points.

References
----------
Fomin, B. A. (1995), JQSRT 53(6), 663-669 (from memory).
Sparks, L. (1997), JQSRT 57(5), 631-650 (from memory).
Asymptotic expansion of the Voigt profile: e.g. Armstrong, B. H. (1967), JQSRT 7,
61-88 (from memory); the coefficients above are derived here term by term.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.fft

from . import _interp_kernels as _ik
from ._far_spectra import _ROW_MULTIPLE, _bump_spectrum, _kernel_spectra, _window_moments
from . import _tier_kernels as _tk



@dataclass(frozen=True)
class TieredTuning:
    """Numerical parameters of the tiered method (measured, see the module docstring).

    Attributes
    ----------
    ratio : int
        Spacing ratio between uniform tiers.
    points_per_transition : int
        Grid steps of the coarser tier across a window's transition (delta_k / 2):
        m, so that delta_k = 2 m h_{k+1}.
    resolve : float
        A line is represented on a uniform tier only if its half-width is at least
        ``resolve`` steps of that tier.
    min_far_radius : float
        Smallest window radius R of the far-wing split [cm-1].
    kappa : float
        R is at least kappa times the widest Voigt half-width of the lines.
    finest_tier : float
        Target spacing of the finest uniform tier [cm-1].
    far_split : float or None
        Radius R_2 of the second far-wing window [cm-1]: the wings of lines that
        reach beyond 2 R_2 are convolved beyond R_2 / 2 on a coarse grid (see the
        module docstring); None puts every far wing on the one fine grid.
    coarse_step : float
        Largest spacing of that coarse grid [cm-1]. The CO2 chi factor's kinks at 30 and
        120 cm-1 set it (the interpolation error there falls linearly with the
        spacing): 0.1 cm-1 keeps the distant wings within 2e-4 of the direct sum,
        0.25 cm-1 gave 1.3e-3 (measured on synthetic CO2 lines).
    """

    ratio: int = 4
    points_per_transition: int = 12
    resolve: float = 8.0
    min_far_radius: float = 0.24
    kappa: float = 8.0
    finest_tier: float = 0.0025
    far_split: float | None = 25.0
    coarse_step: float = 0.1


def _voigt_hwhm(alpha, gamma):
    return 0.5346 * gamma + np.sqrt(0.2166 * gamma * gamma + alpha * alpha)


def tiered_sum(x, centre, strength, alpha, gamma, sub, treatment, exact, treatments, table, tuning=TieredTuning(),
               distant=None):
    """Sum of line profiles times strengths at the sorted points ``x`` (see the module docstring).

    Per-line arrays are sorted by centre and include every line within its cut-off of
    the points; ``treatment`` is each line's index into ``treatments`` (a tuple of
    :class:`specforce.absorption.treatments.LineTreatment`, the first the default one)
    and into ``table`` (:func:`specforce.absorption.treatments.treatment_table`);
    ``exact`` marks the lines treated exactly, the others are smooth lines. Returns
    the sum at ``x``.

    ``distant``, a :class:`DistantWings` from :func:`distant_wings` over lines that include
    these, supplies the distant wings (beyond R_2 / 2) of every long-reaching line; the lines
    given need then only reach the points within R_2 (they must include every line within
    max(R_2, the other cut-offs) of them).
    """
    x = np.ascontiguousarray(x, dtype=float)
    out = np.zeros(x.size)
    if x.size == 0:
        return out
    if distant is not None:
        if centre.size == 0:
            _ik.interp_add(distant.start, distant.step, distant.values, x, out)
            return out
        return _zone(x, centre, strength, alpha, gamma, sub, treatment, exact, _used(treatment, treatments),
                     treatments, table, tuning, distant)
    if centre.size == 0:
        return out
    used = _used(treatment, treatments)
    cuts = tuple(treatments[t].cutoff for t in used)
    if None in cuts:
        return _zone(x, centre, strength, alpha, gamma, sub, treatment, exact, used, treatments, table, tuning)
    # points that no line reaches stay zero; each stretch of points that lines reach is one zone
    for lo, hi in _stretches(centre, float(max(cuts)), float(x[0]), float(x[-1])):
        i0, i1 = int(np.searchsorted(x, lo)), int(np.searchsorted(x, hi, side="right"))
        if i1 > i0:
            out[i0:i1] = _zone(x[i0:i1], centre, strength, alpha, gamma, sub, treatment, exact, used, treatments,
                               table, tuning)
    return out


def _used(treatment, treatments):
    """The treatments in use: the default one (its cut-off bounds the near parts even where no
    line takes it) and those of the lines."""
    counts = np.bincount(treatment, minlength=len(treatments))
    return [t for t in range(len(treatments)) if t == 0 or counts[t]]


def _radii(width_max, cuts, tuning):
    """Radius R of the far-wing window, and R_2 of the distant wings (None for no split) [cm-1]."""
    radius = max(tuning.min_far_radius, tuning.kappa * width_max)
    radius = tuning.min_far_radius * 2.0 ** math.ceil(math.log2(radius / tuning.min_far_radius) - 1e-12)
    for cut in cuts:  # the near parts stay inside every line's reach
        if cut is not None:
            radius = min(radius, 0.5 * cut)
    split = None if tuning.far_split is None else max(float(tuning.far_split), 2.0 * radius)
    return radius, split


def _groups(used, masks, treatments, split):
    """(mask, far-wing factor or None, cut-off or None, taper, distant) per treatment of the lines;
    distant: the wings beyond R_2 / 2 go on the coarse grid."""
    groups = []
    for t in used:
        tr = treatments[t]
        if np.any(masks[t]):
            groups.append((masks[t], tr.far_wing if tr.far_wing.code != 0 else None, tr.cutoff, tr.effective_taper(),
                           split is not None and (tr.cutoff is None or tr.cutoff > 2.0 * split)))
    return groups


def _coarse_step(split, tapers, tuning):
    taper = min([tp for tp in tapers if tp > 0] or [math.inf])
    return min(split / (2 * int(tuning.points_per_transition)), float(tuning.coarse_step), 0.25 * taper)


@dataclass(frozen=True)
class DistantWings:
    """The distant wings f (1 - W_{R_2}) of the long-reaching lines of one layer, on a coarse
    uniform grid start + k step [cm-1] (see the module docstring): computed once for a whole
    calculation, and interpolated by each spectral block. A block that uses them keeps its
    far-wing radius R within R_2 / 2 (R_2 = ``split``)."""

    start: float
    step: float
    values: np.ndarray
    split: float


def distant_wings(lower, upper, centre, strength, alpha, gamma, sub, treatment, treatments, table,
                  tuning=TieredTuning(), reach=None, into=None):
    """The :class:`DistantWings` of the lines (sorted by centre) for points in [lower, upper]
    [cm-1], added to ``into`` if given; None (or ``into``) where no line reaches beyond 2 R_2.

    R_2 is ``tuning.far_split`` and the coarse grid's spacing follows from the treatments alone,
    so that the wings of consecutive windows of lines, each passed with the same ``reach`` (how
    far the grid extends beyond [lower, upper]; default the longest cut-off, or the lines' span
    where a treatment has none), fall on one grid and add up.
    """
    if tuning.far_split is None or centre.size == 0:
        return into
    used = _used(treatment, treatments)
    split = float(tuning.far_split)
    groups = [g for g in _groups(used, {t: treatment == t for t in used}, treatments, split) if g[4]]
    if not groups:
        return into
    h_c = _coarse_step(split, [t.effective_taper() for t in treatments], tuning)
    if reach is None:
        cuts = [t.cutoff for t in treatments]
        reach = (max(upper - centre[0], centre[-1] - lower) + 1.0) if None in cuts else float(max(cuts))
    start, _, values = _far_field(lower, upper, reach + 8.0 * h_c, h_c, split, groups,
                                  (centre, strength, alpha, gamma, sub))
    if into is not None:
        if (into.start, into.step, into.values.size) != (start, h_c, values.size):
            raise ValueError("distant wings on different grids cannot be added")
        values = into.values + values
    return DistantWings(start, h_c, values, split)


def _zone(x, centre, strength, alpha, gamma, sub, treatment, exact, used, treatments, table, tuning, distant=None):
    """:func:`tiered_sum` on points that lines reach throughout; ``used`` lists the treatments
    whose cut-offs bound the method's windows (the default one and those of the lines)."""
    n = x.size
    x0, x1 = float(x[0]), float(x[-1])
    full = max(x1 - centre[0], centre[-1] - x0) + 1.0
    cuts = [treatments[t].cutoff for t in used]
    tapers = [treatments[t].effective_taper() for t in used]
    reach = full if None in cuts else float(max(cuts))
    ratio, m = int(tuning.ratio), int(tuning.points_per_transition)
    width = _voigt_hwhm(alpha, gamma)
    radius, split = _radii(float(width.max()), cuts, tuning)
    if distant is not None:  # the distant wings were split at R_2 over lines that include these
        split = distant.split
        radius = min(radius, 0.5 * split)
    h_far = radius / (2 * m)
    ntier = max(1, int(round(math.log(h_far / ratio / tuning.finest_tier) / math.log(ratio))) + 1)
    h = [h_far / ratio ** (ntier + 1 - k) for k in range(ntier + 1)]  # h[0] virtual, h[1..L] tiers
    delta = [2 * m * ratio * hk for hk in h]  # delta[k]: window radius of tier k; delta[L] = radius
    masks = {t: treatment == t for t in used}
    # the near area of a smooth line assumes no far-wing factor inside the window: where the window
    # reaches the factor's onset, the treatment's lines are exact
    widen = np.array([t in used and radius > treatments[t].far_wing.onset for t in range(len(treatments))])
    base, exact = _tk.line_tiers(width, exact, treatment, widen, tuning.resolve * h[1], math.log(ratio), ntier)

    # far wings of every line, and the near parts of smooth lines, on the FFT grid; the distant
    # wings of lines that reach beyond 2 R_2 on a coarse grid, added to it
    groups = _groups(used, masks, treatments, split)
    reach_f = max([split if coarse else (full if cut is None else cut) for _, _, cut, _, coarse in groups] or [reach])
    lines = (centre, strength, alpha, gamma, sub)
    start_f, size_f, far = _far_field(x0, x1, reach_f, h_far, radius, groups, lines, exact, outer=split,
                                      only=_FAR_MARGIN)
    if distant is not None:
        _ik.interp_add_grid(distant.start, distant.step, distant.values, start_f, h_far, size_f, far)
    elif any(coarse for *_, coarse in groups):
        h_c = _coarse_step(split, tapers, tuning)
        reach_c = max(reach, reach_f + 8.0 * h_c)  # the coarse grid covers the fine one and its stencils
        start_c, _, wings = _far_field(x0, x1, reach_c, h_c, split, [g for g in groups if g[4]], lines)
        _ik.interp_add_grid(start_c, h_c, wings, start_f, h_far, size_f, far)

    # Where no exactly treated line is within reach, the sum is the far field alone: interpolate it
    # to the points directly. Elsewhere, in each stretch of points within delta_L of such lines,
    # run the uniform tiers L .. 1, each with its pieces plus the tier above interpolated down.
    # the kernels skip the lines not based on their tier (slices, not copies: copying the lines
    # each uses took longer, holding the GIL, than the kernels take to pass over the others)
    line_arrays = (centre, strength, alpha, gamma, sub, treatment)
    out = _tk.windowed_sum_points(x, delta[0], base, *line_arrays, table)
    done = np.zeros(n, bool)
    for lo, hi in _stretches(centre, delta[ntier], x0, x1, base):
        i0, i1 = int(np.searchsorted(x, lo)), int(np.searchsorted(x, hi, side="right"))
        if i1 <= i0:
            continue
        xs = x[i0:i1]
        above_start, above_h, above = start_f, h_far, far
        for k in range(ntier, 0, -1):
            start_k = xs[0] - 6.0 * h[k]  # margins cover the interpolation stencils of the tiers below
            size_k = int(math.ceil((xs[-1] - xs[0]) / h[k])) + 13
            near = slice(int(np.searchsorted(centre, start_k - delta[k])),
                         int(np.searchsorted(centre, start_k + size_k * h[k] + delta[k], side="right")))
            arr = _tk.windowed_sum_uniform(start_k, h[k], size_k, k, delta[k], delta[k - 1], base[near],
                                          *(a[near] for a in line_arrays), table)
            _ik.interp_add_grid(above_start, above_h, above, start_k, h[k], size_k, arr)
            above_start, above_h, above = start_k, h[k], arr
        part = out[i0:i1]
        _ik.interp_add(above_start, above_h, above, xs, part)
        out[i0:i1] = part
        done[i0:i1] = True
    rest = np.flatnonzero(~done)
    if rest.size:
        part = out[rest]
        _ik.interp_add(start_f, h_far, far, np.ascontiguousarray(x[rest]), part)
        out[rest] = part
    return out


# Grid steps of the fine far field kept beyond the points on each side: the top tier's grid reaches
# 7 of its steps (at most the far field's) beyond them, the 6-point stencils 3 far-field steps more.
_FAR_MARGIN = 16


def _far_field(x0, x1, reach, step, radius, groups, lines, exact=None, outer=None, only=None):
    """Far wings beyond radius / 2 (the asymptotic series convolved by FFT) of the lines within
    ``reach`` of [x0, x1], on a grid of spacing ``step`` that covers them; with ``only`` (a number
    of steps), on the part of that grid within ``only`` steps of [x0, x1] alone, which lets the
    transform be shorter (the circular convolution's wrap-around stays outside that part).

    ``groups`` holds (mask over the lines, far-wing factor or None, cut-off or None, taper, split); the
    wings of a group with split set stop at ``outer`` (times W_outer) when that is given. With
    ``exact`` given, the lines not exact add their near part as a smoothed core. ``lines`` is
    (centre, strength, alpha, gamma, sub). Returns (start, size, values).
    """
    centre, strength, alpha, gamma, sub = lines
    start = x0 - reach - 4.0 * step
    size = int(math.ceil((x1 - x0 + 2.0 * reach) / step)) + 9
    sel = slice(int(np.searchsorted(centre, x0 - reach)), int(np.searchsorted(centre, x1 + reach, side="right")))
    c, s, al, ga, sb = centre[sel], strength[sel], alpha[sel], gamma[sel], sub[sel]
    pos = (c - start) / step
    nk = int(math.ceil(reach / step))
    a, b = 0, size  # the part of the grid returned: nodes a .. b - 1
    if only is not None:
        a = max(0, int(math.floor((x0 - start) / step)) - int(only))
        b = min(size, int(math.ceil((x1 - start) / step)) + int(only) + 1)
    # impulses at nodes 0 .. size - 1 and kernels to nk nodes either side: node o of a .. b - 1 takes
    # no wrapped-around term when nfft - nk exceeds its distance to every impulse
    # (the impulses fill nodes 0 .. size - 1, so the transform holds at least those)
    nfft = scipy.fft.next_fast_len(max(size, nk + max(b, size - a) + 1), real=True)
    rows, kernels = [], []  # per group: how its rows of impulses are spread; each row's kernel spectrum
    for mask, wing, cut, taper, split in groups:
        mask = np.ascontiguousarray(mask[sel])
        if not np.any(mask):
            continue
        key = (step, radius, reach, cut, float(taper))
        stop = outer if split else None
        rows.append(("series", mask))  # the three terms of the asymptotic series
        kernels += _kernel_spectra((2, 4, 6), *key, wing, nfft, stop)
        if np.any(sb[mask] != 0.0):
            rows.append(("pedestal", mask))
            kernels += _kernel_spectra((0,), *key, None, nfft, stop)
    smooth = exact is not None and not np.all(exact[sel])
    if smooth:  # the near parts of the smooth lines, as smoothed cores
        kernels.append(_bump_spectrum(step, nfft))
    if not kernels:
        return start + a * step, b - a, np.zeros(b - a)
    # an even number of rows (a zero row added): pocketfft transforms rows in pairs with vector
    # instructions, and took about twice as long per row for three rows as for four (measured)
    impulses = np.zeros((-(-len(kernels) // _ROW_MULTIPLE) * _ROW_MULTIPLE, nfft))
    r = 0
    for kind, mask in rows:
        if kind == "series":
            _ik.spread6_series(pos, s, al, ga, mask, impulses[r], impulses[r + 1], impulses[r + 2])
            r += 3
        else:
            _ik.spread6(pos[mask], -(s * sb)[mask], impulses[r])
            r += 1
    if smooth:
        (j2, j4, j6), area_w = _window_moments(radius)
        _ik.spread6_near(pos, s, al, ga, sb, np.ascontiguousarray(exact[sel]), j2, j4, j6, area_w, impulses[r])
    # one thread: the calculation runs layers on threads of its own (specforce.radiation.workers)
    spectra = scipy.fft.rfft(impulses, axis=-1, workers=1)
    del impulses
    total = np.empty(spectra.shape[1], complex)
    for r, kernel in enumerate(kernels):
        _ik.spectrum_times_kernel(spectra[r], kernel, total, r > 0)
    del spectra
    values = scipy.fft.irfft(total, nfft, workers=1)
    return start + a * step, b - a, values[a:b]


# Stretches separated by less than this are run as one [cm-1]: a gap costs a few thousand nodes
# of interpolation, a separate stretch a few kernel calls.
_MIN_GAP = 20.0
_EVERY = np.zeros(0, np.int64)


def _stretches(centres, radius, lower, upper, base=_EVERY):
    """Merged intervals [c - radius, c + radius] of sorted ``centres`` (of the lines whose ``base`` is
    >= 0 where given; gaps under _MIN_GAP joined), clipped to [lower, upper]: an iterator of
    (lower, upper) pairs [cm-1], to be walked once."""
    return zip(*_tk.stretches(centres, base, float(radius), _MIN_GAP, float(lower), float(upper)))

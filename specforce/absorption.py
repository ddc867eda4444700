"""Absorption cross-sections and optical depths on wavenumber grids.

Two methods, selected per call:

``"direct"``
    the reference: every line evaluated on every grid point within the cut-off.
    Simple and obviously correct; the tests use it.
``"fast"``
    a multi-level grid method. Each line profile is split by smooth windows
    (a partition of unity in |nu - nu0|) into a core, evaluated on the fine
    grid, and wing pieces, each evaluated on a grid ``ratio`` times coarser than
    the last and interpolated down with cubic Lagrange interpolation. This is
    the multigrid idea of Fomin (1995) and Sparks (1997), with C3 polynomial
    windows of our own choosing; its cost per line is a few hundred points per
    level instead of 2 cut-off / spacing.

Line shape conventions (shared by both methods)
------------------------------------------------
* Voigt profile (see :mod:`specforce.lineshapes`) centred on the pressure-shifted
  position.
* Line cut-off: 25 cm-1 from line centre by default (common practice), or
  ``cutoff=None`` for none (in practice: the whole grid). So that the fast
  method can meet the direct sum everywhere, the profile is tapered to zero
  over the last ``taper`` cm-1 before the cut-off (default 1 cm-1) with a C3
  smoothstep, in both methods. With ``subtract_cutoff=True`` the profile's
  value at the cut-off is subtracted first (a "pedestal" subtraction, for use
  with continuum models defined that way); by default it is not.
* The radiation term nu tanh(c2 nu / 2T) (Clough et al. 1989) multiplies each
  line; switch it off with ``radiation_term=False`` to get S f(nu - nu0).
* CO2 lines carry the sub-Lorentzian chi factor of Perrin & Hartmann (1989)
  when ``co2_chi=True``.

References
----------
Fomin, B. A. (1995), Effective interpolation technique for line-by-line
calculations of radiation absorption in gases, JQSRT 53(6), 663-669 (from memory).
Sparks, L. (1997), Efficient line-by-line calculation of absorption
coefficients to high numerical accuracy, JQSRT 57(5), 631-650 (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import _kernels as _k
from .constants import SECOND_RADIATION_CONSTANT_CM_K
from .lineparams import doppler_halfwidth, lorentz_halfwidth, shifted_wavenumber
from .lineshapes import CHI_PERRIN_HARTMANN_296K, voigt_halfwidth
from .linestore import intensity_at
from .molecules import DETAILED_MOLECULES, isotopologue, molecule_name

__all__ = [
    "LayerState",
    "LineShapeOptions",
    "spectral_grid",
    "recommended_spacing",
    "cross_section",
    "DEFAULT_CUTOFF",
]

DEFAULT_CUTOFF = 25.0  # cm-1, common practice
_CO2 = 2


@dataclass(frozen=True)
class LayerState:
    """Thermodynamic state of one homogeneous layer.

    Attributes
    ----------
    pressure : float
        Total pressure [Pa].
    temperature : float
        Temperature [K].
    partial_pressure : float
        Partial pressure of the absorbing gas [Pa] (for self-broadening).
    """

    pressure: float
    temperature: float
    partial_pressure: float = 0.0

    def __post_init__(self):
        if not (self.pressure > 0 and math.isfinite(self.pressure)):
            raise ValueError(f"LayerState.pressure must be positive and finite [Pa], got {self.pressure}")
        if not (100.0 <= self.temperature <= 400.0):
            raise ValueError(f"LayerState.temperature must lie in 100-400 K, got {self.temperature}")
        if not (0.0 <= self.partial_pressure <= self.pressure):
            raise ValueError(
                f"LayerState.partial_pressure must lie in [0, pressure], got {self.partial_pressure} "
                f"with pressure {self.pressure}"
            )


@dataclass(frozen=True)
class LineShapeOptions:
    """How lines are turned into absorption (see the module docstring).

    Attributes
    ----------
    cutoff : float or None
        Distance from line centre beyond which a line contributes nothing [cm-1];
        None for no cut-off.
    taper : float
        Width of the smooth fall to zero before the cut-off [cm-1]. With 0 (a hard
        cut) the fast method smears each line's step at the cut-off over a few
        points of its coarsest grid; compare hard cuts with the direct method.
    subtract_cutoff : bool
        Subtract each profile's value at the cut-off (pedestal subtraction).
    radiation_term : bool
        Include the nu tanh(c2 nu / 2T) radiation term.
    co2_chi : bool
        Apply the Perrin & Hartmann (1989) chi factor to CO2 lines.
    """

    cutoff: float | None = DEFAULT_CUTOFF
    taper: float = 1.0
    subtract_cutoff: bool = False
    radiation_term: bool = True
    co2_chi: bool = False

    def __post_init__(self):
        if self.cutoff is not None and not self.cutoff > 0:
            raise ValueError(f"cutoff must be positive [cm-1] or None, got {self.cutoff}")
        if self.taper < 0 or (self.cutoff is not None and self.taper >= self.cutoff):
            raise ValueError(f"taper must lie in [0, cutoff) [cm-1], got {self.taper}")


def spectral_grid(start, stop, spacing):
    """Uniform wavenumber grid from ``start`` to at least ``stop`` [cm-1].

    Parameters
    ----------
    start, stop : float
        Ends of the range [cm-1].
    spacing : float
        Grid step [cm-1].

    Returns
    -------
    numpy.ndarray
        start + i * spacing for i = 0 .. ceil((stop - start) / spacing).
    """
    if not (spacing > 0 and stop > start):
        raise ValueError(f"need stop > start and spacing > 0, got {start}, {stop}, {spacing}")
    n = int(math.ceil((stop - start) / spacing - 1e-9)) + 1
    return start + spacing * np.arange(n)


def _line_parameters(lines, state, options):
    """Per-line centre, strength (with radiation-term denominator), alpha_D, gamma_L."""
    p, t = state.pressure, state.temperature
    wn = lines.wavenumber
    centre = shifted_wavenumber(wn, lines.delta_air, p)
    s_t = intensity_at(lines.columns, t)
    if options.radiation_term:
        r0 = wn * np.tanh(SECOND_RADIATION_CONSTANT_CM_K * wn / (2.0 * t))
        s_t = s_t / r0
    mass = np.empty(wn.size)
    for m in np.unique(lines.molecule):
        sel = lines.molecule == m
        if molecule_name(int(m)) in DETAILED_MOLECULES:
            for i in np.unique(lines.isotopologue[sel]):
                mass[sel & (lines.isotopologue == i)] = isotopologue(int(m), int(i)).molar_mass
        else:
            raise ValueError(
                f"no molecular mass for {molecule_name(int(m))}; select molecules among "
                f"{', '.join(DETAILED_MOLECULES)} before computing absorption"
            )
    alpha = doppler_halfwidth(wn, t, mass)
    gamma = lorentz_halfwidth(lines.gamma_air, lines.gamma_self, lines.n_air, p, t, state.partial_pressure)
    order = np.argsort(centre, kind="stable")
    return (
        np.ascontiguousarray(centre[order]),
        np.ascontiguousarray(s_t[order]),
        np.ascontiguousarray(alpha[order]),
        np.ascontiguousarray(gamma[order], dtype=float),
        np.ascontiguousarray(lines.molecule[order] == _CO2),
    )


def recommended_spacing(lines, state, fraction=0.25):
    """Grid spacing that resolves the narrowest line of a layer [cm-1].

    The rule: ``fraction`` (default 1/4) of the smallest Voigt half-width
    (Olivero & Longbothum 1977) among the given lines at the layer's state.
    """
    if len(lines) == 0:
        raise ValueError("recommended_spacing needs at least one line")
    _, _, alpha, gamma, _ = _line_parameters(lines, state, LineShapeOptions())
    return float(fraction * np.min(voigt_halfwidth(alpha, gamma)))


def cross_section(lines, grid, state, *, method="fast", options=LineShapeOptions(), levels=None):
    """Absorption cross-section of a set of lines on a uniform grid.

    Parameters
    ----------
    lines : LineList
        Lines with at least wavenumber, intensity, lower_energy, gamma_air,
        gamma_self, n_air, delta_air, molecule and isotopologue. Lines that lie
        outside the grid but within the cut-off must be included by the caller.
    grid : numpy.ndarray
        Uniform wavenumber grid [cm-1] (see :func:`spectral_grid`).
    state : LayerState
        Pressure, temperature and partial pressure of the layer.
    method : {"fast", "direct"}
        Multi-level method or direct-sum reference.
    options : LineShapeOptions
        Cut-off, taper, pedestal subtraction, radiation term, CO2 chi factor.
    levels : dict, optional
        Tuning of the fast method: ``ratio`` between level spacings (4),
        ``dfac`` (160: the window of level k reaches dfac x its spacing),
        ``resolve`` (8: a line starts on the coarsest level whose spacing is at
        most its half-width / resolve) and ``taper_points`` (4: the top level
        spacing is at most taper / taper_points, so the taper is resolved).

    Returns
    -------
    numpy.ndarray
        Cross-section [cm2 molecule-1] at each grid point, i.e. the sum over
        lines of S(T) f(nu - nu0) (times the radiation-term ratio). Multiply by
        a column amount [molecule cm-2] for optical depth.
    """
    grid = np.asarray(grid, dtype=float)
    if grid.ndim != 1 or grid.size < 2:
        raise ValueError("grid must be a 1-D array of at least 2 wavenumbers")
    step = (grid[-1] - grid[0]) / (grid.size - 1)
    if not np.allclose(np.diff(grid), step, rtol=1e-6, atol=1e-12):
        raise ValueError("grid must be uniform; build it with spectral_grid()")
    if method not in ("fast", "direct"):
        raise ValueError(f"method must be 'fast' or 'direct', got {method!r}")
    n = grid.size
    if len(lines) == 0:
        return np.zeros(n)
    centre, strength, alpha, gamma, is_co2 = _line_parameters(lines, state, options)
    if options.cutoff is None:
        # no cut-off: every line reaches every grid point
        cutoff = max(grid[-1] - centre[0], centre[-1] - grid[0]) + 1.0
    else:
        cutoff = options.cutoff
    taper = options.taper if options.cutoff is not None else 0.0
    if options.subtract_cutoff and options.cutoff is not None:
        sub = _k.voigt_per_line(float(cutoff), alpha, gamma)
        if options.co2_chi:
            sub = np.where(is_co2, sub * _chi_scalar(cutoff), sub)
    else:
        sub = np.zeros(centre.size)
    chi_on = is_co2 & bool(options.co2_chi)
    out = sum_lines(grid[0], step, n, centre, strength, alpha, gamma, sub, chi_on, cutoff, taper, method, levels)
    if options.radiation_term:
        out *= grid * np.tanh(SECOND_RADIATION_CONSTANT_CM_K * grid / (2.0 * state.temperature))
    return out


def sum_lines(grid0, step, n, centre, strength, alpha, gamma, sub, chi_on, cutoff, taper, method="fast", levels=None):
    """Sum line profiles on a uniform grid (shared by :func:`cross_section` and the longwave pipeline).

    Parameters are per-line arrays sorted by centre: centre [cm-1], strength
    [cm2 molecule-1 cm-1], alpha (Doppler HWHM) and gamma (Lorentz HWHM) [cm-1],
    sub (pedestal) [cm], chi_on (bool); cutoff and taper [cm-1]. Returns the
    sum on grid0 + step * arange(n), clipped at zero.
    """
    b1, b2, b3 = CHI_PERRIN_HARTMANN_296K
    chi_on = np.ascontiguousarray(chi_on, dtype=np.bool_)
    if method == "direct":
        return _k.direct_sum(grid0, step, n, centre, strength, alpha, gamma, sub, chi_on, cutoff, taper, b1, b2, b3)
    cfg = {"ratio": 4, "dfac": 160.0, "resolve": 8.0, "taper_points": 4.0, **(levels or {})}
    ratio, dfac, resolve = int(cfg["ratio"]), float(cfg["dfac"]), float(cfg["resolve"])
    width = voigt_halfwidth(alpha, gamma)
    # the top level must also resolve the taper, or it smears the fall to zero at the cut-off
    top_max = taper / float(cfg["taper_points"]) if taper > 0 else math.inf
    nlev = 1
    while (dfac * step * ratio ** (nlev - 1) / 2.0 < cutoff and (n - 1) // ratio**nlev >= 4
           and step * ratio**nlev <= top_max):
        nlev += 1
    # base level: the coarsest level whose spacing still resolves the line (h <= width / resolve)
    base = np.floor(np.log(np.maximum(width / (resolve * step), 1.0)) / np.log(ratio)).astype(np.int64)
    base = np.minimum(base, nlev - 1)
    out = _k.multilevel_sum(grid0, step, n, ratio, nlev, dfac, base, centre, strength, alpha, gamma, sub, chi_on,
                            cutoff, taper, b1, b2, b3)
    # cubic interpolation can undershoot below zero where a wing fades out at the edge of a
    # line's reach (about 1e-4 of the local wing value); a cross-section is non-negative
    return np.maximum(out, 0.0, out=out)


def _chi_scalar(d):
    b1, b2, b3 = CHI_PERRIN_HARTMANN_296K
    return _k.chi_perrin_hartmann(abs(d), b1, b2, b3)

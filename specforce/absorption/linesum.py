"""Absorption: line parameters of a layer, and its optical depth at any set of wavenumbers.

:func:`layer_lines` turns line data and a layer's state into the per-line
quantities that absorption needs (:class:`LayerLines`); :func:`optical_depth` is
the one function that sums them into a layer's optical depth on a grid. The
longwave pipeline and the tests both call it. Three methods, selected per call:

``"tiered"`` (default, any sorted wavenumbers)
    line cores evaluated exactly at the wavenumbers, intermediate wings on
    uniform tiers, far wings by fast Fourier transform convolution with the
    Voigt profile's asymptotic expansion; lines too weak to matter at their
    centre keep their exact wings and area with a smoothed core (see
    :mod:`specforce.absorption._tiered`). Its cost grows with the lines and the points,
    not with the finest line width anywhere.
``"multigrid"`` (uniform grids only)
    the earlier fast method: each line profile split by smooth windows into a
    core on the grid and wing pieces on grids ``ratio`` times coarser, each
    interpolated down with cubic Lagrange interpolation (the multigrid method of
    Fomin 1995 and Sparks 1997). It serves the uniform reference path.
``"direct"`` (any wavenumbers)
    the reference: every line evaluated at every wavenumber within the cut-off.

Line shape conventions (shared by all methods)
----------------------------------------------
* Voigt profile (see :mod:`specforce.absorption.lineshapes`) centred on the pressure-shifted
  position.
* Line cut-off: 25 cm-1 from line centre by default (common practice), or
  ``cutoff=None`` for none (in practice: the whole grid). The profile is tapered
  to zero over the last ``taper`` cm-1 before the cut-off (default 1 cm-1) with a
  C3 smoothstep, in every method. With ``subtract_cutoff=True`` the profile's
  value at the cut-off is subtracted first (a "pedestal" subtraction, for use
  with continuum models defined that way); by default it is not.
* The radiation term nu tanh(c2 nu / 2T) (Clough et al. 1989) multiplies each
  line; switch it off with ``radiation_term=False`` to get S f(nu - nu0).
* CO2 lines carry the sub-Lorentzian chi factor of Perrin & Hartmann (1989)
  when ``co2_chi=True``; the transfer settings give CO2 that factor and a longer
  cut-off by default (:class:`specforce.radiation.longwave.Settings`).

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
from ._tiered import TieredTuning, tiered_sum
from ..constants import REFERENCE_TEMPERATURE, SECOND_RADIATION_CONSTANT_CM_K
from ..molecular.lineparams import doppler_halfwidth, intensity_at, lorentz_halfwidth, shifted_wavenumber
from .lineshapes import CHI_PERRIN_HARTMANN_296K, radiation_term, voigt_halfwidth
from ..molecular.molecules import DETAILED_MOLECULES, isotopologue, molecule_name
from ..errors import ProfileError, SettingsError

__all__ = [
    "LayerState",
    "LineShapeOptions",
    "LayerLines",
    "TieredTuning",
    "layer_lines",
    "optical_depth",
    "cross_section",
    "DEFAULT_CUTOFF",
    "CO2_CHI_CUTOFF",
    "METHODS",
]

DEFAULT_CUTOFF = 25.0  # cm-1, common practice
#: Cut-off of CO2 lines that carry the chi factor [cm-1]: 250 cm-1 out the factor is 0.0045 of the
#: Lorentz wing (1.3e-5 at 500), and no cut-off at all changes the mid-latitude summer 2xCO2 TOA forcing
#: by 0.001 W m-2 (measured).
CO2_CHI_CUTOFF = 250.0
#: The summation methods of :func:`optical_depth`.
METHODS = ("tiered", "multigrid", "direct")
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
            raise ProfileError(f"LayerState.pressure must be positive and finite [Pa], got {self.pressure}")
        if not (100.0 <= self.temperature <= 400.0):
            raise ProfileError(f"LayerState.temperature must lie in 100-400 K, got {self.temperature}")
        if not (0.0 <= self.partial_pressure <= self.pressure):
            raise ProfileError(
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
        cut) the fast methods smear each line's step at the cut-off over a few
        points of their coarsest grid; compare hard cuts with the direct method.
    subtract_cutoff : bool
        Subtract each profile's value at the cut-off (pedestal subtraction).
    radiation_term : bool
        Include the nu tanh(c2 nu / 2T) radiation term.
    co2_chi : bool
        Apply the Perrin & Hartmann (1989) chi factor to CO2 lines.
    co2_cutoff : float or None
        Cut-off of the CO2 lines when ``co2_chi`` is on [cm-1]; None for none. The
        other lines keep ``cutoff``.
    """

    cutoff: float | None = DEFAULT_CUTOFF
    taper: float = 1.0
    subtract_cutoff: bool = False
    radiation_term: bool = True
    co2_chi: bool = False
    co2_cutoff: float | None = DEFAULT_CUTOFF

    def __post_init__(self):
        for name in ("cutoff", "co2_cutoff"):
            value = getattr(self, name)
            if value is not None and not (value > 0 and math.isfinite(value)):
                raise SettingsError(f"{name} must be positive [cm-1] or None, got {value}")
            if self.taper < 0 or (value is not None and self.taper >= value):
                raise SettingsError(f"taper must lie in [0, {name}) [cm-1], got {self.taper}")

    @property
    def reach(self):
        """How far a line reaches [cm-1] (inf without a cut-off)."""
        cuts = [self.cutoff] + ([self.co2_cutoff] if self.co2_chi else [])
        return math.inf if None in cuts else float(max(cuts))


_LINE_FIELDS = ("centre", "strength", "doppler_hwhm", "lorentz_hwhm", "chi", "peak_optical_depth", "ident")


@dataclass
class LayerLines:
    """The lines of one layer, ready to be summed (all arrays sorted by centre).

    Attributes
    ----------
    centre : numpy.ndarray
        Pressure-shifted line positions [cm-1].
    strength : numpy.ndarray
        Intensity at the layer temperature times the absorber column, divided by the
        radiation term at the line centre when that is on [cm-1].
    doppler_hwhm, lorentz_hwhm : numpy.ndarray
        Doppler and Lorentz half-widths at half maximum [cm-1].
    chi : numpy.ndarray of bool
        Lines that carry the CO2 chi factor.
    peak_optical_depth : numpy.ndarray
        Upper bound of the line's optical depth at its centre, min(Doppler, Lorentz
        peak) x strength x radiation term [dimensionless]; it decides which lines a
        grid must resolve and which the tiered method treats exactly.
    ident : numpy.ndarray of int
        Identity of each line, the same in every layer (its row in the line list plus
        an offset per gas), so that lines can be followed across layers.
    temperature : float
        Layer temperature [K] (for the radiation term on the grid).
    radiation_term : bool
        Whether strengths are divided by the radiation term at the centre (and sums
        are multiplied by it on the grid).
    """

    centre: np.ndarray
    strength: np.ndarray
    doppler_hwhm: np.ndarray
    lorentz_hwhm: np.ndarray
    chi: np.ndarray
    peak_optical_depth: np.ndarray
    ident: np.ndarray
    temperature: float
    radiation_term: bool = True

    def __len__(self):
        return int(self.centre.size)

    @property
    def voigt_hwhm(self):
        """Voigt half-widths at half maximum (Olivero & Longbothum 1977) [cm-1]."""
        return voigt_halfwidth(self.doppler_hwhm, self.lorentz_hwhm)

    def _pick(self, index):
        return LayerLines(*(getattr(self, f)[index] for f in _LINE_FIELDS), self.temperature, self.radiation_term)

    def window(self, lower, upper):
        """The lines with lower <= centre <= upper [cm-1]."""
        return self._pick(slice(int(np.searchsorted(self.centre, lower)),
                                int(np.searchsorted(self.centre, upper, side="right"))))

    @classmethod
    def merge(cls, parts, temperature=None, radiation_term=True):
        """One sorted set from the line sets of several gases of the same layer."""
        parts = [p for p in parts if p is not None]
        if not parts:
            return cls(*(np.zeros(0) for _ in range(4)), np.zeros(0, bool), np.zeros(0), np.zeros(0, np.int64),
                       temperature or REFERENCE_TEMPERATURE, radiation_term)
        if len(parts) == 1:
            return parts[0]
        cols = {f: np.concatenate([getattr(p, f) for p in parts]) for f in _LINE_FIELDS}
        order = np.argsort(cols["centre"], kind="stable")
        return cls(*(np.ascontiguousarray(cols[f][order]) for f in _LINE_FIELDS), parts[0].temperature,
                   parts[0].radiation_term)


def layer_lines(lines, state, column=1.0, options=LineShapeOptions(), ident_offset=0):
    """Line parameters of a layer: positions, strengths and widths at its pressure and temperature.

    Parameters
    ----------
    lines : LineList
        Lines with at least wavenumber, intensity, lower_energy, gamma_air,
        gamma_self, n_air, delta_air, molecule and isotopologue.
    state : LayerState
        Pressure, temperature and partial pressure of the absorber.
    column : float
        Absorber column of the layer [molecule cm-2]; 1 gives cross-sections.
    options : LineShapeOptions
    ident_offset : int
        Added to each line's row number to give its ``ident``.

    Returns
    -------
    LayerLines
    """
    p, t = state.pressure, state.temperature
    wn = lines.wavenumber
    centre = shifted_wavenumber(wn, lines.delta_air, p)
    s_t = intensity_at(lines.columns, t)
    if options.radiation_term:
        s_t = s_t / (wn * np.tanh(SECOND_RADIATION_CONSTANT_CM_K * wn / (2.0 * t)))
    mass = np.empty(wn.size)
    for m in np.unique(lines.molecule):
        sel = lines.molecule == m
        if molecule_name(int(m)) not in DETAILED_MOLECULES:
            raise SettingsError(
                f"no molecular mass for {molecule_name(int(m))}; select molecules among "
                f"{', '.join(DETAILED_MOLECULES)} before computing absorption"
            )
        for i in np.unique(lines.isotopologue[sel]):
            mass[sel & (lines.isotopologue == i)] = isotopologue(int(m), int(i)).molar_mass
    alpha = doppler_halfwidth(wn, t, mass)
    gamma = np.asarray(lorentz_halfwidth(lines.gamma_air, lines.gamma_self, lines.n_air, p, t, state.partial_pressure),
                       dtype=float)
    # optical depth at line centre, bounded by the smaller of the Doppler and Lorentz peaks
    # (the Voigt peak never exceeds either)
    peak = np.minimum(math.sqrt(math.log(2) / math.pi) / alpha, 1.0 / (math.pi * np.maximum(gamma, 1e-30)))
    r0 = radiation_term(centre, t) if options.radiation_term else 1.0
    peak_tau = s_t * r0 * peak * column
    s_t = s_t * column
    order = np.argsort(centre, kind="stable")
    chi = (lines.molecule == _CO2) & bool(options.co2_chi)
    ident = ident_offset + np.arange(wn.size, dtype=np.int64)
    return LayerLines(*(np.ascontiguousarray(a[order]) for a in (centre, s_t, alpha, gamma, chi, peak_tau, ident)),
                      temperature=float(t), radiation_term=bool(options.radiation_term))


def optical_depth(lines, wavenumber, *, method="tiered", options=LineShapeOptions(), exact_tau=0.0, tuning=None):
    """Optical depth of a layer's lines at the given wavenumbers.

    Parameters
    ----------
    lines : LayerLines
        From :func:`layer_lines` (with the layer's column); every line within the
        cut-off of the wavenumbers must be included.
    wavenumber : numpy.ndarray
        Sorted wavenumbers [cm-1]; uniform for ``method="multigrid"``.
    method : {"tiered", "multigrid", "direct"}
        Summation method (see the module docstring).
    options : LineShapeOptions
        Cut-off, taper, pedestal subtraction, chi factor; the radiation term is
        taken from ``lines``.
    exact_tau : float
        For ``"tiered"``: lines whose ``peak_optical_depth`` is below this value get
        a smoothed core (0, the default, treats every line exactly).
    tuning : TieredTuning or dict, optional
        For ``"tiered"`` a :class:`TieredTuning`; for ``"multigrid"`` a dict with
        ``ratio`` (4), ``dfac`` (160: the window of grid k reaches dfac x its
        spacing), ``resolve`` (8: a line starts on the coarsest grid whose spacing
        is at most its half-width / resolve) and ``taper_points`` (4: the coarsest
        grid's spacing is at most taper / taper_points).

    Returns
    -------
    numpy.ndarray
        Optical depth [dimensionless] at each wavenumber (non-negative).
    """
    x = np.ascontiguousarray(wavenumber, dtype=float)
    if x.ndim != 1 or x.size < 1:
        raise SettingsError("wavenumber must be a 1-D array of at least one value [cm-1]")
    if x.size > 1 and not np.all(np.diff(x) > 0):
        raise SettingsError("wavenumber must be strictly increasing")
    if method not in METHODS:
        raise SettingsError(f"method must be one of {', '.join(METHODS)}, got {method!r}")
    if len(lines) == 0:
        return np.zeros(x.size)
    chi = np.ascontiguousarray(lines.chi, dtype=np.bool_)
    # no cut-off: every line reaches every point
    full = max(x[-1] - lines.centre[0], lines.centre[-1] - x[0]) + 1.0
    cutoff, chi_cutoff = options.cutoff, options.co2_cutoff if options.co2_chi else options.cutoff
    cutoff_eff = full if cutoff is None else float(cutoff)
    chi_cutoff_eff = full if chi_cutoff is None else float(chi_cutoff)
    taper, chi_taper = (0.0 if c is None else float(options.taper) for c in (cutoff, chi_cutoff))
    sub = np.zeros(len(lines))
    if options.subtract_cutoff and cutoff is not None:
        sub = _k.voigt_per_line(cutoff_eff, lines.doppler_hwhm, lines.lorentz_hwhm)
        if chi_cutoff is not None and np.any(chi):
            chi_sub = _k.voigt_per_line(chi_cutoff_eff, lines.doppler_hwhm, lines.lorentz_hwhm)
            sub = np.where(chi, chi_sub * _chi_scalar(chi_cutoff_eff), sub)
    args = (lines.centre, lines.strength, lines.doppler_hwhm, np.ascontiguousarray(lines.lorentz_hwhm, dtype=float))
    b1, b2, b3 = CHI_PERRIN_HARTMANN_296K
    if method in ("direct", "multigrid"):
        # these take one cut-off: the chi lines, if they have their own, are a second sum
        own = np.any(chi) and chi_cutoff_eff != cutoff_eff
        out = np.zeros(x.size)
        sums = (((~chi, cutoff_eff, taper), (chi, chi_cutoff_eff, chi_taper)) if own
                else ((slice(None), cutoff_eff, taper),))
        for mask, cut, tap in sums:
            part = tuple(np.ascontiguousarray(a[mask]) for a in (*args, sub, chi))
            if part[0].size == 0:
                continue
            if method == "direct":
                out += _k.direct_points(x, *part, cut, tap, b1, b2, b3)
            else:
                out += _multigrid(x, *part, cut, tap, tuning)
    else:
        if isinstance(tuning, dict):
            tuning = TieredTuning(**tuning)
        exact = np.ascontiguousarray(lines.peak_optical_depth >= exact_tau)
        out = tiered_sum(x, *args, sub, chi, exact, None if cutoff is None else cutoff_eff, taper,
                         (b1, b2, b3) if np.any(chi) else None, tuning or TieredTuning(),
                         chi_cutoff=None if chi_cutoff is None else chi_cutoff_eff)
    # interpolation can undershoot below zero where a wing fades out at the edge of a line's
    # reach (about 1e-4 of the local wing value); an optical depth is non-negative
    np.maximum(out, 0.0, out=out)
    if lines.radiation_term:
        out *= radiation_term(x, lines.temperature)
    return out


def _multigrid(x, centre, strength, alpha, gamma, sub, chi_on, cutoff, taper, tuning):
    step = (x[-1] - x[0]) / (x.size - 1) if x.size > 1 else 1.0
    if x.size < 2 or not np.allclose(np.diff(x), step, rtol=1e-6, atol=1e-12):
        raise SettingsError("method 'multigrid' needs a uniform grid (see specforce.absorption.grids.uniform_grid)")
    n = x.size
    b1, b2, b3 = CHI_PERRIN_HARTMANN_296K
    cfg = {"ratio": 4, "dfac": 160.0, "resolve": 8.0, "taper_points": 4.0, **(tuning or {})}
    ratio, dfac, resolve = int(cfg["ratio"]), float(cfg["dfac"]), float(cfg["resolve"])
    width = voigt_halfwidth(alpha, gamma)
    # the coarsest grid must also resolve the taper, or it smears the fall to zero at the cut-off
    top_max = taper / float(cfg["taper_points"]) if taper > 0 else math.inf
    nlev = 1
    while (dfac * step * ratio ** (nlev - 1) / 2.0 < cutoff and (n - 1) // ratio**nlev >= 4
           and step * ratio**nlev <= top_max):
        nlev += 1
    # base grid: the coarsest grid whose spacing still resolves the line (h <= width / resolve)
    base = np.floor(np.log(np.maximum(width / (resolve * step), 1.0)) / np.log(ratio)).astype(np.int64)
    base = np.minimum(base, nlev - 1)
    return _k.multigrid_sum(x[0], step, n, ratio, nlev, dfac, base, centre, strength, alpha, gamma, sub, chi_on,
                             cutoff, taper, b1, b2, b3)


def cross_section(lines, wavenumber, state, *, method="tiered", options=LineShapeOptions(), tuning=None):
    """Absorption cross-section of a set of lines at the given wavenumbers.

    Parameters
    ----------
    lines : LineList
        Lines with at least wavenumber, intensity, lower_energy, gamma_air,
        gamma_self, n_air, delta_air, molecule and isotopologue. Lines that lie
        outside the wavenumbers but within the cut-off must be included.
    wavenumber : numpy.ndarray
        Sorted wavenumbers [cm-1] (uniform for ``method="multigrid"``).
    state : LayerState
        Pressure, temperature and partial pressure of the layer.
    method, options, tuning : as for :func:`optical_depth` (every line exact).

    Returns
    -------
    numpy.ndarray
        Cross-section [cm2 molecule-1] at each wavenumber: the sum over lines of
        S(T) f(nu - nu0) (times the radiation-term ratio). Multiply by a column
        amount [molecule cm-2] for optical depth.
    """
    return optical_depth(layer_lines(lines, state, 1.0, options), wavenumber, method=method, options=options,
                         tuning=tuning)


def _chi_scalar(d):
    b1, b2, b3 = CHI_PERRIN_HARTMANN_296K
    return _k.chi_perrin_hartmann(abs(d), b1, b2, b3)

"""Concentration sweeps: specforce's forcing across concentrations, next to the published formulas.

A sweep changes one of CO2, CH4 or N2O from a reference concentration to a
series of values, holding the other two at background values, for one or more
profiles. Each profile's forcing is computed line by line; several profiles are
combined with weights the user gives (see :func:`concentration_sweep`). The
result sits next to the published formulas of :mod:`specforce.forcing.formulas`, and
:func:`refit_sweep` fits their functional forms to it.

How a profile is brought to a concentration
-------------------------------------------
The AFGL profiles carry vertical structure for CH4 and N2O (they fall off in
the stratosphere). A sweep keeps that shape: it scales the gas's whole profile
so that its value at the surface equals the requested concentration. CO2 is
uniform in the AFGL profiles, so for CO2 this sets the whole column.

Weighting profiles into an approximate global mean
--------------------------------------------------
The global mean forcing is approximated by a weighted mean of profile forcings,
F = sum(w_i F_i) / sum(w_i). Area weights follow from the sine of latitude: the
band |lat| < 30 deg covers sin 30 = 50 % of the Earth's surface, 30-60 deg covers
sin 60 - sin 30 = 36.6 %, and 60-90 deg covers 13.4 % (spherical geometry).
With the AFGL models standing for those bands, and summer and winter sharing
each extratropical band equally, the weights are::

    tropical 0.50, mls 0.183, mlw 0.183, sas 0.067, saw 0.067

(:data:`AREA_WEIGHTS`). This is a coarse stand-in for a global mean: it ignores
clouds, the seasonal cycle within each model and the real latitudes' humidity.
"""

from __future__ import annotations

import time
import warnings
from dataclasses import dataclass, field

import numpy as np

from .formula_choice import FORMULAS, formula_forcing
from .formulas import PREINDUSTRIAL, FormulaRangeWarning
from .refits import fit_logarithmic, fit_square_root
from ..radiation.layers import refine
from .adjustment import adjusted_forcing
from .instantaneous import check_changes_active, forcing_from_results, tropopause_level
from ..radiation.longwave import Settings, compute_longwave_states
from ..errors import FormulaError, SettingsError
from ..molecular.gases import GasTable
from .responses import partial_spectrum
from .scenario import Perturbation

__all__ = ["AREA_WEIGHTS", "SWEPT_GASES", "SweepResult", "concentration_sweep", "parse_sweep_bound", "refit_sweep",
           "with_surface_value",
           "sweep_values"]

#: Area weights of the five seasonal AFGL models for an approximate global mean (see module notes).
AREA_WEIGHTS = {"tropical": 0.5, "mls": 0.183, "mlw": 0.183, "sas": 0.067, "saw": 0.067}

#: Gases a sweep can change, with the unit of their concentrations and its size in mol mol-1
#: (the sweepable gases of the registry, :mod:`specforce.molecular.gases`, read when used).
SWEPT_GASES = GasTable(lambda g: (g.unit, g.unit_size), where=lambda g: g.sweepable)


def sweep_values(gas, start, stop, steps):
    """Concentrations for a sweep: geometric for CO2 (forcing ~ ln C), linear for CH4 and N2O.

    Parameters
    ----------
    gas : {"CO2", "CH4", "N2O"}
    start, stop : float
        First and last concentration [ppm for CO2, ppb otherwise].
    steps : int
        Number of values (at least 2).

    Examples
    --------
    >>> np.round(sweep_values("CO2", 100.0, 1600.0, 5), 9).tolist()
    [100.0, 200.0, 400.0, 800.0, 1600.0]
    """
    gas = _check_gas(gas)
    if steps < 2:
        raise SettingsError(f"a sweep needs at least 2 steps, got {steps}")
    if not 0 < start < stop:
        raise SettingsError(f"sweep of {gas}: need 0 < from < to, got from {start:g} and to {stop:g}")
    if gas == "CO2":
        return np.geomspace(start, stop, steps)
    return np.linspace(start, stop, steps)


def parse_sweep_bound(gas, text, reference):
    """Read a sweep bound: a multiple of the reference (``0.125x``) or an amount (``35ppm``, ``0.3ppm``, ``900ppb``).

    Returns the concentration in the gas's sweep unit (ppm for CO2, ppb for CH4 and N2O).

    Examples
    --------
    >>> parse_sweep_bound("CO2", "16x", 278.0), parse_sweep_bound("CH4", "0.3ppm", 722.0)
    (4448.0, 300.0)
    """
    from .scenario import parse_change

    gas = _check_gas(gas)
    p = parse_change(gas, str(text))
    if p.kind == "scale":
        return float(p.value * reference)
    if p.kind != "set":
        raise SettingsError(f"sweep bound for {gas}: give a factor (0.5x) or an amount (560ppm), not {text!r}")
    return float(f"{p.value / SWEPT_GASES[gas][1]:.12g}")  # drop the rounding of the vmr round trip


def _check_gas(gas):
    g = str(gas).upper()
    if g not in SWEPT_GASES:
        *first, last = SWEPT_GASES
        raise SettingsError(f"a sweep changes {', '.join(first)} or {last}, not {gas!r}")
    return g


@dataclass(frozen=True)
class SweepResult:
    """Forcing against concentration for one gas and one or more profiles.

    Attributes
    ----------
    gas : str
    unit : str
        Unit of ``concentration`` and ``reference`` (ppm for CO2, ppb otherwise).
    concentration : numpy.ndarray
        Swept concentrations.
    reference : float
        Concentration of the base state (forcing zero).
    background : dict
        Concentrations of the three gases in the base state.
    profiles : list of str
    weights : numpy.ndarray
        Normalised profile weights.
    forcing_tropopause, forcing_toa : numpy.ndarray
        Instantaneous forcing, shape (profile, concentration) [W m-2].
    forcing_adjusted : numpy.ndarray or None
        Stratosphere-adjusted tropopause forcing, same shape [W m-2].
    tropopause_pressure : numpy.ndarray
        Per profile [Pa].
    provenance : dict
        Settings (a :class:`specforce.radiation.longwave.Settings`), spectroscopy provenance and run time.
    refits : dict or None
        The refits of the formulas' functional forms (:func:`refit_sweep`), keyed by profile
        and ``"weighted"``.
    comparison_omitted : str or None
        Why the formula comparison and the refits are left out, when the range is not the
        whole longwave spectrum (:func:`specforce.forcing.responses.partial_spectrum`): the formulas
        give the forcing of the whole spectrum, a band-limited forcing is not comparable.
    """

    gas: str
    unit: str
    concentration: np.ndarray
    reference: float
    background: dict
    profiles: list
    weights: np.ndarray
    forcing_tropopause: np.ndarray
    forcing_toa: np.ndarray
    forcing_adjusted: np.ndarray | None
    tropopause_pressure: np.ndarray
    provenance: dict = field(default_factory=dict, repr=False)
    refits: dict | None = None
    comparison_omitted: str | None = None

    @property
    def wavenumber_range(self):
        """The spectral range computed [cm-1]."""
        settings = self.provenance.get("settings")
        return tuple(settings.wavenumber_range) if settings is not None else (float("nan"), float("nan"))

    @property
    def spectroscopy_accuracy(self):
        """The measured accuracy of the built-in lines for the swept gas (none if it came from an imported list)."""
        from ..molecular.builtin import accuracy_statements

        return accuracy_statements([self.gas], self.provenance.get("spectroscopy") or {})

    @property
    def kind(self):
        """Which forcing :attr:`forcing` holds."""
        if self.forcing_adjusted is not None:
            return "stratosphere-adjusted, tropopause, clear-sky longwave"
        return "instantaneous, tropopause, clear-sky longwave"

    @property
    def forcing(self):
        """The forcing compared with the formulas: adjusted when computed, else instantaneous
        at the tropopause; shape (profile, concentration) [W m-2]."""
        return self.forcing_adjusted if self.forcing_adjusted is not None else self.forcing_tropopause

    @property
    def weighted(self):
        """Weighted mean over profiles of :attr:`forcing` [W m-2]."""
        return self.weights @ self.forcing

    def formulas(self, warn=True):
        """Each published formula's forcing at the swept concentrations [W m-2].

        With ``warn=False`` the formulas' range warnings are suppressed. Empty when the
        comparison is left out (:attr:`comparison_omitted`).
        """
        if self.comparison_omitted:
            return {}
        with warnings.catch_warnings():
            if not warn:
                warnings.simplefilter("ignore", FormulaRangeWarning)
            return {name: np.asarray(formula_forcing(name, self.gas, self.concentration, self.reference,
                                                     self.background), dtype=float) for name in FORMULAS}

    def to_dict(self):
        """Concentrations, forcings, each formula's value, refits and provenance, JSON-ready
        (see :func:`specforce.io.sweep_results.sweep_dict`)."""
        from ..io.sweep_results import sweep_dict

        return sweep_dict(self)

    def summary(self):
        """The sweep as a table next to the formulas, with the refits, in text."""
        from ..io.sweep_results import sweep_text

        return sweep_text(self)

    def to_dataset(self):
        """An :class:`xarray.Dataset` with dimensions ``concentration`` and ``profile``
        (see :func:`specforce.io.sweep_results.sweep_dataset`)."""
        from ..io.sweep_results import sweep_dataset

        return sweep_dataset(self)


def with_surface_value(profile, gas, value_vmr):
    """Scale a gas's profile so that its surface value is ``value_vmr`` (shape kept)."""
    current = profile.vmr[gas]
    if current[0] > 0:
        return profile.with_vmr(gas, current * (value_vmr / current[0]))
    return profile.with_vmr(gas, value_vmr)


def concentration_sweep(gas, concentrations, profiles, spectroscopy, settings=Settings(), weights=None,
                        reference=None, background=None, adjusted=False, tropopause=None, progress=None):
    """Forcing of one gas at a series of concentrations, for one or more profiles.

    Parameters
    ----------
    gas : {"CO2", "CH4", "N2O"}
    concentrations : array_like
        Perturbed concentrations [ppm for CO2, ppb for CH4 and N2O].
    profiles : sequence of Profile
        Base profiles (their CO2, CH4 and N2O are reset as described in the module notes).
    spectroscopy : Spectroscopy
    settings : Settings
    weights : sequence of float, optional
        One non-negative weight per profile (normalised here); default equal.
    reference : float, optional
        Base concentration of ``gas``; default :data:`specforce.forcing.formulas.PREINDUSTRIAL`.
    background : dict, optional
        Concentrations of the other gases (``{"CH4": ppb, ...}``); default pre-industrial.
    adjusted : bool
        Also compute the stratosphere-adjusted forcing (about ten times the cost).
    tropopause : float, optional
        Tropopause pressure [Pa]; default each profile's WMO tropopause.
    progress : callable, optional
        Called with the fraction done.

    Returns
    -------
    SweepResult
    """
    gas = _check_gas(gas)
    check_changes_active([Perturbation(gas, "scale", 1.0)], spectroscopy, settings, what="the sweep of")
    unit, scale = SWEPT_GASES[gas]
    conc = np.asarray(concentrations, dtype=float).ravel()
    if conc.size == 0 or np.any(~np.isfinite(conc)) or np.any(conc <= 0):
        raise SettingsError(f"sweep of {gas}: concentrations must be positive numbers [{unit}]")
    profiles = list(profiles)
    if not profiles:
        raise SettingsError("a sweep needs at least one profile")
    w = np.ones(len(profiles)) if weights is None else np.asarray(weights, dtype=float)
    if w.shape != (len(profiles),) or np.any(w < 0) or not w.sum() > 0:
        raise SettingsError(f"give one non-negative weight per profile ({len(profiles)}), not all zero; got {weights!r}")
    w = w / w.sum()
    bg = dict(PREINDUSTRIAL)
    bg.update({k.upper(): float(v) for k, v in (background or {}).items()})
    bg[gas] = float(PREINDUSTRIAL[gas] if reference is None else reference)
    ref = bg[gas]
    if not ref > 0:
        raise SettingsError(f"sweep of {gas}: the reference concentration must be positive, got {ref}")

    t0 = time.perf_counter()
    shape = (len(profiles), conc.size)
    f_trop, f_toa = np.zeros(shape), np.zeros(shape)
    f_adj = np.zeros(shape) if adjusted else None
    p_trop = np.zeros(len(profiles))
    total = len(profiles) * (conc.size + 1)
    done = 0
    base_record = None
    names = [p.name for p in profiles]
    for i, prof in enumerate(profiles):
        base = prof
        for g, (_, s) in SWEPT_GASES.items():
            base = with_surface_value(base, g, bg[g] * s)
        trop = tropopause_level(base, tropopause, settings)  # on the computed (refined) levels
        p_trop[i] = refine(base, settings.refine).pressure[trop]
        # at the reference the perturbed state is the base: forcing zero, nothing to compute
        todo = [j for j, x in enumerate(conc) if x != ref]
        perts = [base.with_vmr(gas, base.vmr[gas] * (conc[j] / ref)) for j in todo]
        # one call: the states share the graded grid and the other gases' optical depths
        first = done
        part = (lambda f, first=first, n=len(todo) + 1: progress((first + f * n) / total)) if progress else None
        results = compute_longwave_states([base, *perts], spectroscopy, settings, keep_levels=(trop,),
                                          progress=part)
        base_record = results[0].provenance
        for j, pert, res_j in zip(todo, perts, results[1:]):
            res = forcing_from_results(results[0], res_j, trop)
            f_trop[i, j], f_toa[i, j] = res.tropopause, res.toa
            if adjusted:
                f_adj[i, j] = adjusted_forcing(res, pert, spectroscopy, settings).forcing_tropopause
        done += conc.size + 1
        if progress:
            progress(done / total)
    record = {
        "settings": base_record["settings"] if base_record else settings,
        "spectroscopy": base_record["spectroscopy"] if base_record else {},
        "specforce_version": base_record["specforce_version"] if base_record else None,
        "profiles": names,
        "weights": w.tolist(),
        "background": bg,
        "seconds": time.perf_counter() - t0,
        "profile_handling": "CO2, CH4 and N2O profiles scaled so that their surface values equal the background",
    }
    partial = [why for why in (partial_spectrum(p, settings.wavenumber_range) for p in profiles) if why]
    omitted = (f"{partial[0]}; the published formulas give the forcing of the whole longwave spectrum, which a "
               f"band-limited forcing is not (use the default range 10-3000 cm-1 to compare and refit)"
               if partial else None)
    return SweepResult(gas, unit, conc, ref, bg, names, w, f_trop, f_toa, f_adj, p_trop, record,
                       comparison_omitted=omitted)


def refit_sweep(sweep, quadratic=False):
    """Fit the standard functional form to a sweep, per profile and for the weighted mean.

    CO2: alpha ln(C/C0) (with ``quadratic``, the Etminan et al. 2016 form);
    CH4 and N2O: a (sqrt(M) - sqrt(M0)). See :mod:`specforce.forcing.formulas`.

    Returns
    -------
    dict of str to FitResult
        Keyed by profile name, and ``"weighted"`` when there are several profiles.

    Raises
    ------
    FormulaError
        For a sweep over a partial range (:attr:`SweepResult.comparison_omitted`).
    """
    if sweep.comparison_omitted:
        raise FormulaError(f"refit of the {sweep.gas} sweep: {sweep.comparison_omitted}")
    def fit(values):
        if sweep.gas == "CO2":
            return fit_logarithmic(sweep.concentration, values, sweep.reference, quadratic=quadratic)
        return fit_square_root(sweep.concentration, values, sweep.reference)

    out = {name: fit(sweep.forcing[i]) for i, name in enumerate(sweep.profiles)}
    if len(sweep.profiles) > 1:
        out["weighted"] = fit(sweep.weighted)
    return out

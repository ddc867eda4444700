"""Least-squares refits of the published formulas' functional forms to specforce's own forcings.

CO2: alpha ln(C/C0) (optionally with the quadratic correction of Etminan et al.
2016, [a (C - C0)^2 + b |C - C0| + alpha] ln(C/C0)); CH4 and N2O:
a (sqrt(M) - sqrt(M0)). Each fit reports its coefficients with standard errors
and a warning when the form does not fit (rms residual above
:data:`POOR_FIT_RELATIVE_RMS` of the rms forcing). The forms and their sources are
in :mod:`specforce.forcing.formulas`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import FormulaError

__all__ = ["FitResult", "POOR_FIT_RELATIVE_RMS", "fit_logarithmic", "fit_square_root", "forcing_per_doubling"]


@dataclass
class FitResult:
    """A least-squares fit of a forcing formula's functional form.

    Attributes
    ----------
    form : str
        The fitted expression, in words.
    coefficients : dict
        Name to value.
    standard_errors : dict
        Name to one-sigma standard error (NaN when there are no spare points).
    residuals : numpy.ndarray
        Data minus fit [W m-2].
    rms_residual, max_residual : float
        [W m-2].
    relative_rms : float
        rms residual / rms of the data.
    warning : str or None
        Set when the residuals show that the form does not fit (see
        :func:`fit_logarithmic`).
    """

    form: str
    coefficients: dict
    standard_errors: dict
    residuals: np.ndarray
    rms_residual: float
    max_residual: float
    relative_rms: float
    warning: str | None = None


#: A fit whose rms residual exceeds this fraction of the rms forcing is flagged:
#: a choice of ours (2 %), about the accuracy the published fits claim for
#: themselves against their line-by-line data.
POOR_FIT_RELATIVE_RMS = 0.02


def _least_squares(columns, names, y, form):
    x = np.column_stack(columns)
    y = np.asarray(y, dtype=float)
    if not np.all(np.isfinite(x)) or not np.all(np.isfinite(y)):
        raise FormulaError(f"fit of {form}: concentrations and forcings must be finite")
    if y.size < len(names):
        raise FormulaError(f"fit of {form}: needs at least {len(names)} points, got {y.size}")
    coef, _, rank, _ = np.linalg.lstsq(x, y, rcond=None)
    if rank < len(names):
        raise FormulaError(f"fit of {form}: the points do not determine {len(names)} coefficients "
                         "(use more distinct concentrations)")
    resid = y - x @ coef
    dof = y.size - len(names)
    if dof > 0:
        s2 = float(resid @ resid) / dof
        cov = s2 * np.linalg.inv(x.T @ x)
        se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    else:
        se = np.full(len(names), np.nan)
    rms = float(np.sqrt(np.mean(resid**2)))
    scale = float(np.sqrt(np.mean(y**2)))
    rel = rms / scale if scale > 0 else 0.0
    warning = None
    if rel > POOR_FIT_RELATIVE_RMS:
        # a run of same-signed residuals means curvature the form cannot follow
        signs = np.sign(resid[np.abs(resid) > 1e-12])
        runs = 1 + int(np.count_nonzero(np.diff(signs))) if signs.size else 0
        warning = (f"the form {form} does not fit: rms residual {rms:.3g} W m-2 is {100 * rel:.1f}% of the rms "
                   f"forcing (threshold {100 * POOR_FIT_RELATIVE_RMS:g}%), with {runs} runs of same-signed "
                   f"residuals over {signs.size} points")
    return FitResult(form, dict(zip(names, map(float, coef))), dict(zip(names, map(float, se))), resid, rms,
                     float(np.max(np.abs(resid))), rel, warning)


def fit_logarithmic(concentration, forcing, reference, quadratic=False):
    """Fit alpha ln(C/C0) (and optionally the Etminan-type correction) to forcings.

    Parameters
    ----------
    concentration : array_like
        C [ppm].
    forcing : array_like
        Forcing relative to ``reference`` [W m-2].
    reference : float
        C0 [ppm].
    quadratic : bool
        Fit [alpha + a (C - C0)^2 + b |C - C0|] ln(C/C0), the form of Etminan et al.
        (2016, Table 1), instead of alpha ln(C/C0) (Myhre et al. 1998).

    Returns
    -------
    FitResult
        Coefficients ``alpha`` [W m-2] (and ``a`` [W m-2 ppm-2], ``b`` [W m-2 ppm-1]).
        ``warning`` is set when the rms residual exceeds
        :data:`POOR_FIT_RELATIVE_RMS` of the rms forcing.

    Examples
    --------
    >>> c = np.array([139.0, 278.0, 556.0, 1112.0])
    >>> round(fit_logarithmic(c, 5.35 * np.log(c / 278.0), 278.0).coefficients["alpha"], 6)
    5.35
    """
    c = np.asarray(concentration, dtype=float)
    if np.any(c <= 0) or reference <= 0:
        raise FormulaError("fit_logarithmic: concentrations and reference must be positive [ppm]")
    lnr = np.log(c / reference)
    if not quadratic:
        return _least_squares([lnr], ["alpha"], forcing, "alpha ln(C/C0)")
    d = c - reference
    return _least_squares([lnr, d**2 * lnr, np.abs(d) * lnr], ["alpha", "a", "b"], forcing,
                          "[alpha + a (C-C0)^2 + b |C-C0|] ln(C/C0)")


def fit_square_root(concentration, forcing, reference):
    """Fit a (sqrt(M) - sqrt(M0)) to forcings, the form for CH4 and N2O (Myhre et al. 1998).

    Parameters
    ----------
    concentration : array_like
        M or N [ppb].
    forcing : array_like
        Forcing relative to ``reference`` [W m-2].
    reference : float
        M0 or N0 [ppb].

    Returns
    -------
    FitResult
        Coefficient ``a`` [W m-2 ppb-1/2].
    """
    m = np.asarray(concentration, dtype=float)
    if np.any(m < 0) or reference < 0:
        raise FormulaError("fit_square_root: concentrations and reference must be non-negative [ppb]")
    return _least_squares([np.sqrt(m) - np.sqrt(reference)], ["a"], forcing, "a (sqrt(M) - sqrt(M0))")


def forcing_per_doubling(concentration, forcing):
    """Local forcing per doubling, ln 2 dF/d ln C [W m-2], by centred differences.

    Constant for an exactly logarithmic dependence; its change with C shows the
    departure from it at low and high concentration.

    Parameters
    ----------
    concentration : array_like
        C, strictly increasing [ppm].
    forcing : array_like
        F(C) [W m-2].

    Examples
    --------
    >>> c = np.array([100.0, 200.0, 400.0, 800.0])
    >>> np.round(forcing_per_doubling(c, 5.35 * np.log(c)), 3).tolist()
    [3.708, 3.708, 3.708, 3.708]
    """
    c = np.asarray(concentration, dtype=float)
    f = np.asarray(forcing, dtype=float)
    if c.size < 2 or np.any(np.diff(c) <= 0) or np.any(c <= 0):
        raise FormulaError("forcing_per_doubling: give at least two positive, strictly increasing concentrations")
    return np.log(2.0) * np.gradient(f, np.log(c))

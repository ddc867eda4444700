"""Published simplified forcing formulas (chosen by name in :mod:`specforce.forcing.formula_choice`; their
refits to specforce's sweeps are in :mod:`specforce.forcing.refits`).

Assessment reports, emission metrics and emulators give the forcing of CO2,
CH4 and N2O as simple expressions of concentration: logarithmic in CO2,
square-root in CH4 and N2O, with overlap terms. This module codes three
generations of them, one function each.

Units throughout: CO2 ``c`` in ppm, CH4 ``m`` and N2O ``n`` in ppb, forcing in
W m-2. A subscript 0 (``c0`` ...) is the reference (pre-industrial) value.

What the formulas give
----------------------
All three are fits to **stratosphere-adjusted** radiative forcing (SARF) at the
tropopause, **global and annual mean, all-sky**. specforce's own results for one
profile are clear-sky and, unless adjusted, instantaneous; they are not the
same quantity (see :data:`COMPARISON_NOTE`).

Outside the concentrations a formula was fitted over, its functions warn with
:class:`FormulaRangeWarning` and still return the formula's value.

References
----------
.. [1] Myhre, G., Highwood, E. J., Shine, K. P. and Stordal, F. (1998), New estimates of
   radiative forcing due to well mixed greenhouse gases, Geophys. Res. Lett. 25(14),
   2715-2718, doi:10.1029/98GL01908; adopted in IPCC TAR WG1 Table 6.2 (Ramaswamy et al. 2001).
.. [2] Etminan, M., Myhre, G., Highwood, E. J. and Shine, K. P. (2016), Radiative forcing of
   carbon dioxide, methane, and nitrous oxide: A significant revision of the methane radiative
   forcing, Geophys. Res. Lett. 43, 12614-12623, doi:10.1002/2016GL071930, Table 1.
.. [3] Meinshausen, M. et al. (2020), The shared socio-economic pathway (SSP) greenhouse gas
   concentrations and their extensions to 2500, Geosci. Model Dev. 13, 3571-3605,
   doi:10.5194/gmd-13-3571-2020, Table 3; used in IPCC AR6 WG1 Chapter 7 and its
   supplementary material 7.SM.1.1 (Smith et al. 2021).
"""

from __future__ import annotations

import warnings

import numpy as np

from ..errors import FormulaError
from ..molecular.gases import GasTable

__all__ = [
    "AR6_ERF_FACTORS",
    "COMPARISON_NOTE",
    "PREINDUSTRIAL",
    "FormulaRangeWarning",
    "ch4_forcing_etminan2016",
    "ch4_forcing_meinshausen2020",
    "ch4_forcing_myhre1998",
    "ch4_n2o_overlap_myhre1998",
    "co2_forcing_etminan2016",
    "co2_forcing_meinshausen2020",
    "co2_forcing_myhre1998",
    "effective_forcing_ar6",
    "n2o_forcing_etminan2016",
    "n2o_forcing_meinshausen2020",
    "n2o_forcing_myhre1998",
]


class FormulaRangeWarning(UserWarning):
    """A formula was evaluated outside the concentrations it was fitted over."""


COMPARISON_NOTE = (
    "The published formulas give stratosphere-adjusted forcing at the tropopause, global and annual "
    "mean, all-sky (clouds included; Etminan 2016 and Meinshausen 2020 also include CH4 shortwave "
    "absorption). specforce gives clear-sky longwave forcing for the profiles used, instantaneous "
    "unless adjusted. Clear-sky CO2 forcing is larger than all-sky (clouds mask part of it), and "
    "instantaneous tropopause forcing exceeds adjusted forcing for CO2, so a clear-sky instantaneous "
    "value above the formula is expected; the adjusted forcing is the closest like-for-like figure."
)

#: AR6 factors converting SARF to effective radiative forcing (ERF): IPCC AR6 WG1
#: Chapter 7 (Forster et al. 2021), section 7.3.2 (recalled from memory; the
#: 1750-2019 ERFs they give, 2.16 / 0.54 / 0.21 W m-2, are reproduced by them in the tests).
AR6_ERF_FACTORS = {"CO2": 1.05, "CH4": 0.86, "N2O": 1.07}

#: Pre-industrial reference concentrations used by the sweeps by default, from the gas
#: registry (:mod:`specforce.molecular.gases`, ``linedata/gases.toml``, read when used):
#: CO2 278 ppm, CH4 722 ppb, N2O 270 ppb (the 1750 values of IPCC AR5 WG1 Chapter 8,
#: Myhre et al. 2013; the AR5 1750-2011 forcings in the tests start from them).
PREINDUSTRIAL = GasTable(lambda g: g.preindustrial, where=lambda g: g.preindustrial is not None)


def _warn_range(name, what, value, lo, hi, source):
    v = np.asarray(value, dtype=float)
    if np.any(v < lo) or np.any(v > hi):
        shown = f"{float(np.min(v)):g}" if np.min(v) == np.max(v) else f"{float(np.min(v)):g}-{float(np.max(v)):g}"
        warnings.warn(
            f"{name}: {what} {shown} is outside the range {lo:g}-{hi:g} "
            f"{source}; the value is the formula's, extrapolated",
            FormulaRangeWarning, stacklevel=3)


def _positive(name, **values):
    for key, v in values.items():
        if np.any(np.asarray(v, dtype=float) <= 0):
            raise FormulaError(f"{name}: {key} must be positive (ppm for CO2, ppb for CH4 and N2O), got {v!r}")


# ------------------------------------------------------------------ Myhre et al. 1998

# The paper gives no validity range. Etminan et al. (2016) note that about 2000 ppm CO2
# was outside the range it considered. specforce warns outside the ranges below, which
# are our own choice (the Etminan 2016 ranges, with CO2 capped at 1000 ppm); say so when quoting.
_MYHRE_RANGE = {"CO2": (180.0, 1000.0), "CH4": (340.0, 3500.0), "N2O": (200.0, 525.0)}
_MYHRE_RANGE_SOURCE = "that specforce checks for Myhre et al. (1998) (the paper states none; our choice)"


def co2_forcing_myhre1998(c, c0=278.0):
    """CO2 forcing of Myhre et al. (1998) [W m-2]: 5.35 ln(C/C0).

    Stratosphere-adjusted, tropopause, global-mean, all-sky forcing.

    Parameters
    ----------
    c : array_like
        CO2 concentration [ppm].
    c0 : float
        Reference CO2 concentration [ppm].

    Notes
    -----
    .. math:: \\Delta F = 5.35 \\ln(C / C_0)

    Table 3 of [1]_; IPCC TAR WG1 Table 6.2. Doubling gives 3.71 W m-2.

    References
    ----------
    .. [1] Myhre et al. (1998), Geophys. Res. Lett. 25, 2715, doi:10.1029/98GL01908.

    Examples
    --------
    >>> round(float(co2_forcing_myhre1998(556.0, 278.0)), 3)
    3.708
    """
    _positive("co2_forcing_myhre1998", c=c, c0=c0)
    _warn_range("co2_forcing_myhre1998", "CO2 [ppm]", c, *_MYHRE_RANGE["CO2"], _MYHRE_RANGE_SOURCE)
    return 5.35 * np.log(np.asarray(c, dtype=float) / c0)


def ch4_n2o_overlap_myhre1998(m, n):
    """CH4-N2O overlap function f(M, N) of Myhre et al. (1998) [W m-2].

    Parameters
    ----------
    m : array_like
        CH4 [ppb].
    n : array_like
        N2O [ppb].

    Notes
    -----
    .. math:: f(M, N) = 0.47 \\ln[1 + 2.01\\times10^{-5} (MN)^{0.75} + 5.31\\times10^{-15} M (MN)^{1.52}]

    Table 3 of Myhre et al. (1998); IPCC TAR WG1 Table 6.2.
    """
    m = np.asarray(m, dtype=float)
    n = np.asarray(n, dtype=float)
    mn = m * n
    return 0.47 * np.log(1.0 + 2.01e-5 * mn**0.75 + 5.31e-15 * m * mn**1.52)


def ch4_forcing_myhre1998(m, m0=722.0, n_overlap=270.0):
    """CH4 forcing of Myhre et al. (1998) [W m-2], with the CH4-N2O overlap.

    Stratosphere-adjusted, tropopause, global-mean, all-sky, longwave only.

    Parameters
    ----------
    m : array_like
        CH4 concentration [ppb].
    m0 : float
        Reference CH4 [ppb].
    n_overlap : float
        N2O concentration used in the overlap term [ppb]. The TAR writes the
        reference N0; IPCC AR5 (its 1750-2011 CH4 forcing of 0.48 W m-2) used the
        N2O of the perturbed year, 324 ppb for 2011.

    Notes
    -----
    .. math:: \\Delta F = 0.036 (\\sqrt{M} - \\sqrt{M_0}) - [f(M, N) - f(M_0, N)]

    with f from :func:`ch4_n2o_overlap_myhre1998`. Table 3 of Myhre et al. (1998).

    Examples
    --------
    >>> round(float(ch4_forcing_myhre1998(1803.0, 722.0, 324.0)), 2)
    0.48
    """
    _positive("ch4_forcing_myhre1998", m=m, m0=m0, n_overlap=n_overlap)
    _warn_range("ch4_forcing_myhre1998", "CH4 [ppb]", m, *_MYHRE_RANGE["CH4"], _MYHRE_RANGE_SOURCE)
    m = np.asarray(m, dtype=float)
    return 0.036 * (np.sqrt(m) - np.sqrt(m0)) - (
        ch4_n2o_overlap_myhre1998(m, n_overlap) - ch4_n2o_overlap_myhre1998(m0, n_overlap))


def n2o_forcing_myhre1998(n, n0=270.0, m_overlap=722.0):
    """N2O forcing of Myhre et al. (1998) [W m-2], with the CH4-N2O overlap.

    Stratosphere-adjusted, tropopause, global-mean, all-sky.

    Parameters
    ----------
    n : array_like
        N2O concentration [ppb].
    n0 : float
        Reference N2O [ppb].
    m_overlap : float
        CH4 used in the overlap term [ppb] (TAR: the reference M0; AR5: the
        perturbed year's value, 1803 ppb for 2011).

    Notes
    -----
    .. math:: \\Delta F = 0.12 (\\sqrt{N} - \\sqrt{N_0}) - [f(M, N) - f(M, N_0)]

    Table 3 of Myhre et al. (1998).
    """
    _positive("n2o_forcing_myhre1998", n=n, n0=n0, m_overlap=m_overlap)
    _warn_range("n2o_forcing_myhre1998", "N2O [ppb]", n, *_MYHRE_RANGE["N2O"], _MYHRE_RANGE_SOURCE)
    n = np.asarray(n, dtype=float)
    return 0.12 * (np.sqrt(n) - np.sqrt(n0)) - (
        ch4_n2o_overlap_myhre1998(m_overlap, n) - ch4_n2o_overlap_myhre1998(m_overlap, n0))


# ------------------------------------------------------------------ Etminan et al. 2016

_ETMINAN_SOURCE = "over which Etminan et al. (2016, Table 1) fitted the expression"


def co2_forcing_etminan2016(c, c0=278.0, n_mean=270.0):
    """CO2 forcing of Etminan et al. (2016) [W m-2], with the CO2-N2O overlap.

    Stratosphere-adjusted, tropopause, global-mean, all-sky. Fitted for
    180-2000 ppm.

    Parameters
    ----------
    c : array_like
        CO2 [ppm].
    c0 : float
        Reference CO2 [ppm].
    n_mean : float
        Mean of the reference and perturbed N2O [ppb].

    Notes
    -----
    .. math:: \\Delta F = [a_1 (C - C_0)^2 + b_1 |C - C_0| + c_1 \\bar N + 5.36] \\ln(C / C_0)

    with a1 = -2.4e-7, b1 = 7.2e-4, c1 = -2.1e-4; Table 1 of Etminan et al. (2016).

    Examples
    --------
    >>> round(float(co2_forcing_etminan2016(556.0, 278.0, 270.0)), 2)
    3.8
    """
    _positive("co2_forcing_etminan2016", c=c, c0=c0)
    _warn_range("co2_forcing_etminan2016", "CO2 [ppm]", c, 180.0, 2000.0, _ETMINAN_SOURCE)
    c = np.asarray(c, dtype=float)
    d = c - c0
    return (-2.4e-7 * d**2 + 7.2e-4 * np.abs(d) - 2.1e-4 * n_mean + 5.36) * np.log(c / c0)


def ch4_forcing_etminan2016(m, m0=722.0, n_mean=270.0):
    """CH4 forcing of Etminan et al. (2016) [W m-2], longwave and shortwave.

    Stratosphere-adjusted, tropopause, global-mean, all-sky; includes the
    shortwave absorption of CH4 (a longwave-only calculation should expect
    less). Fitted for 340-3500 ppb.

    Parameters
    ----------
    m : array_like
        CH4 [ppb].
    m0 : float
        Reference CH4 [ppb].
    n_mean : float
        Mean of the reference and perturbed N2O [ppb].

    Notes
    -----
    .. math:: \\Delta F = [a_3 \\bar M + b_3 \\bar N + 0.043] (\\sqrt{M} - \\sqrt{M_0})

    with a3 = -1.3e-6, b3 = -8.2e-6 and M-bar the mean of M and M0; Table 1 of
    Etminan et al. (2016).
    """
    _positive("ch4_forcing_etminan2016", m=m, m0=m0)
    _warn_range("ch4_forcing_etminan2016", "CH4 [ppb]", m, 340.0, 3500.0, _ETMINAN_SOURCE)
    m = np.asarray(m, dtype=float)
    m_mean = 0.5 * (m + m0)
    return (-1.3e-6 * m_mean - 8.2e-6 * n_mean + 0.043) * (np.sqrt(m) - np.sqrt(m0))


def n2o_forcing_etminan2016(n, n0=270.0, c_mean=278.0, m_mean=722.0):
    """N2O forcing of Etminan et al. (2016) [W m-2].

    Stratosphere-adjusted, tropopause, global-mean, all-sky. Fitted for
    200-525 ppb.

    Parameters
    ----------
    n : array_like
        N2O [ppb].
    n0 : float
        Reference N2O [ppb].
    c_mean : float
        Mean of reference and perturbed CO2 [ppm].
    m_mean : float
        Mean of reference and perturbed CH4 [ppb].

    Notes
    -----
    .. math:: \\Delta F = [a_2 \\bar C + b_2 \\bar N + c_2 \\bar M + 0.117] (\\sqrt{N} - \\sqrt{N_0})

    with a2 = -8.0e-6, b2 = 4.2e-6, c2 = -4.9e-6; Table 1 of Etminan et al. (2016).
    """
    _positive("n2o_forcing_etminan2016", n=n, n0=n0)
    _warn_range("n2o_forcing_etminan2016", "N2O [ppb]", n, 200.0, 525.0, _ETMINAN_SOURCE)
    n = np.asarray(n, dtype=float)
    n_mean = 0.5 * (n + n0)
    return (-8.0e-6 * c_mean + 4.2e-6 * n_mean - 4.9e-6 * m_mean + 0.117) * (np.sqrt(n) - np.sqrt(n0))


# ------------------------------------------------------------------ Meinshausen et al. 2020

# Meinshausen et al. (2020) built the expressions to stay well-behaved far outside the
# Etminan range (CO2 alpha is held constant above C_alpha_max and below C0). The ranges
# below are recalled from memory (low confidence) as those the paper names.
_MEINSHAUSEN_RANGE = {"CO2": (180.0, 8000.0), "CH4": (340.0, 3500.0), "N2O": (200.0, 2000.0)}
_MEINSHAUSEN_SOURCE = "named for Meinshausen et al. (2020) (recalled from memory)"
_M20 = {"a1": -2.4785e-7, "b1": 7.5906e-4, "c1": -2.1492e-3, "d1": 5.2488,
        "a2": -3.4197e-4, "b2": 2.5455e-4, "c2": -2.4357e-4, "d2": 0.12173,
        "a3": -8.9603e-5, "b3": -1.2462e-4, "d3": 0.045194,
        "C0": 277.15, "N0": 273.87, "M0": 731.41}


def co2_forcing_meinshausen2020(c, c0=_M20["C0"], n=_M20["N0"]):
    """CO2 forcing of Meinshausen et al. (2020), as used in IPCC AR6 [W m-2].

    Stratosphere-adjusted (SARF), tropopause, global-mean, all-sky. Multiply by
    :data:`AR6_ERF_FACTORS` for AR6 effective forcing.

    Parameters
    ----------
    c : array_like
        CO2 [ppm].
    c0 : float
        Reference CO2 [ppm]; the paper's is 277.15 ppm.
    n : float
        N2O [ppb] (the perturbed state's).

    Notes
    -----
    .. math::
        \\Delta F = (\\alpha' + c_1 \\sqrt{N}) \\ln(C / C_0), \\quad
        \\alpha' = d_1 + a_1 (C - C_0)^2 + b_1 (C - C_0) \\text{ for } C_0 < C < C_{\\alpha,max}

    with alpha' = d1 below C0 and d1 - b1^2/(4 a1) above C_alpha,max = C0 - b1/(2 a1);
    Table 3 of Meinshausen et al. (2020).

    Examples
    --------
    >>> round(float(co2_forcing_meinshausen2020(2 * 277.15)), 3)
    3.746
    """
    _positive("co2_forcing_meinshausen2020", c=c, c0=c0, n=n)
    _warn_range("co2_forcing_meinshausen2020", "CO2 [ppm]", c, *_MEINSHAUSEN_RANGE["CO2"], _MEINSHAUSEN_SOURCE)
    k = _M20
    c = np.asarray(c, dtype=float)
    c_alpha_max = c0 - k["b1"] / (2.0 * k["a1"])
    d = c - c0
    alpha = np.where(c <= c0, k["d1"],
                     np.where(c >= c_alpha_max, k["d1"] - k["b1"] ** 2 / (4.0 * k["a1"]),
                              k["d1"] + k["a1"] * d**2 + k["b1"] * d))
    return (alpha + k["c1"] * np.sqrt(n)) * np.log(c / c0)


def ch4_forcing_meinshausen2020(m, m0=_M20["M0"], n=_M20["N0"]):
    """CH4 forcing of Meinshausen et al. (2020), as used in IPCC AR6 [W m-2].

    SARF, tropopause, global-mean, all-sky, including CH4 shortwave absorption.

    Parameters
    ----------
    m : array_like
        CH4 [ppb].
    m0 : float
        Reference CH4 [ppb]; the paper's is 731.41 ppb.
    n : float
        N2O [ppb] (the perturbed state's).

    Notes
    -----
    .. math:: \\Delta F = (a_3 \\sqrt{M} + b_3 \\sqrt{N} + d_3)(\\sqrt{M} - \\sqrt{M_0})

    Table 3 of Meinshausen et al. (2020).
    """
    _positive("ch4_forcing_meinshausen2020", m=m, m0=m0, n=n)
    _warn_range("ch4_forcing_meinshausen2020", "CH4 [ppb]", m, *_MEINSHAUSEN_RANGE["CH4"], _MEINSHAUSEN_SOURCE)
    k = _M20
    m = np.asarray(m, dtype=float)
    return (k["a3"] * np.sqrt(m) + k["b3"] * np.sqrt(n) + k["d3"]) * (np.sqrt(m) - np.sqrt(m0))


def n2o_forcing_meinshausen2020(n, n0=_M20["N0"], c=_M20["C0"], m=_M20["M0"]):
    """N2O forcing of Meinshausen et al. (2020), as used in IPCC AR6 [W m-2].

    SARF, tropopause, global-mean, all-sky.

    Parameters
    ----------
    n : array_like
        N2O [ppb].
    n0 : float
        Reference N2O [ppb]; the paper's is 273.87 ppb.
    c : float
        CO2 [ppm] (the perturbed state's).
    m : float
        CH4 [ppb] (the perturbed state's).

    Notes
    -----
    .. math:: \\Delta F = (a_2 \\sqrt{C} + b_2 \\sqrt{N} + c_2 \\sqrt{M} + d_2)(\\sqrt{N} - \\sqrt{N_0})

    Table 3 of Meinshausen et al. (2020).
    """
    _positive("n2o_forcing_meinshausen2020", n=n, n0=n0, c=c, m=m)
    _warn_range("n2o_forcing_meinshausen2020", "N2O [ppb]", n, *_MEINSHAUSEN_RANGE["N2O"], _MEINSHAUSEN_SOURCE)
    k = _M20
    n = np.asarray(n, dtype=float)
    return (k["a2"] * np.sqrt(c) + k["b2"] * np.sqrt(n) + k["c2"] * np.sqrt(m) + k["d2"]) * (np.sqrt(n) - np.sqrt(n0))


def effective_forcing_ar6(gas, sarf):
    """AR6 effective radiative forcing from SARF [W m-2]: ``sarf`` times :data:`AR6_ERF_FACTORS`."""
    try:
        return AR6_ERF_FACTORS[gas.upper()] * np.asarray(sarf, dtype=float)
    except KeyError:
        raise FormulaError(f"effective_forcing_ar6: no factor for {gas!r}; known: {', '.join(AR6_ERF_FACTORS)}") from None

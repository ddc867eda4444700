"""Line shapes: Voigt, Lorentz and Doppler profiles, far wings, the radiation term.

All profiles are area-normalised over wavenumber: they are in cm (per cm-1) and
integrate to 1 over an infinite range. Offsets and half-widths are in cm-1.
The Voigt profile is computed from the real part of the Faddeeva function
w(z), evaluated by Weideman's rational approximation (Weideman 1994) with 32
terms where |x| + y < 15, and by the Laplace continued fraction truncated after
three terms elsewhere (as in Humlicek's region I, Humlicek 1982). The pure
Lorentz profile is used where y = sqrt(ln 2) gamma_L / alpha_D > 100, where it
is exact to 5e-5 relative. The compiled kernels live in ``_kernels.py``.

References
----------
Weideman, J. A. C. (1994), Computation of the complex error function, SIAM J.
Numer. Anal. 31(5), 1497-1518, doi:10.1137/0731077.
Humlicek, J. (1982), Optimized computation of the Voigt and complex probability
functions, JQSRT 27(4), 437-444, doi:10.1016/0022-4073(82)90078-4.
"""

from __future__ import annotations

import math

import numpy as np

from . import _kernels as _k
from ..constants import SECOND_RADIATION_CONSTANT_CM_K
from ..errors import SettingsError

__all__ = [
    "voigt_function",
    "voigt_profile",
    "lorentz_profile",
    "doppler_profile",
    "voigt_halfwidth",
    "radiation_term",
    "chi_factor_co2",
    "CHI_PERRIN_HARTMANN_296K",
    "CHI_PERRIN_HARTMANN_COEFFICIENTS",
    "CHI_PERRIN_HARTMANN_RANGE",
    "chi_parameters_co2",
]

#: Coefficients (alpha_i, beta_i, epsilon_i) of the CO2 chi factor's parameters
#: B_i(T) = alpha_i + beta_i exp(-epsilon_i T) [cm, cm, K-1], i = 1, 2, 3, Perrin & Hartmann (1989),
#: fitted to their measurements at 193-296 K (from memory, medium confidence; breakpoints 3, 30
#: and 120 cm-1). An earlier version took the alpha_i alone as the 296 K values: that left the
#: factor flat from 30 to 120 cm-1 (B2 = 0) and about 3.6 times too small at 30 cm-1.
CHI_PERRIN_HARTMANN_COEFFICIENTS = ((0.0888, -0.160, 0.0041), (0.0, 0.0526, 0.00152), (0.0232, 0.0, 0.0))
#: Temperatures of the measurements the fit was made to [K]; outside them the parameters are held at
#: the nearer end (below 143.5 K the fitted B1 would turn negative and chi exceed 1).
CHI_PERRIN_HARTMANN_RANGE = (193.0, 296.0)


def chi_parameters_co2(temperature):
    """Parameters (B1, B2, B3) [cm] of the CO2 chi factor at a temperature.

    Parameters
    ----------
    temperature : float
        [K]; the fit covers 193-296 K (:data:`CHI_PERRIN_HARTMANN_RANGE`), and outside it the
        parameters of the nearer end are used (common practice for a fit; the AFGL mesospheres
        reach 160 K, where the fitted B1 would be less than half its 193 K value).

    Returns
    -------
    tuple of float

    Notes
    -----
    .. math:: B_i(T) = \\alpha_i + \\beta_i e^{-\\epsilon_i T}

    with the coefficients of :data:`CHI_PERRIN_HARTMANN_COEFFICIENTS`.

    References
    ----------
    Perrin, M. Y. and Hartmann, J. M. (1989), JQSRT 42(4), 311-317 (the form and the
    coefficients from memory, medium confidence).
    """
    lo, hi = CHI_PERRIN_HARTMANN_RANGE
    t = min(max(float(temperature), lo), hi)
    return tuple(float(a + b * math.exp(-e * t)) for a, b, e in CHI_PERRIN_HARTMANN_COEFFICIENTS)


#: Parameters (B1, B2, B3) [cm] of the CO2 chi factor at 296 K (:func:`chi_parameters_co2`).
CHI_PERRIN_HARTMANN_296K = chi_parameters_co2(296.0)


def voigt_function(x, y):
    """Voigt function K(x, y) = Re w(x + iy), the real part of the Faddeeva function.

    Parameters
    ----------
    x : array_like
        Reduced offset sqrt(ln2) (nu - nu0) / alpha_D [dimensionless].
    y : array_like
        Reduced Lorentz width sqrt(ln2) gamma_L / alpha_D >= 0 [dimensionless].

    Returns
    -------
    numpy.ndarray
        K(x, y) [dimensionless]; K(0, 0) = 1.

    Notes
    -----
    .. math:: K(x, y) = \\frac{y}{\\pi} \\int \\frac{e^{-t^2}}{(x - t)^2 + y^2} dt

    Weideman (1994), Eq. (38)-(39) with N = 32 inside |x| + y < 15, and the
    continued fraction w ~ (i/sqrt(pi)) (z^2 - 1)/(z (z^2 - 3/2)) outside.
    """
    x, y = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(y, dtype=float))
    if np.any(y < 0):
        raise SettingsError("voigt_function needs y >= 0 (a non-negative Lorentz width)")
    out = _k.faddeeva_real_array(np.ascontiguousarray(x).ravel(), np.ascontiguousarray(y).ravel())
    return out.reshape(x.shape)


def voigt_profile(offset, doppler_hwhm, lorentz_hwhm):
    """Area-normalised Voigt profile.

    Parameters
    ----------
    offset : array_like
        Distance from line centre nu - nu0 [cm-1].
    doppler_hwhm : float
        Doppler half-width at half maximum alpha_D > 0 [cm-1].
    lorentz_hwhm : float
        Lorentz half-width at half maximum gamma_L >= 0 [cm-1].

    Returns
    -------
    numpy.ndarray
        Profile value [cm].

    Notes
    -----
    .. math:: f_V = \\frac{\\sqrt{\\ln 2 / \\pi}}{\\alpha_D} K(x, y), \\quad
              x = \\sqrt{\\ln 2}\\frac{\\nu - \\nu_0}{\\alpha_D}, \\quad
              y = \\sqrt{\\ln 2}\\frac{\\gamma_L}{\\alpha_D}

    e.g. Armstrong (1967), JQSRT 7, 61, Eq. (6).
    """
    if not doppler_hwhm > 0:
        raise SettingsError(f"doppler_hwhm must be > 0 [cm-1], got {doppler_hwhm}")
    if not lorentz_hwhm >= 0:
        raise SettingsError(f"lorentz_hwhm must be >= 0 [cm-1], got {lorentz_hwhm}")
    off = np.asarray(offset, dtype=float)
    out = _k.voigt_array(np.ascontiguousarray(off).ravel(), float(doppler_hwhm), float(lorentz_hwhm))
    return out.reshape(off.shape)


def lorentz_profile(offset, lorentz_hwhm):
    """Area-normalised Lorentz profile gamma / (pi (offset^2 + gamma^2)) [cm].

    Parameters
    ----------
    offset : array_like
        nu - nu0 [cm-1].
    lorentz_hwhm : float
        gamma_L > 0 [cm-1].
    """
    off = np.asarray(offset, dtype=float)
    return lorentz_hwhm / np.pi / (off * off + lorentz_hwhm * lorentz_hwhm)


def doppler_profile(offset, doppler_hwhm):
    """Area-normalised Doppler (Gaussian) profile [cm].

    .. math:: f_D = \\frac{\\sqrt{\\ln 2/\\pi}}{\\alpha_D} e^{-\\ln 2 (\\nu-\\nu_0)^2/\\alpha_D^2}

    Parameters
    ----------
    offset : array_like
        nu - nu0 [cm-1].
    doppler_hwhm : float
        alpha_D > 0 [cm-1].
    """
    off = np.asarray(offset, dtype=float)
    ln2 = np.log(2.0)
    return np.sqrt(ln2 / np.pi) / doppler_hwhm * np.exp(-ln2 * off * off / doppler_hwhm**2)


def voigt_halfwidth(doppler_hwhm, lorentz_hwhm):
    """Approximate Voigt half-width at half maximum [cm-1].

    .. math:: w_V \\approx 0.5346\\,\\gamma_L + \\sqrt{0.2166\\,\\gamma_L^2 + \\alpha_D^2}

    Olivero & Longbothum (1977), JQSRT 17, 233, Eq. (2); accurate to 0.02 %.

    Parameters
    ----------
    doppler_hwhm, lorentz_hwhm : array_like
        alpha_D and gamma_L [cm-1].
    """
    g = np.asarray(lorentz_hwhm, dtype=float)
    return 0.5346 * g + np.sqrt(0.2166 * g * g + np.asarray(doppler_hwhm, dtype=float) ** 2)


def radiation_term(wavenumber, temperature):
    """The radiation-field term nu tanh(c2 nu / 2T) [cm-1].

    The absorption coefficient of a line with the van Vleck-Weisskopf-type
    low-frequency behaviour is k(nu) = S / R(nu0, T) * R(nu, T) * f(nu - nu0),
    with R(nu, T) = nu tanh(hc nu / 2kT); this keeps the line shape symmetric in
    the far infrared, where lines are as wide as their distance from zero
    (Clough, Kneizys & Davies 1989, Atmos. Res. 23, 229-241, Eq. 2).

    Parameters
    ----------
    wavenumber : array_like
        nu [cm-1].
    temperature : float
        T [K].
    """
    nu = np.asarray(wavenumber, dtype=float)
    return nu * np.tanh(SECOND_RADIATION_CONSTANT_CM_K * nu / (2.0 * temperature))


def chi_factor_co2(offset, params=CHI_PERRIN_HARTMANN_296K):
    """Sub-Lorentzian chi factor for the far wings of CO2 lines.

    Parameters
    ----------
    offset : array_like
        nu - nu0 [cm-1].
    params : (float, float, float)
        (B1, B2, B3) [cm]; default the 296 K values of Perrin & Hartmann (1989)
        (:func:`chi_parameters_co2` gives them at any temperature).

    Returns
    -------
    numpy.ndarray
        chi [dimensionless], 1 near the line centre.

    Notes
    -----
    .. math::
        \\chi = 1 \\; (|\\Delta| \\le 3), \\quad
        e^{-B_1(|\\Delta| - 3)} \\; (3 < |\\Delta| \\le 30), \\quad
        e^{-27 B_1 - B_2(|\\Delta| - 30)} \\; (30 < |\\Delta| \\le 120), \\quad
        e^{-27 B_1 - 90 B_2 - B_3(|\\Delta| - 120)} \\; (|\\Delta| > 120)

    Perrin, M. Y. and Hartmann, J. M. (1989), Temperature-dependent measurements
    and modeling of absorption by CO2-N2 mixtures in the far line-wings of the
    4.3 um CO2 band, JQSRT 42(4), 311-317 (functional form and breakpoints from
    memory, medium confidence). The line sums take B1-B3 at each layer's
    temperature (:func:`chi_parameters_co2`).
    """
    d = np.abs(np.asarray(offset, dtype=float))
    b1, b2, b3 = params
    return np.where(
        d <= 3.0,
        1.0,
        np.where(
            d <= 30.0,
            np.exp(-b1 * (d - 3.0)),
            np.where(d <= 120.0, np.exp(-27 * b1 - b2 * (d - 30.0)), np.exp(-27 * b1 - 90 * b2 - b3 * (d - 120.0))),
        ),
    )

"""The published formulas by name: :data:`FORMULAS` and :func:`formula_forcing`, the one entry point
the sweeps use to set a formula's forcing beside specforce's (the formulas themselves are in
:mod:`specforce.forcing.formulas`).
"""

from __future__ import annotations

import numpy as np

from ..errors import FormulaError
from .formulas import (PREINDUSTRIAL, ch4_forcing_etminan2016, ch4_forcing_meinshausen2020, ch4_forcing_myhre1998,
                       co2_forcing_etminan2016, co2_forcing_meinshausen2020, co2_forcing_myhre1998,
                       n2o_forcing_etminan2016, n2o_forcing_meinshausen2020, n2o_forcing_myhre1998)

__all__ = ["FORMULAS", "formula_forcing"]


#: The formulas available to :func:`formula_forcing`, with a one-line description.
FORMULAS = {
    "myhre1998": "Myhre et al. 1998 (IPCC TAR/AR5), SARF, global all-sky",
    "etminan2016": "Etminan et al. 2016, SARF, global all-sky (CH4 includes shortwave)",
    "meinshausen2020": "Meinshausen et al. 2020 (IPCC AR6), SARF, global all-sky (CH4 includes shortwave)",
}


def formula_forcing(formula, gas, value, reference, background=None):
    """Forcing of changing one gas from ``reference`` to ``value`` by a published formula [W m-2].

    The other two gases stay at their ``background`` values, which enter the
    overlap terms. Each formula is evaluated with ``reference`` as its C0/M0/N0
    except Meinshausen et al. (2020), whose coefficients belong to its own
    reference; there the result is F(value) - F(reference).

    Parameters
    ----------
    formula : {"myhre1998", "etminan2016", "meinshausen2020"}
    gas : {"CO2", "CH4", "N2O"}
    value : array_like
        Perturbed concentration [ppm for CO2, ppb for CH4 and N2O].
    reference : float
        Reference concentration, same unit.
    background : dict, optional
        ``{"CO2": ppm, "CH4": ppb, "N2O": ppb}``; default :data:`PREINDUSTRIAL`.

    Examples
    --------
    >>> round(float(formula_forcing("myhre1998", "CO2", 556.0, 278.0)), 3)
    3.708
    """
    gas = gas.upper()
    bg = dict(PREINDUSTRIAL)
    bg.update({k.upper(): float(v) for k, v in (background or {}).items()})
    value = np.asarray(value, dtype=float)
    if formula not in FORMULAS:
        raise FormulaError(f"unknown formula {formula!r}; known: {', '.join(FORMULAS)}")
    if gas not in ("CO2", "CH4", "N2O"):
        raise FormulaError(f"formula_forcing: gas must be CO2, CH4 or N2O, got {gas!r}")
    c, m, n = bg["CO2"], bg["CH4"], bg["N2O"]
    if formula == "myhre1998":
        if gas == "CO2":
            return co2_forcing_myhre1998(value, reference)
        if gas == "CH4":
            return ch4_forcing_myhre1998(value, reference, n)
        return n2o_forcing_myhre1998(value, reference, m)
    if formula == "etminan2016":
        if gas == "CO2":
            return co2_forcing_etminan2016(value, reference, n)
        if gas == "CH4":
            return ch4_forcing_etminan2016(value, reference, n)
        return n2o_forcing_etminan2016(value, reference, c, m)
    if gas == "CO2":
        return co2_forcing_meinshausen2020(value, n=n) - co2_forcing_meinshausen2020(reference, n=n)
    if gas == "CH4":
        return ch4_forcing_meinshausen2020(value, n=n) - ch4_forcing_meinshausen2020(reference, n=n)
    return n2o_forcing_meinshausen2020(value, c=c, m=m) - n2o_forcing_meinshausen2020(reference, c=c, m=m)

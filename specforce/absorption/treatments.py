"""Line treatments: how a line's profile is cut and shaped far from its centre.

A :class:`LineTreatment` is data: a cut-off distance, the width of the taper
before it, whether the profile's value at the cut-off (the "pedestal") is
subtracted, and a far-wing factor (:class:`FarWing` and its kinds). Every line of
a :class:`specforce.absorption.linesum.LayerLines` carries the index of its
treatment in a tuple of treatments; the kernels read the treatments from
:func:`treatment_table`, one row per treatment, and branch on the far-wing kind
code there. Which gas takes which treatment is decided where the layer lines are
built (:mod:`specforce.radiation.column`), not here.

Adding a far-wing factor: one :class:`FarWing` subclass here (its ``code``,
``parameters`` and ``factor``) and one branch in the kernels' ``far_wing``
(:mod:`specforce.absorption._kernels`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import ClassVar

import numpy as np

from ..errors import SettingsError
from .lineshapes import chi_factor_co2, chi_parameters_co2

__all__ = [
    "FarWing",
    "ChiPerrinHartmann",
    "SubLorentzianWater",
    "LineTreatment",
    "treatment_table",
    "DEFAULT_CUTOFF",
    "CO2_CHI_CUTOFF",
    "TABLE_COLUMNS",
]

DEFAULT_CUTOFF = 25.0  # cm-1, common practice
#: Cut-off of CO2 lines that carry the chi factor [cm-1]: 250 cm-1 out the factor is 0.0008 of the
#: Lorentz wing at 296 K (2.4e-6 at 500), and no cut-off at all changes the mid-latitude summer TOA
#: forcing per doubling by at most 0.001 W m-2 from 0.5x to 8x (measured).
CO2_CHI_CUTOFF = 250.0
#: Columns of :func:`treatment_table`: effective cut-off [cm-1], taper [cm-1], far-wing kind code,
#: and up to four far-wing parameters (their units are given by each kind).
TABLE_COLUMNS = ("cutoff", "taper", "kind", "p0", "p1", "p2", "p3")


@dataclass(frozen=True)
class FarWing:
    """The plain Voigt (Lorentz) far wing: no factor.

    Subclasses set ``code`` (the kernels' branch), ``onset`` (the distance from line
    centre inside which their factor is exactly 1 [cm-1]) and ``parameters`` (at
    most four floats, as the kernels read them).
    """

    code: ClassVar[int] = 0

    @property
    def onset(self):
        """Distance from line centre inside which the factor is 1 [cm-1]."""
        return math.inf

    @property
    def parameters(self):
        """The factor's parameters in the order the kernels read them (at most four)."""
        return ()

    def factor(self, offset):
        """The factor [dimensionless] at ``offset`` = nu - nu0 [cm-1]."""
        return np.ones_like(np.asarray(offset, dtype=float))

    def at_temperature(self, temperature):
        """This factor with its parameters at ``temperature`` [K] (itself where they do not depend on it)."""
        return self

    @property
    def layer_specific(self):
        """True for parameters taken at one layer's temperature: kernels built from them serve that layer only."""
        return False


@dataclass(frozen=True)
class ChiPerrinHartmann(FarWing):
    """The sub-Lorentzian chi factor of CO2 lines, Perrin & Hartmann (1989).

    See :func:`specforce.absorption.lineshapes.chi_factor_co2` for the formula and
    its source; breakpoints at 3, 30 and 120 cm-1.

    Attributes
    ----------
    b : (float, float, float) or None
        (B1, B2, B3) [cm]; None (the default) for the temperature-dependent parameters of
        :func:`specforce.absorption.lineshapes.chi_parameters_co2`, which
        :func:`specforce.absorption.linesum.layer_lines` fixes at each layer's temperature
        (:meth:`at_temperature`).
    temperature : float or None
        The temperature ``b`` was taken at [K] (set by :meth:`at_temperature`), None for
        parameters given directly.
    """

    b: tuple | None = None
    temperature: float | None = None
    code: ClassVar[int] = 1

    @property
    def onset(self):
        return 3.0

    @property
    def parameters(self):
        return tuple(float(v) for v in self._fixed())

    def factor(self, offset):
        return chi_factor_co2(offset, tuple(self._fixed()))

    def at_temperature(self, temperature):
        if self.b is not None:
            return self
        return ChiPerrinHartmann(chi_parameters_co2(temperature), float(temperature))

    @property
    def layer_specific(self):
        return self.temperature is not None

    def _fixed(self):
        if self.b is None:
            raise SettingsError("the chi factor's parameters depend on temperature: take at_temperature(T) first")
        return self.b


#: Parameters of :class:`SubLorentzianWater` (onset [cm-1], decay rate [cm]): FROM MEMORY, LOW
#: CONFIDENCE. Claimed source: the sub-Lorentzian far wings of water lines in the line-shape
#: part of Clough, Kneizys & Davies (1989), Atmos. Res. 23, 229-241; the numbers are not read
#: from that paper (nor from any table reachable here) and were not fitted to anything. The
#: onset lies inside the default 25 cm-1 cut-off so that the factor acts on cut lines (0.86 of
#: the Voigt wing at 25 cm-1). Treat the option as a sensitivity switch.
SUB_LORENTZIAN_WATER_PARAMETERS = (10.0, 0.01)


@dataclass(frozen=True)
class SubLorentzianWater(FarWing):
    """An exponential sub-Lorentzian factor for the far wings of water lines (off by default).

    Attributes
    ----------
    onset_distance : float
        Distance from line centre inside which the factor is 1 [cm-1] (also ``onset``).
    rate : float
        Decay rate of the factor beyond the onset [cm].

    Notes
    -----
    The same functional family as the CO2 chi factor (Perrin & Hartmann 1989),
    with one exponential segment:

    .. math:: \\chi_w = 1 \\; (|\\Delta| \\le \\Delta_0), \\quad
              e^{-B (|\\Delta| - \\Delta_0)} \\; (|\\Delta| > \\Delta_0)

    No published water far-wing factor could be reached here (the project's list of
    published values, shared/design/PUBLISHED.md, has none). The default parameters
    (``SUB_LORENTZIAN_WATER_PARAMETERS``) are FROM MEMORY, LOW CONFIDENCE, with the
    claimed source Clough, Kneizys & Davies (1989), Atmos. Res. 23, 229-241; they
    are not validated against any measurement.
    """

    onset_distance: float = SUB_LORENTZIAN_WATER_PARAMETERS[0]
    rate: float = SUB_LORENTZIAN_WATER_PARAMETERS[1]
    code: ClassVar[int] = 2

    def __post_init__(self):
        if not (self.onset_distance >= 0 and self.rate >= 0):
            raise SettingsError(f"SubLorentzianWater needs onset_distance >= 0 [cm-1] and rate >= 0 [cm], "
                                f"got {self.onset_distance} and {self.rate}")

    @property
    def onset(self):
        return float(self.onset_distance)

    @property
    def parameters(self):
        return (float(self.onset_distance), float(self.rate))

    def factor(self, offset):
        d = np.abs(np.asarray(offset, dtype=float))
        return np.where(d <= self.onset_distance, 1.0, np.exp(-self.rate * (d - self.onset_distance)))


@dataclass(frozen=True)
class LineTreatment:
    """How the lines that take it are cut and shaped far from their centre.

    Attributes
    ----------
    cutoff : float or None
        Distance from line centre beyond which a line contributes nothing [cm-1];
        None for no cut-off.
    taper : float
        Width of the smooth (C3) fall to zero before the cut-off [cm-1]. With 0 (a hard
        cut) the fast methods smear each line's step at the cut-off over a few points
        of their coarsest grid; compare hard cuts with the direct method. Unused
        without a cut-off.
    subtract_cutoff : bool
        Subtract each profile's value at the cut-off (pedestal subtraction, for use
        with continua defined that way); needs a cut-off.
    far_wing : FarWing
        The far-wing factor (default none: plain Voigt wings).
    """

    cutoff: float | None = DEFAULT_CUTOFF
    taper: float = 1.0
    subtract_cutoff: bool = False
    far_wing: FarWing = field(default_factory=FarWing)

    def __post_init__(self):
        if self.cutoff is not None and not (self.cutoff > 0 and math.isfinite(self.cutoff)):
            raise SettingsError(f"cutoff must be positive [cm-1] or None, got {self.cutoff}")
        if self.taper < 0 or (self.cutoff is not None and self.taper >= self.cutoff):
            raise SettingsError(f"taper must lie in [0, cutoff) [cm-1], got {self.taper} with cutoff {self.cutoff}")
        if not isinstance(self.far_wing, FarWing):
            raise SettingsError(f"far_wing must be a FarWing, got {self.far_wing!r}")

    @property
    def reach(self):
        """How far a line reaches [cm-1] (inf without a cut-off)."""
        return math.inf if self.cutoff is None else float(self.cutoff)

    def at_temperature(self, temperature):
        """This treatment with its far-wing factor's parameters at ``temperature`` [K]."""
        wing = self.far_wing.at_temperature(temperature)
        return self if wing is self.far_wing else replace(self, far_wing=wing)

    def effective_cutoff(self, full):
        """The cut-off, or ``full`` [cm-1] (a distance that reaches everything) without one."""
        return float(full) if self.cutoff is None else float(self.cutoff)

    def effective_taper(self):
        """The taper [cm-1], 0 without a cut-off."""
        return 0.0 if self.cutoff is None else float(self.taper)


def treatment_table(treatments, full):
    """The table the kernels read: one row per treatment, columns :data:`TABLE_COLUMNS`.

    Parameters
    ----------
    treatments : sequence of LineTreatment
    full : float
        Cut-off given to treatments without one: a distance that reaches every point [cm-1].

    Returns
    -------
    numpy.ndarray
        Shape (treatments, 7), float: cut-off [cm-1], taper [cm-1], far-wing kind code,
        far-wing parameters (unused ones 0).
    """
    out = np.zeros((len(treatments), len(TABLE_COLUMNS)))
    for i, t in enumerate(treatments):
        params = t.far_wing.parameters
        if len(params) > 4:
            raise SettingsError(f"a far-wing factor has at most four parameters, {type(t.far_wing).__name__} "
                                f"has {len(params)}")
        out[i, :3] = (t.effective_cutoff(full), t.effective_taper(), float(t.far_wing.code))
        out[i, 3:3 + len(params)] = params
    return out

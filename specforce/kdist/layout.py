"""The layout of the fast model: spectral bands, g-points per band, and the (p, T, H2O) nodes
its absorption tables are computed at.

A :class:`Layout` is data: the builder (:mod:`specforce.kdist.build`) reads it, and its
digest is part of the key under which built tables are cached, so that a change of any
of its numbers builds new tables.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import asdict, dataclass, replace

import numpy as np

from ..errors import SettingsError
from .cases import CALIBRATION_SETS, PROFILES

__all__ = ["Layout", "DEFAULT_LAYOUT", "REDUCED_LAYOUT", "TABLE_GASES"]

#: Gases the fast model tabulates (each absorbs in its own table; others are not modelled).
TABLE_GASES = ("H2O", "CO2", "O3", "N2O", "CH4")

# Band edges [cm-1]. Chosen so that each gas's forcing band is a band of its own or split
# into several: water's rotation band (10-500) in three; the CO2 15 um band in six, its centre
# (660-680) alone, with the flanks where CO2 and water overlap (500-580, 750-820) apart; the
# atmospheric window (820-980, 1080-1180) apart from the O3 9.6 um band (980-1080); CH4's and
# N2O's 7-8 um bands (1180-1390, N2O's 1250-1300 fundamental inside); water's nu2 band
# (1390-1480, 1480-1800, 1800-2080); N2O's 4.5 um band (2080-2250); CO2's 4.3 um band
# (2250-2390). Our choice, not taken from a published layout.
#
# Within a band the spectral points are cut three times (``splits``): by how deep they emit in
# the reference column, by its column optical depth, and by the column optical depth of the
# band's key gas; in the CO2 band centre also by how far their emission depth rises with CO2
# x8 (``shift_splits``; see :mod:`specforce.kdist.build`).
_EDGES = (10.0, 250.0, 350.0, 500.0, 580.0, 630.0, 660.0, 680.0, 700.0, 750.0, 820.0, 980.0, 1080.0, 1180.0,
          1250.0, 1300.0, 1390.0, 1480.0, 1800.0, 2080.0, 2250.0, 2390.0, 3000.0)
# The cuts of each band: by emission depth, near-surface optical depth and the key gas(es).
# Measured, each on its bands (MLS, tropical, SAW):
# - the CO2 band centre (630-700) emits from the stratosphere, where cooling rates need the
#   emission depth finely cut: 32 parts (then 2 by the rise of the emission depth, the last item);
# - in the window (820-1180) the weak CO2 10 um bands grow into the water continuum and O3 as
#   CO2 rises: 8xCO2 over 820-1180 cm-1 was +13-17 % with (8, 4, 2) and O3 the key gas at
#   980-1080, +1.4-1.9 % with (8, 2, 8) and CO2 the key gas throughout;
# - in the CH4 and N2O bands (1180-1390) water's lines overlap theirs near the surface: CH4
#   surface forcing errors of 7-15 % with 4 near-surface parts, 1-9 % with 8. A second key gas
#   there moved the CH4 and N2O errors by under 1 % (CH4, MLS TOA: 2.5 -> 2.1 %) at twice the
#   g-points; it is kept where both gases have bands (1180-1300);
# - in the 15 um flanks (500-630) N2O's nu2 band lies under CO2's: a fourth cut by N2O's
#   column took N2O's forcing error there (273 -> 327 ppb) from +18-21 % to +10-12 %;
# - CH4's nu3 band (3020 cm-1) reaches into 2390-3000: with water the key gas there, the band's
#   share of a CH4 forcing came out nearly twice line-by-line's (MLS, 1831.5 -> 2500 ppb);
#   CH4 is its key gas.
# - with the fit to line-by-line (:mod:`specforce.kdist.fit`), CH4's and N2O's forcings came out too
#   nearly linear in their amounts (MLS: CH4 808.2 -> 1831.5 ppb -2.5 %, 1831.5 -> 3663 ppb +2.7 %
#   at the top), because two parts by their own column leave strong and weak lines of theirs in
#   one g-point; four parts by CH4's column at 1180-1390 (the second key at 1250-1300) and by
#   N2O's at 500-630 took the largest errors over the six AFGL profiles from 2.8 to 1.5 % (CH4) and
#   2.5 to 2.0 % (N2O) at the top, at 2,955 g-points against 2,144.
# - in the 15 um band's outer flanks (700-820) water's continuum overlaps CO2 near the surface:
#   the tropical CO2 0.5x surface forcing was 3.6 % low (750-820 alone 4.5 %), in-sample for the fit.
#   Eight near-surface parts there, with the fit's coupling and the tropical column with water
#   doubled among its training columns (all three in one build), took it to 1.6 % (the AFGL
#   profiles as given; 3,083 g-points).
# - the heating rates at 1-3 hPa with CO2 raised 4-8x were 0.5 K/day off (in-sample for the fit, of
#   -18 to -20 K/day), in every CO2 band: points that emit from one depth in the reference column
#   rise by different amounts when CO2 rises (a line's core by its amount, a wing by about its
#   square root). In the band centre (630-700) the second cut by CO2's column (CO2 is nearly all
#   the absorber there) became one by how far each point's emission depth rises with CO2 x8
#   (``shift_splits``), the same 64 g-points a band. Unfitted, 630-700 alone, MLS: heating rates
#   within 0.10 against 0.13 K/day, with CO2 x8 within 0.83 against 1.24, and 8xCO2's TOA forcing
#   +3.6 against +5.1 %; fitted, 580-750 alone, in-sample: 0.43 against 0.53 K/day over all
#   states, 8xCO2 at the top 2.4 against 2.8 %. 16 depths x 4 rises did more for the heating rates
#   (0.34 K/day on 580-750; 0.58 against 0.90 on the full calibration set) but the CO2 0.5x and 2x
#   TOA forcings went from 0.80 and 0.34 % to 1.12 and 0.82 % (as given); the same cut in the
#   flanks, in place of near-surface parts, doubled their surface forcing errors.
# Elsewhere (8, 4, 2).
_SPLITS = tuple((32, 1, 1) if lo in (630.0, 660.0, 680.0) else (8, 2, 8) if lo in (820.0, 980.0, 1080.0)
                else (8, 8, 4, 2) if lo == 1180.0 else (8, 8, 2, 4) if lo == 1250.0 else (8, 8, 4) if lo == 1300.0
                else (8, 4, 2, 4) if lo in (500.0, 580.0) else (8, 8, 2) if lo in (700.0, 750.0)
                else (8, 4, 2) for lo in _EDGES[:-1])
# Parts by the rise of the emission depth under ``shift_scale`` (cut right after the emission depth).
_SHIFT_SPLITS = tuple(2 if lo in (630.0, 660.0, 680.0) else 1 for lo in _EDGES[:-1])
# The gas (or two, in turn) whose own column optical depth makes the last cuts of each band:
# the gas whose changes the band carries (CO2 and N2O in the 15 um flanks, CO2 in the centre and
# the 10 um bands, also at 980-1080 where O3 absorbs most, CH4 and N2O at 7-8 um, N2O at 4.5 um,
# CH4 at 2390-3000), water where it is the only absorber of note.
_KEY_GASES = ("H2O", "H2O", "H2O", "CO2+N2O", "CO2+N2O", "CO2", "CO2", "CO2", "CO2", "CO2", "CO2", "CO2", "CO2",
              "CH4+N2O", "N2O+CH4", "CH4", "H2O", "H2O", "H2O", "N2O", "CO2", "CH4")

# Knots of the fitted factors (see :mod:`specforce.kdist.fit`): table pressures 1100, 276, 69,
# 17.4, 4.4 and 1.1 hPa, 0.17 and 0.017 hPa.
_TABLE_PRESSURES = tuple(float(p) for p in np.round(1.1e5 * 10.0 ** (-np.arange(0, 42) / 5.0), 8))
_FIT_PRESSURES = tuple(_TABLE_PRESSURES[i] for i in (0, 3, 6, 9, 12, 15, 19, 24))


@dataclass(frozen=True)
class Layout:
    """Bands, g-points and table nodes of the fast model.

    Attributes
    ----------
    edges : tuple of float
        Band edges [cm-1], increasing; band b spans [edges[b], edges[b+1]).
    splits : tuple
        Largest number of parts of each cut of a band's points (emission depth, near-surface
        optical depth, key gas's column optical depth): one triple for every band, or one
        triple per band. A band has at most their product (times ``shift_splits``) of
        g-points, fewer where its points cannot fill them.
    shift_splits : tuple of int
        Per band, the parts each emission-depth part is cut into by how far a point's emission
        depth rises (in ln p) when the reference column's ``shift_scale`` gas is scaled; 1: no
        such cut; empty: none in any band.
    shift_scale : (str, float)
        The gas and factor of that cut (default CO2 x8, the largest change of the calibration set).
    key_gases : tuple of str
        The key gas of each band, or two joined by "+" (each then cuts in turn).
    pressure : tuple of float
        Table pressures [Pa], decreasing (interpolation is linear in ln p).
    temperature : tuple of float
        Table temperatures [K], increasing (interpolation is linear in 1/T).
    water : tuple of float
        Water-vapour mole fractions [mol mol-1] of the water table, increasing
        (interpolation is linear in the mole fraction, as the self-continuum is).
    average : {"mean", "transmission"}
        How a g-point's cross-section is taken from its points' at a node: their mean
        (exact for thin layers and linear in the amount; the default), or the one whose
        transmittance over the node's layer on the diffusivity path (1.66) is their mean
        transmittance. Measured as above: "transmission" moves the 2xCO2 TOA forcing errors
        to +0.5-0.7 % but the surface forcing's to +4-6 % (the node layers' amounts are not
        the column's), so the mean is the default.
    reference_profile : str
        The bundled profile whose optical depths order the spectral points of each band.
    fit_pressures : tuple of float
        Knots [Pa], decreasing, of the factors that fit each g-point's cross-sections to
        line-by-line fluxes (:mod:`specforce.kdist.fit`); each must be a table pressure. Empty:
        no fit, the tables hold the plain means. The fit shrinks each g-point's own errors and,
        coupled, their sum over a band in part: it needs g-points enough for their errors to cancel. Measured
        on MLS 2xCO2 at the top: with the default layout (64-500 g-points a band) the error is
        -0.12 % (the README has the calibration errors); with the reduced one
        (up to 16 a band, 500-820 cm-1) it went from -2.0 to +4.2 % with each g-point fitted on
        its own, +2.3 % coupled (``fit_coupling``).
    fit_profiles : tuple of str
        The bundled profiles whose states "as given" (:mod:`specforce.kdist.cases`) the fit uses.
    fit_variants : tuple of (str, str)
        Training columns besides those: a bundled profile and a variant of the full calibration
        set (:data:`specforce.kdist.cases.CALIBRATION_SETS`). Default: tropical with its water
        doubled, the wettest state of the set.
    fit_coupling : float
        In 0-1: how much of its errors each g-point gives up, after the fit's first iterations, to
        take its share of its band's summed errors instead (0: each g-point on its own; see
        :func:`specforce.kdist.fit.fit_corrections`).
    reference_scale : tuple of (str, float)
        Factors on the reference profile's amounts while ordering (default none). Measured
        on the 15 um bands (500-820 cm-1, 284 -> 569 ppm CO2, MLS, tropical, SAW): ordered by
        MLS with its CO2 doubled, the TOA forcing came out 1.4-2.2 % low; by MLS as given,
        0.7-1.0 % low.
    """

    edges: tuple = _EDGES
    splits: tuple = _SPLITS
    key_gases: tuple = _KEY_GASES
    shift_splits: tuple = _SHIFT_SPLITS
    shift_scale: tuple = ("CO2", 8.0)
    pressure: tuple = _TABLE_PRESSURES
    temperature: tuple = tuple(float(t) for t in range(160, 361, 20))
    water: tuple = (1e-6, 0.03, 0.06)
    average: str = "mean"
    reference_profile: str = "mls"
    reference_scale: tuple = ()
    fit_pressures: tuple = _FIT_PRESSURES
    fit_profiles: tuple = PROFILES
    fit_variants: tuple = (("tropical", "H2O x2"),)
    fit_coupling: float = 0.5

    def __post_init__(self):
        e = np.asarray(self.edges, dtype=float)
        if e.ndim != 1 or e.size < 2 or not np.all(np.diff(e) > 0) or e[0] <= 0:
            raise SettingsError(f"Layout.edges must be at least two increasing positive wavenumbers [cm-1], "
                                f"got {self.edges}")
        per = self.splits if self.splits and isinstance(self.splits[0], tuple) else (self.splits,) * (e.size - 1)
        if len(self.key_gases) != e.size - 1 or any(g not in TABLE_GASES for k in self.key_gases
                                                    for g in k.split("+")):
            raise SettingsError(f"Layout.key_gases needs one of {', '.join(TABLE_GASES)} (or two joined by '+') "
                                f"per band ({e.size - 1}), got {self.key_gases}")
        if len(per) != e.size - 1 or any(len(t) != 2 + len(k.split("+")) or any(int(n) != n or not 1 <= n <= 64
                                                                              for n in t)
                                         for t, k in zip(per, self.key_gases)):
            raise SettingsError(f"Layout.splits must be whole numbers in 1-64, two and one per key gas, for every "
                                f"band or per band ({e.size - 1}), got {self.splits}")
        if self.shift_splits and (len(self.shift_splits) != e.size - 1 or any(
                int(n) != n or not 1 <= n <= 64 for n in self.shift_splits)):
            raise SettingsError(f"Layout.shift_splits must be empty or one whole number in 1-64 per band "
                                f"({e.size - 1}), got {self.shift_splits}")
        if (len(self.shift_scale) != 2 or self.shift_scale[0] not in TABLE_GASES
                or not isinstance(self.shift_scale[1], (int, float)) or not self.shift_scale[1] > 0
                or self.shift_scale[1] == 1):
            raise SettingsError(f"Layout.shift_scale must be one of {', '.join(TABLE_GASES)} and a positive factor "
                                f"other than 1, got {self.shift_scale}")
        if any(not np.any(np.isclose(p, self.pressure, rtol=1e-9, atol=0.0)) for p in self.fit_pressures) or (
                len(self.fit_pressures) == 1 or not np.all(np.diff(self.fit_pressures) < 0)):
            raise SettingsError(f"Layout.fit_pressures must be none, or at least two decreasing table pressures "
                                f"(Layout.pressure), got {self.fit_pressures}")
        if any(len(c) != 2 or c[1] not in CALIBRATION_SETS["full"] for c in self.fit_variants):
            raise SettingsError(f"Layout.fit_variants must be pairs of a profile and one of "
                                f"{', '.join(CALIBRATION_SETS['full'])}, got {self.fit_variants}")
        if not 0.0 <= self.fit_coupling <= 1.0:
            raise SettingsError(f"Layout.fit_coupling must be in 0-1, got {self.fit_coupling}")
        if self.average not in ("mean", "transmission"):
            raise SettingsError(f"Layout.average must be 'mean' or 'transmission', got {self.average!r}")
        for name, values, order in (("pressure", self.pressure, -1), ("temperature", self.temperature, 1),
                                    ("water", self.water, 1)):
            v = np.asarray(values, dtype=float)
            if v.size < 2 or not np.all(v > 0) or not np.all(order * np.diff(v) > 0):
                raise SettingsError(f"Layout.{name} needs at least two positive values, "
                                    f"{'decreasing' if order < 0 else 'increasing'}, got {values}")

    @property
    def fit_knots(self):
        """ln of ``fit_pressures`` [ln Pa], increasing: the knots :mod:`specforce.kdist.fit` takes."""
        return np.log(np.asarray(self.fit_pressures, dtype=float))[::-1]

    @property
    def nbands(self):
        """Number of bands."""
        return len(self.edges) - 1

    def band_splits(self, band):
        """The cuts of band ``band`` (an index): emission depth, near-surface optical depth, key gas(es)."""
        return self.splits[band] if isinstance(self.splits[0], tuple) else self.splits

    def band_shift_splits(self, band):
        """The parts of band ``band`` (an index) by the rise of the emission depth (1: none)."""
        return int(self.shift_splits[band]) if self.shift_splits else 1

    def covering(self, wavenumber_range):
        """The layout cut to the bands inside ``wavenumber_range`` [cm-1]; an error where the
        range does not fall on band edges (the model has no sub-band resolution)."""
        lo, hi = wavenumber_range
        e = np.asarray(self.edges)
        inside = e[(e >= lo - 1e-9) & (e <= hi + 1e-9)]
        if inside.size < 2 or abs(inside[0] - lo) > 1e-6 or abs(inside[-1] - hi) > 1e-6:
            raise SettingsError(f"the fast model's bands have the edges {', '.join(f'{x:g}' for x in e)} cm-1; "
                                f"the range {lo:g}-{hi:g} cm-1 must start and end on two of them")
        first = int(np.flatnonzero(np.isclose(e, inside[0]))[0])
        n = inside.size - 1
        splits = self.splits[first:first + n] if isinstance(self.splits[0], tuple) else self.splits
        return replace(self, edges=tuple(float(x) for x in inside), key_gases=self.key_gases[first:first + n],
                       splits=splits, shift_splits=self.shift_splits[first:first + n])

    def record(self):
        """The layout as a JSON-ready dict."""
        def plain(v):
            return [plain(x) for x in v] if isinstance(v, (tuple, list)) else v
        return {k: plain(v) for k, v in asdict(self).items()}

    def digest(self):
        """sha256 of :meth:`record` (hex)."""
        return hashlib.sha256(json.dumps(self.record(), sort_keys=True).encode()).hexdigest()


#: The layout of the fast mode: 22 bands over 10-3000 cm-1, 3,083 g-points with the built-in lines.
DEFAULT_LAYOUT = Layout()

_REDUCED_PRESSURES = tuple(float(p) for p in np.round(1.1e5 * 10.0 ** (-np.arange(0, 16) / 2.5), 6))
#: A small layout for tests: 3 bands over 500-820 cm-1, up to 16 g-points each, a coarse table,
#: fitted on the mid-latitude summer profile alone.
REDUCED_LAYOUT = Layout(edges=(500.0, 630.0, 700.0, 820.0), splits=(4, 2, 2), key_gases=("CO2", "CO2", "CO2"),
                        pressure=_REDUCED_PRESSURES, temperature=(160.0, 200.0, 240.0, 280.0, 320.0),
                        water=(1e-6, 0.04), shift_splits=(),
                        fit_pressures=tuple(_REDUCED_PRESSURES[i] for i in (0, 2, 4, 6, 8, 10)),
                        fit_profiles=("mls",), fit_variants=())

"""A column prepared for the longwave pipeline: its layers, and its absorbers window by window.

:class:`Column` refines and layers a profile and checks its gases;
:class:`Absorbers` holds the lines of some of its gases and computes every
layer's optical depth at given wavenumbers (lines, then the continuum), one
spectral window of line parameters at a time so that memory stays bounded.
Used by :mod:`specforce.longwave`, which shares one set of absorbers between
states whose amounts of a gas do not differ.
"""

from __future__ import annotations

import numpy as np

from .absorption import LayerLines, LayerState, layer_lines, optical_depth
from .atmosphere import layers, refine
from .continuum import continuum_optical_depth
from .errors import SettingsError

__all__ = ["Column", "Absorbers", "WINDOW_LINES"]

# Lines per window of layer line parameters: bounds memory (layers x lines x about 60 bytes).
WINDOW_LINES = 100_000


class Column:
    """A profile prepared for the pipeline: refined, layered, with its active gases."""

    def __init__(self, profile, spectroscopy, settings):
        if settings.refine > 1:
            profile = refine(profile, settings.refine)
        self.profile = profile
        self.layers = layers(profile)
        gases = list(settings.gases if settings.gases is not None else spectroscopy.gases)
        unknown = [g for g in gases if g not in spectroscopy.lines and g != "H2O"]
        missing = [g for g in gases if g not in profile.vmr]
        if missing:
            raise SettingsError(f"profile '{profile.name}' has no mixing ratio for {', '.join(missing)}")
        if unknown:
            raise SettingsError(f"no line data for {', '.join(unknown)}; the spectroscopy has "
                                f"{', '.join(spectroscopy.gases) or 'none'}")
        self.gases = gases
        self.continuum = settings.continuum and "H2O" in gases and "H2O" in self.layers.vmr

    def same_air(self, other):
        """True if both columns have the same levels and temperatures (so only gases may differ)."""
        a, b = self.profile, other.profile
        return (a.nlevels == b.nlevels and np.array_equal(a.pressure, b.pressure)
                and np.array_equal(a.temperature, b.temperature) and self.gases == other.gases)

    def same_gas(self, other, gas):
        """True if ``gas`` has the same amounts in both columns."""
        return np.array_equal(self.layers.vmr[gas], other.layers.vmr[gas]) and np.array_equal(
            self.layers.column[gas], other.layers.column[gas])


class Absorbers:
    """The lines of some gases of a column and their optical depths on a grid.

    Layer line parameters (about 60 bytes per line and layer) are computed for one
    spectral window at a time, holding at most about ``WINDOW_LINES`` lines, so
    that memory stays bounded however long the line list.
    """

    def __init__(self, column, spectroscopy, gases, settings, continuum):
        self.layers = column.layers
        self.options = options = settings.line_shape()
        lo, hi = settings.wavenumber_range
        reach = options.reach + 1.0
        self.per_gas, offset = [], 0
        for g in column.gases:  # offsets follow the column's gas order, the same in every column
            ll = spectroscopy.lines.get(g)
            if ll is None or len(ll) == 0:
                continue
            ll = ll.window(lo - reach, hi + reach)
            if g in gases and len(ll):
                self.per_gas.append((g, ll, offset))
            offset += len(ll)
        self.continuum = continuum
        self._cached = None

    @property
    def empty(self):
        """True if these absorbers have no lines and no continuum."""
        return not self.continuum and not self.per_gas

    def count(self, lower, upper):
        """Number of lines with lower <= wavenumber <= upper [cm-1]."""
        return sum(int(np.searchsorted(ll.wavenumber, upper, side="right") - np.searchsorted(ll.wavenumber, lower))
                   for _, ll, _ in self.per_gas)

    def sets(self, lower, upper):
        """Every layer's :class:`LayerLines` of the lines with lower <= wavenumber <= upper [cm-1]."""
        if self._cached is not None and self._cached[0] <= lower and upper <= self._cached[1]:
            return [ls.window(lower - 1.0, upper + 1.0) for ls in self._cached[2]]
        if self.count(-np.inf, np.inf) <= WINDOW_LINES:
            lower, stop = -np.inf, np.inf  # all lines in one window
        else:
            # extend the window ahead while it holds few lines, so that marching callers reuse it
            stop, step = upper, 25.0
            while self.count(lower, stop + step) <= WINDOW_LINES and stop < 1e5:
                stop += step
                step *= 2.0
        lay, opts = self.layers, self.options
        parts_per_gas = [(g, ll.window(lower, stop), off) for g, ll, off in self.per_gas]
        out = []
        for i in range(lay.nlayers):
            parts = []
            for g, ll, off in parts_per_gas:
                if len(ll) == 0:
                    continue
                pp = lay.vmr[g][i] * lay.pressure[i]
                state = LayerState(float(lay.pressure[i]), float(lay.temperature[i]), float(pp))
                first = int(np.searchsorted(self._wavenumbers(g), lower))
                parts.append(layer_lines(ll, state, float(lay.column[g][i]), opts, ident_offset=off + first))
            out.append(LayerLines.merge(parts, float(lay.temperature[i]), opts.radiation_term))
        self._cached = (lower, stop, out)
        return [ls.window(lower - 1.0, upper + 1.0) for ls in out]

    def _wavenumbers(self, gas):
        return next(ll.wavenumber for g, ll, _ in self.per_gas if g == gas)

    def significant(self, found, resolve_tau):
        """Add the lines significant in some layer to ``found`` (a SignificantLines), window by window."""
        lo = min(float(ll.wavenumber[0]) for _, ll, _ in self.per_gas)
        hi = max(float(ll.wavenumber[-1]) for _, ll, _ in self.per_gas)
        for a, b in _chunks(lo, hi + 1e-6, self.count, WINDOW_LINES):
            found.add(self.sets(a, b), resolve_tau)

    def optical_depths(self, x, method, exact_tau):
        """Optical depth of every layer at the points ``x``, shape (layers, points)."""
        lay, opts = self.layers, self.options
        reach = opts.reach + 1.0
        tau = np.zeros((lay.nlayers, x.size))
        if self.per_gas:
            for i, ls in enumerate(self.sets(x[0] - reach, x[-1] + reach)):
                tau[i] = optical_depth(ls, x, method=method, options=opts, exact_tau=exact_tau)
        if self.continuum:
            for i in range(lay.nlayers):
                tau[i] += continuum_optical_depth(x, lay.pressure[i], lay.temperature[i], lay.vmr["H2O"][i],
                                                  lay.column["H2O"][i])
        return tau


def _chunks(lower, upper, count, max_lines):
    """Consecutive windows tiling [lower, upper) that hold about ``max_lines`` lines each [cm-1]."""
    out, a = [], lower
    while a < upper:
        step = upper - a
        while step > 1.0 and count(a, a + step) > max_lines:
            step /= 2.0
        b = min(upper, a + step)
        out.append((a, b))
        a = b
    return out

"""A column prepared for the longwave pipeline: its layers, and its absorbers window by window.

:class:`Column` refines and layers a profile and checks its gases;
:class:`Absorbers` holds the lines of some of its gases and computes every
layer's optical depth at given wavenumbers (lines, then the continuum), one
spectral window of line parameters at a time so that memory stays bounded.
Used by :mod:`specforce.radiation.longwave`, which shares one set of absorbers between
states whose amounts of a gas do not differ.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ..absorption.linesum import LayerLines, LayerState, layer_lines, optical_depth
from .atmosphere import check_layer_count
from .layers import layers, refine
from ..absorption.continuum import ROBERTS_RANGE, continuum_optical_depth
from ..errors import SettingsError

__all__ = ["Column", "Absorbers", "WINDOW_LINES"]

# Lines per window of layer line parameters: bounds memory (layers x lines x about 60 bytes).
WINDOW_LINES = 100_000


class Column:
    """A profile prepared for the pipeline: refined, layered, with its active gases."""

    def __init__(self, profile, spectroscopy, settings):
        check_layer_count(profile, settings.refine)  # before any line sum: memory grows with the layers
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

    Each gas's lines take the settings' line treatment (:meth:`Settings.line_shape`;
    CO2's chi-factor wings are one option of it). With a continuum table from
    the user (``spectroscopy.continuum``, see :class:`specforce.absorption.continuum.ContinuumTable`)
    and the continuum switched on, the table's optical depth replaces or adds to the
    window continuum, and the water lines take the line treatment the table assumes
    (its cut-off and pedestal subtraction).
    """

    def __init__(self, column, spectroscopy, gases, settings, continuum):
        self.layers = column.layers
        self.options = options = settings.line_shape()
        self.table = table = getattr(spectroscopy, "continuum", None) if column.continuum else None
        self.gas_options = {}
        if table is not None:
            water = replace(options, cutoff=table.line_cutoff, subtract_cutoff=table.pedestal_subtracted,
                            taper=min(options.taper, table.line_cutoff / 2), co2_chi=False)
            if water != options:
                self.gas_options["H2O"] = water
        lo, hi = settings.wavenumber_range
        reach = self.reach
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
    def reach(self):
        """How far any of these lines reaches, plus a margin [cm-1]."""
        return max([self.options.reach] + [o.reach for o in self.gas_options.values()]) + 1.0

    def _options(self, gas):
        return self.gas_options.get(gas, self.options)

    @property
    def empty(self):
        """True if these absorbers have no lines and no continuum."""
        return not self.continuum and not self.per_gas

    def count(self, lower, upper):
        """Number of lines with lower <= wavenumber <= upper [cm-1]."""
        return sum(int(np.searchsorted(ll.wavenumber, upper, side="right") - np.searchsorted(ll.wavenumber, lower))
                   for _, ll, _ in self.per_gas)

    def sets(self, lower, upper):
        """Every layer's :class:`LayerLines` of the lines with lower <= wavenumber <= upper [cm-1]
        (all gases in one set per layer)."""
        groups = self._group_sets(lower, upper)
        if len(groups) == 1:
            return next(iter(groups.values()))
        lay = self.layers
        return [LayerLines.merge([g[i] for g in groups.values()], float(lay.temperature[i]),
                                 self.options.radiation_term) for i in range(lay.nlayers)]

    def _group_sets(self, lower, upper):
        """{line-shape options: every layer's LayerLines of the gases with those options}."""
        if self._cached is not None and self._cached[0] <= lower and upper <= self._cached[1]:
            return {o: [ls.window(lower - 1.0, upper + 1.0) for ls in sets] for o, sets in self._cached[2].items()}
        if self.count(-np.inf, np.inf) <= WINDOW_LINES:
            lower, stop = -np.inf, np.inf  # all lines in one window
        else:
            # extend the window ahead while it holds few lines, so that marching callers reuse it
            stop, step = upper, 25.0
            while self.count(lower, stop + step) <= WINDOW_LINES and stop < 1e5:
                stop += step
                step *= 2.0
        lay = self.layers
        parts_per_gas = [(g, ll.window(lower, stop), off) for g, ll, off in self.per_gas]
        groups = {}
        for g, _, _ in parts_per_gas:
            groups.setdefault(self._options(g), [])
        if not groups:
            groups[self.options] = []
        for opts, out in groups.items():
            for i in range(lay.nlayers):
                parts = []
                for g, ll, off in parts_per_gas:
                    if len(ll) == 0 or self._options(g) != opts:
                        continue
                    pp = lay.vmr[g][i] * lay.pressure[i]
                    state = LayerState(float(lay.pressure[i]), float(lay.temperature[i]), float(pp))
                    first = int(np.searchsorted(self._wavenumbers(g), lower))
                    parts.append(layer_lines(ll, state, float(lay.column[g][i]), opts, ident_offset=off + first))
                out.append(LayerLines.merge(parts, float(lay.temperature[i]), opts.radiation_term))
        self._cached = (lower, stop, groups)
        return {o: [ls.window(lower - 1.0, upper + 1.0) for ls in sets] for o, sets in groups.items()}

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
        lay = self.layers
        reach = self.reach
        tau = np.zeros((lay.nlayers, x.size))
        if self.per_gas:
            for opts, sets in self._group_sets(x[0] - reach, x[-1] + reach).items():
                for i, ls in enumerate(sets):
                    tau[i] += optical_depth(ls, x, method=method, options=opts, exact_tau=exact_tau)
        if self.continuum:
            table = self.table
            for i in range(lay.nlayers):
                args = (x, lay.pressure[i], lay.temperature[i], lay.vmr["H2O"][i], lay.column["H2O"][i])
                if table is None or not table.replaces_window:
                    tau[i] += continuum_optical_depth(*args)
                if table is not None:
                    tau[i] += table.optical_depth(*args)
        return tau

    def continuum_steps(self):
        """Wavenumbers where the continuum jumps (the window fit's edges, a table's ends) [cm-1]."""
        if not self.continuum:
            return ()
        steps = () if self.table is not None and self.table.replaces_window else tuple(ROBERTS_RANGE)
        return steps + (self.table.coverage if self.table is not None else ())


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

"""A column prepared for the longwave pipeline: its layers, and its absorbers window by window.

:class:`Column` refines and layers a profile and checks its gases;
:class:`Absorbers` holds the lines of some of its gases and computes every
layer's optical depth at given wavenumbers (lines, then the continuum), one
spectral window of line parameters at a time so that memory stays bounded.
Used by :mod:`specforce.radiation.longwave`, which shares one set of absorbers between
states whose amounts of a gas do not differ.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from ..absorption.linesum import LayerLines, LayerState, TieredTuning, distant_wings, layer_lines, optical_depth
from ..absorption.treatments import (CO2_CHI_CUTOFF, DEFAULT_CUTOFF, ChiPerrinHartmann, FarWing, LineTreatment,
                                     SubLorentzianWater)
from .atmosphere import check_layer_count
from .layers import layers, refine
from .workers import run_tasks
from ..absorption.continuum import ROBERTS_RANGE, continuum_optical_depth
from ..errors import InternalError, SettingsError
from ..molecular.lines import LineList

__all__ = ["Column", "Absorbers", "GasTreatments", "H2O_FAR_WINGS", "WINDOW_LINES"]

#: The far wings water lines can take (``Settings.h2o_far_wing``): plain Voigt ("lorentz") or the
#: exponential sub-Lorentzian factor of :class:`specforce.absorption.treatments.SubLorentzianWater`.
H2O_FAR_WINGS = ("lorentz", "sub-lorentzian")


@dataclass(frozen=True)
class GasTreatments:
    """Which line treatment each gas's lines take: the one place that maps gases to treatments.

    Attributes
    ----------
    cutoff : float or None
        Cut-off of every gas's lines but CO2's with the chi factor [cm-1]; None for none.
    taper : float
        Width of the fall to zero before each cut-off [cm-1].
    subtract_cutoff : bool
        Subtract each profile's value at its cut-off (pedestal subtraction).
    radiation_term : bool
        Include the nu tanh(c2 nu / 2T) radiation term.
    co2_chi : bool
        CO2 lines take the chi factor of Perrin & Hartmann (1989) and ``co2_cutoff``.
    co2_cutoff : float or None
        Cut-off of the CO2 lines when ``co2_chi`` is on [cm-1]; None for none.
    h2o_far_wing : {"lorentz", "sub-lorentzian"}
        The far wings of the water lines (see :data:`H2O_FAR_WINGS`); they keep ``cutoff``.
    """

    cutoff: float | None = DEFAULT_CUTOFF
    taper: float = 1.0
    subtract_cutoff: bool = False
    radiation_term: bool = True
    co2_chi: bool = False
    co2_cutoff: float | None = CO2_CHI_CUTOFF
    h2o_far_wing: str = "lorentz"

    def __post_init__(self):
        if self.h2o_far_wing not in H2O_FAR_WINGS:
            raise SettingsError(f"h2o_far_wing must be one of {', '.join(map(repr, H2O_FAR_WINGS))}, "
                                f"got {self.h2o_far_wing!r}")
        self.treatments()  # validates cut-offs and taper

    def _default(self):
        return LineTreatment(self.cutoff, self.taper, self.subtract_cutoff, FarWing())

    def treatments(self):
        """The treatments in use, the default one first (a tuple of LineTreatment)."""
        out = [self._default()]
        if self.co2_chi:
            out.append(LineTreatment(self.co2_cutoff, self.taper, self.subtract_cutoff, ChiPerrinHartmann()))
        if self.h2o_far_wing == "sub-lorentzian":
            out.append(LineTreatment(self.cutoff, self.taper, self.subtract_cutoff, SubLorentzianWater()))
        return tuple(out)

    def treatment(self, gas):
        """The :class:`LineTreatment` of the lines of ``gas`` (a formula such as "CO2")."""
        if gas == "CO2" and self.co2_chi:
            return LineTreatment(self.co2_cutoff, self.taper, self.subtract_cutoff, ChiPerrinHartmann())
        if gas == "H2O" and self.h2o_far_wing == "sub-lorentzian":
            return LineTreatment(self.cutoff, self.taper, self.subtract_cutoff, SubLorentzianWater())
        return self._default()

    def index(self, gas):
        """Index of the treatment of ``gas`` in :meth:`treatments`."""
        return self.treatments().index(self.treatment(gas))

    @property
    def reach(self):
        """How far a line reaches [cm-1] (inf without a cut-off)."""
        return float(max(t.reach for t in self.treatments()))

# Lines per window of layer line parameters: bounds memory (lines x about 60 bytes per layer and thread).
WINDOW_LINES = 100_000
# Lines per window when gathering the significant lines (every layer's parameters at once).
SIGNIFICANCE_LINES = 10_000


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

    Each gas's lines take the line treatment the settings give that gas
    (:meth:`Settings.line_shape`, a :class:`GasTreatments`; CO2's chi-factor wings and
    water's sub-Lorentzian wings are options of it). The lines of the gases that share
    one :class:`GasTreatments` live in one wavenumber-sorted table with a treatment
    index per line, built once here. With a continuum table from the user
    (``spectroscopy.continuum``, see :class:`specforce.absorption.continuum.ContinuumTable`)
    and the continuum switched on, the table's optical depth replaces or adds to the
    window continuum, and the water lines take the line treatment the table assumes
    (its cut-off and pedestal subtraction); they are then summed apart from the others.
    """

    def __init__(self, column, spectroscopy, gases, settings, continuum):
        self.layers = column.layers
        self.options = options = settings.line_shape()
        self.table = table = getattr(spectroscopy, "continuum", None) if column.continuum else None
        self.gas_options = {}
        if table is not None:
            water = replace(options, cutoff=table.line_cutoff, subtract_cutoff=table.pedestal_subtracted,
                            taper=min(options.taper, table.line_cutoff / 2), co2_chi=False, h2o_far_wing="lorentz")
            if water != options:
                self.gas_options["H2O"] = water
        lo, hi = settings.wavenumber_range
        # lines are taken within the longest reach the settings allow; once known, the reach is theirs
        reach = max([options.reach] + [o.reach for o in self.gas_options.values()]) + 1.0
        self.per_gas, offset = [], 0
        for g in column.gases:  # offsets follow the column's gas order, the same in every column
            ll = spectroscopy.lines.get(g)
            if ll is None or len(ll) == 0:
                continue
            ll = ll.window(lo - reach, hi + reach)
            if g in gases and len(ll):
                self.per_gas.append((g, ll, offset))
            offset += len(ll)
        # one wavenumber-sorted table per set of gas treatments, with each line's gas, treatment and identity
        self._tables = {}
        for g, ll, off in self.per_gas:
            self._tables.setdefault(self._options(g), []).append((g, ll, off))
        self._tables = {opts: _line_table(parts, opts) for opts, parts in self._tables.items()}
        # how far the lines reach: by the treatments they take (a set without CO2 lines does not
        # reach as far as CO2's chi-factor wings)
        used = [opts.treatments()[int(t)].reach for opts, tab in self._tables.items() for t in np.unique(tab.treatment)]
        self._reach = max(used) + 1.0 if used else 1.0
        self.continuum = continuum
        self._cached = None
        self._distant = None  # per layer, per set of treatments: DistantWings or None (prepare_distant)
        self._near = None  # how far the lines of a block must reach once the distant wings are known [cm-1]
        self._prepared = None  # the layers whose distant wings are summed

    @property
    def reach(self):
        """How far any of these lines reaches, by the treatments they take, plus a margin [cm-1]."""
        return self._reach

    def _options(self, gas):
        return self.gas_options.get(gas, self.options)

    @property
    def empty(self):
        """True if these absorbers have no lines and no continuum."""
        return not self.continuum and not self.per_gas

    def count(self, lower, upper):
        """Number of lines with lower <= wavenumber <= upper [cm-1]."""
        return sum(int(np.searchsorted(t.lines.wavenumber, upper, side="right")
                       - np.searchsorted(t.lines.wavenumber, lower)) for t in self._tables.values())

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
        """{gas treatments: every layer's LayerLines of the gases with those treatments}."""
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
        tables = self._tables or {self.options: _line_table([], self.options)}
        groups = {}
        for opts, tab in tables.items():
            wn = tab.lines.wavenumber
            rows = slice(int(np.searchsorted(wn, lower)), int(np.searchsorted(wn, stop, side="right")))
            ll = tab.lines.take(rows)
            gas, treatment, ident = tab.gas[rows], tab.treatment[rows], tab.ident[rows]
            treatments = opts.treatments()
            out = groups[opts] = []
            for i in range(lay.nlayers):
                if len(ll) == 0:
                    out.append(LayerLines.merge([], float(lay.temperature[i]), opts.radiation_term))
                    continue
                # each line's column and partial pressure are its gas's
                col = np.array([float(lay.column[g][i]) for g in tab.gases])[gas]
                pp = np.array([float(lay.vmr[g][i] * lay.pressure[i]) for g in tab.gases])[gas]
                state = LayerState(float(lay.pressure[i]), float(lay.temperature[i]))
                out.append(layer_lines(ll, state, col, treatments, treatment, radiation_term=opts.radiation_term,
                                       partial_pressure=pp, ident=ident))
        self._cached = (lower, stop, groups)
        return {o: [ls.window(lower - 1.0, upper + 1.0) for ls in sets] for o, sets in groups.items()}

    def significant(self, found, resolve_tau, pool=None):
        """Add the lines significant in some layer to ``found`` (a SignificantLines), in windows of
        about ``SIGNIFICANCE_LINES`` lines, one task per layer on ``pool`` (a TaskPool; default
        the calling thread)."""
        lo = min(float(t.lines.wavenumber[0]) for t in self._tables.values())
        hi = max(float(t.lines.wavenumber[-1]) for t in self._tables.values())
        for a, b in _chunks(lo, hi + 1e-6, self.count, SIGNIFICANCE_LINES):
            block = self.block(a, b, margin=0.0)
            for sets in run_tasks(pool, lambda i: self._layer_sets(block, i), range(self.layers.nlayers)):
                found.add(sets, resolve_tau)

    def prepare_distant(self, lower, upper, pool=None, layers=None):
        """Sum every layer's distant wings (see :func:`specforce.absorption.linesum.distant_wings`)
        for points in [lower, upper] [cm-1], once: the lines that reach beyond twice R_2 (CO2 with
        the chi factor), in windows of at most ``WINDOW_LINES`` lines added up on one coarse grid,
        one task per layer on ``pool``. From then on a block need only hold the lines within
        :attr:`near_reach` of its points. ``layers``: the layers to sum (default all); only
        they may then be computed by :meth:`layer_optical_depth`."""
        self._distant, self._near, self._prepared = None, None, None
        split = TieredTuning().far_split
        if not self.per_gas or split is None:
            return
        reach, nlay = self.reach, self.layers.nlayers
        if not math.isfinite(reach):  # a treatment without a cut-off: the grid spans every line's distance
            reach = max(max(upper - float(t.lines.wavenumber[0]), float(t.lines.wavenumber[-1]) - lower)
                        for t in self._tables.values()) + 1.0
        fields = [[None] * len(self._tables) for _ in range(nlay)]
        near, far_lines = [], False
        for k, (opts, tab) in enumerate(self._tables.items()):
            treatments = opts.treatments()
            far = [t.cutoff is None or t.cutoff > 2.0 * split for t in treatments]
            used = [int(t) for t in np.unique(tab.treatment)]
            near += [split if far[t] else treatments[t].reach for t in used]
            wn = tab.lines.wavenumber
            rows = np.flatnonzero(np.isin(tab.treatment, [t for t in used if far[t]])
                                  & (wn >= lower - reach - 1.0) & (wn <= upper + reach + 1.0))
            far_lines = far_lines or rows.size > 0
            for c0 in range(0, rows.size, WINDOW_LINES):
                idx = rows[c0:c0 + WINDOW_LINES]
                chunk = _LineTable(tab.lines.take(idx), tab.gases, tab.gas[idx], tab.treatment[idx], tab.ident[idx])

                def layer(i, chunk=chunk, k=k, opts=opts):
                    fields[i][k] = distant_wings(self._table_layer(opts, chunk, i), lower, upper, reach=reach,
                                                 into=fields[i][k])

                run_tasks(pool, layer, range(nlay) if layers is None else layers)
        # whether distant wings exist follows from the lines' treatments, not from the layers summed,
        # so that the lines a block needs (and how a grid is split) are the same for any ``layers``
        if far_lines:
            self._distant, self._near = fields, max(near) + 1.0
            self._prepared = frozenset(range(nlay) if layers is None else (int(i) for i in layers))

    @property
    def near_reach(self):
        """How far the lines of a block must reach its points [cm-1]: :attr:`reach`, or less once
        :meth:`prepare_distant` has summed the distant wings."""
        return self.reach if self._near is None else self._near

    def block(self, lower, upper, margin=2.0):
        """The lines with lower - margin <= wavenumber <= upper + margin [cm-1] (unshifted), for
        :meth:`layer_optical_depth`: a list of (gas treatments, _LineTable) per set of treatments.
        The margin covers the pressure shifts, so that every line whose shifted centre lies in
        [lower, upper] is included."""
        out = []
        for opts, tab in self._tables.items():
            wn = tab.lines.wavenumber
            rows = slice(int(np.searchsorted(wn, lower - margin)), int(np.searchsorted(wn, upper + margin,
                                                                                       side="right")))
            out.append((opts, _LineTable(tab.lines.take(rows), tab.gases, tab.gas[rows], tab.treatment[rows],
                                         tab.ident[rows])))
        return out

    def _layer_sets(self, block, i):
        """Layer ``i``'s LayerLines of each set of treatments in ``block`` (see :meth:`block`)."""
        return [self._table_layer(opts, tab, i) for opts, tab in block]

    def _table_layer(self, opts, tab, i):
        """Layer ``i``'s LayerLines of the lines of ``tab`` (a _LineTable) taking ``opts``."""
        lay = self.layers
        if len(tab.lines) == 0:
            return LayerLines.merge([], float(lay.temperature[i]), opts.radiation_term)
        col = np.array([float(lay.column[g][i]) for g in tab.gases])[tab.gas]
        pp = np.array([float(lay.vmr[g][i] * lay.pressure[i]) for g in tab.gases])[tab.gas]
        state = LayerState(float(lay.pressure[i]), float(lay.temperature[i]))
        return layer_lines(tab.lines, state, col, opts.treatments(), tab.treatment, radiation_term=opts.radiation_term,
                           partial_pressure=pp, ident=tab.ident)

    def layer_optical_depth(self, block, i, x, method, exact_tau, out=None):
        """Optical depth of layer ``i`` at the points ``x`` [cm-1]: the lines of ``block`` (from
        :meth:`block` over [x[0] - near_reach, x[-1] + near_reach]), the distant wings if
        prepared, and the continuum; added to ``out`` if given (and returned). Holds one layer's
        line parameters only, and may run on any thread."""
        reach = self.near_reach
        tau = np.zeros(x.size) if out is None else out
        if self.per_gas:
            distant = self._distant[i] if self._distant is not None and method == "tiered" else None
            if distant is not None and i not in self._prepared:
                raise InternalError(f"layer {i}'s distant wings were not summed (prepare_distant(layers=...))")
            for k, ls in enumerate(self._layer_sets(block, i)):
                tau += optical_depth(ls.window(x[0] - reach - 1.0, x[-1] + reach + 1.0), x, method=method,
                                     exact_tau=exact_tau, distant=None if distant is None else distant[k])
        if self.continuum:
            lay, table = self.layers, self.table
            args = (x, lay.pressure[i], lay.temperature[i], lay.vmr["H2O"][i], lay.column["H2O"][i])
            if table is None or not table.replaces_window:
                tau += continuum_optical_depth(*args)
            if table is not None:
                tau += table.optical_depth(*args)
        return tau

    def layer_depths(self, x, method, exact_tau, pool=None, skip=frozenset()):
        """Every layer's optical depth at the points ``x`` [cm-1], shape (layers, points), by
        :meth:`layer_optical_depth`: one task per layer on ``pool`` (a TaskPool; default the
        calling thread), each writing its own row; the rows of the layers in ``skip`` are left zero."""
        tau = np.zeros((self.layers.nlayers, x.size))
        if self.empty:
            return tau
        block = self.block(x[0] - self.near_reach - 1.0, x[-1] + self.near_reach + 1.0)

        def layer(i):
            self.layer_optical_depth(block, i, x, method, exact_tau, out=tau[i])

        run_tasks(pool, layer, [i for i in range(self.layers.nlayers) if i not in skip])
        return tau

    @staticmethod
    def layer_depths_together(shared, absorbers, x, method, exact_tau, pool=None):
        """For states of the same air, one :class:`Absorbers` each (the gases whose amounts differ
        between them), each state's optical depths at the points ``x`` [cm-1], its own gases' plus
        those of ``shared`` (the gases the states share): one task per layer for ``shared`` and all
        the states, so that the layer's far-wing kernels, which follow its temperature, are computed
        once (:mod:`specforce.absorption._far_spectra` keeps a thread's last few), and the shared
        row is at hand. Each row is the same sum as :meth:`layer_depths` of the state's gases plus
        those of ``shared``. Returns one array (layers, points) per state (no third array holds the
        shared gases' depths); None (and nothing done) unless there are two states, each with
        gases of its own, with the layers of ``shared``."""
        nlay = shared.layers.nlayers
        if len(absorbers) != 2 or any(ab.empty or ab.layers.nlayers != nlay for ab in absorbers):
            return None
        blocks = [ab.block(x[0] - ab.near_reach - 1.0, x[-1] + ab.near_reach + 1.0) for ab in absorbers]
        common = None if shared.empty else shared.block(x[0] - shared.near_reach - 1.0,
                                                        x[-1] + shared.near_reach + 1.0)
        out = [np.zeros((nlay, x.size)) for _ in absorbers]

        def layer(i):
            base = out[-1][i]  # the shared row, in the last state's row until that state's turn
            if common is not None:
                shared.layer_optical_depth(common, i, x, method, exact_tau, out=base)
            for ab, block, tau in zip(absorbers, blocks, out):
                tau[i] = ab.layer_optical_depth(block, i, x, method, exact_tau) + base

        run_tasks(pool, layer, range(nlay))
        return out

    def optical_depths(self, x, method, exact_tau):
        """Optical depth of every layer at the points ``x``, shape (layers, points)."""
        lay = self.layers
        reach = self.reach
        tau = np.zeros((lay.nlayers, x.size))
        if self.per_gas:
            for sets in self._group_sets(x[0] - reach, x[-1] + reach).values():
                for i, ls in enumerate(sets):
                    tau[i] += optical_depth(ls, x, method=method, exact_tau=exact_tau)
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


@dataclass(frozen=True)
class _LineTable:
    """The lines of some gases in one table sorted by wavenumber: each line's gas (an index into
    ``gases``), treatment (an index into the treatments of the gases' GasTreatments) and identity."""

    lines: LineList
    gases: tuple
    gas: np.ndarray
    treatment: np.ndarray
    ident: np.ndarray


def _line_table(parts, options):
    """One :class:`_LineTable` from (gas, LineList, identity offset) parts taking ``options``."""
    if not parts:
        return _LineTable(LineList({"wavenumber": np.zeros(0)}), (), np.zeros(0, np.int64), np.zeros(0, np.int64),
                          np.zeros(0, np.int64))
    keys = [k for k in parts[0][1].columns if all(k in ll.columns for _, ll, _ in parts[1:])]
    cols = {k: np.concatenate([ll.columns[k] for _, ll, _ in parts]) for k in keys}
    gas = np.concatenate([np.full(len(ll), k, np.int64) for k, (_, ll, _) in enumerate(parts)])
    treatment = np.concatenate([np.full(len(ll), options.index(g), np.int64) for g, ll, _ in parts])
    ident = np.concatenate([off + np.arange(len(ll), dtype=np.int64) for _, ll, off in parts])
    order = np.argsort(cols["wavenumber"], kind="stable")
    return _LineTable(LineList({k: v[order] for k, v in cols.items()}, dict(parts[0][1].provenance)),
                      tuple(g for g, _, _ in parts), gas[order], treatment[order], ident[order])

"""Layer optical depths kept from one longwave calculation of a column for the next.

A sequence of calculations that changes only some layers of a column (the
stratospheric adjustment changes temperatures above the tropopause, nothing
below) need not compute the other layers' line sums again. A :class:`DepthStore`
passed to :func:`specforce.radiation.longwave.compute_longwave` keeps the
optical depths of the layers it is told to keep, and a later call on the same
grid, spectroscopy and settings takes them for every layer whose state
(pressures, temperature, amounts) is the same to the bit. It also keeps a thin
sample of the column's optical depths (every k-th grid point, weighted by the
points it stands for), enough for an approximate flux Jacobian.

Results are the same bits as without the store: a kept row is the row the
calculation would compute.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import SettingsError

__all__ = ["DepthStore", "DepthSample"]


@dataclass(frozen=True)
class DepthSample:
    """A thin sample of a column's spectral points.

    Attributes
    ----------
    wavenumber : numpy.ndarray
        Sampled points [cm-1], shape (n,).
    weight : numpy.ndarray
        Spectral width each sampled point stands for [cm-1] (the sum of the quadrature
        weights of the points it represents), shape (n,).
    optical_depth : numpy.ndarray
        Every layer's optical depth at the sampled points [dimensionless], shape (layers, n).
    """

    wavenumber: np.ndarray
    weight: np.ndarray
    optical_depth: np.ndarray


class DepthStore:
    """Optical depths of some layers kept between calculations of one column.

    Rows are taken only for the same grid (its points), the same settings and the same
    :class:`~specforce.molecular.lines.Spectroscopy` object with the same continuum table
    (by identity: a spectroscopy whose line lists were changed in place is not noticed), and
    only for layers whose state is the same to the bit; a store is dropped otherwise.

    Parameters
    ----------
    layers : iterable of int, optional
        The layers (0 at the bottom, after refinement) whose optical depths to keep;
        default none. Keeping a layer costs 8 bytes per grid point (5 MB per layer on the
        default grid).
    sample : int, optional
        About how many spectral points to sample into :attr:`sample` on each calculation;
        0 (default) for no sample.

    Attributes
    ----------
    sample : DepthSample or None
        The sample of the last calculation.
    reused : int
        How many layers the last calculation took from the store.
    """

    def __init__(self, layers=(), sample=0):
        self.keep = frozenset(int(i) for i in layers)
        if sample < 0 or int(sample) != sample:
            raise SettingsError(f"DepthStore: sample must be a whole number >= 0, got {sample!r}")
        self.sample_points = int(sample)
        self.sample = None
        self.reused = 0
        self._context = None  # (grid points, spectroscopy, its continuum table, settings) of the kept rows
        self._states = {}  # layer -> its state when its rows were kept
        self._rows = {}  # (sub-grid index, layer) -> optical depths

    @staticmethod
    def _layer_state(layers, i):
        gases = sorted(layers.column)
        return (float(layers.pressure[i]), float(layers.temperature[i]), float(layers.pressure_bottom[i]),
                float(layers.pressure_top[i]), float(layers.air_column[i]),
                tuple((g, float(layers.column[g][i]), float(layers.vmr[g][i])) for g in gases))

    def begin(self, layers, grid, spectroscopy, settings):
        """Start a calculation of a column with ``layers`` on ``grid``: returns the set of
        layers whose rows the store holds for it (rows of other contexts are dropped)."""
        ctx = self._context
        same = (ctx is not None and ctx[1] is spectroscopy and ctx[2] is getattr(spectroscopy, "continuum", None)
                and ctx[3] == settings and np.array_equal(ctx[0], grid.wavenumber))
        if not same:
            self._context = (grid.wavenumber, spectroscopy, getattr(spectroscopy, "continuum", None), settings)
            self._states, self._rows = {}, {}
        states = {i: self._layer_state(layers, i) for i in self.keep if i < layers.nlayers}
        held = {i for i, state in states.items() if self._states.get(i) == state}
        # a kept layer whose state changed is computed again and kept anew
        self._states = {i: self._states[i] for i in held}
        self._rows = {k: v for k, v in self._rows.items() if k[1] in held}
        self._pending = {i: state for i, state in states.items() if i not in held}
        self._sampled = []
        self._total = len(grid)
        self.reused = len(held)
        return held

    def held(self, part, x, layers):
        """Those of ``layers`` whose rows at sub-grid ``part`` with the points ``x`` are kept."""
        key = (float(x[0]), float(x[-1]), x.size)
        return {i for i in layers if (part, i) in self._rows and self._rows[(part, i)][0] == key}

    def fill(self, part, tau, layers):
        """Put the kept rows of sub-grid ``part`` into ``tau`` (layers, points) for ``layers``
        (found by :meth:`held`)."""
        for i in layers:
            tau[i] = self._rows[(part, i)][1]

    def put(self, part, x, weights, tau):
        """Keep the rows of sub-grid ``part`` (points ``x``) of the layers not yet held, and sample it."""
        key = (float(x[0]), float(x[-1]), x.size)
        for i in self._pending:
            self._rows[(part, i)] = (key, tau[i].copy())
        if self.sample_points:
            stride = max(1, -(-self._total // self.sample_points))
            idx = np.arange(0, x.size, stride)
            self._sampled.append((x[idx], np.add.reduceat(weights, idx), tau[:, idx]))

    def end(self):
        """Finish a calculation: the rows put are now held."""
        self._states.update(self._pending)
        self._pending = {}
        if self._sampled:
            x, w, t = zip(*self._sampled)
            self.sample = DepthSample(np.concatenate(x), np.concatenate(w), np.concatenate(t, axis=1))
        self._sampled = []

"""The fast model's tables in memory: g-points, their absorption against (p, T, H2O), and their
share of the Planck function; and what they give a layered column.

The model is a k-distribution with one fixed ordering of each band (the correlated-k
method, Lacis & Oinas 1991, JGR 96, 9027; Fu & Liou 1992, JAS 49, 2139): the builder
(:mod:`specforce.kdist.build`) sorts the spectral points of a band by keys taken from a
reference atmosphere (how deep they emit, their near-surface optical depth, the column of the
band's key gas) and groups them into g-points. A g-point is a fixed set of spectral
points, so every gas's absorption coefficient is averaged over the same set, and gases that
absorb in one band add g-point by g-point. That is the spectral-mapping treatment of
overlapping gases (West, Crisp & Chen 1990, JQSRT 43, 191; the same ordering for every gas,
as in the full-spectrum correlated-k method of Hogan 2010, JAS 67, 2086). Its cost in accuracy
is measured by the calibration (:mod:`specforce.forcing.calibration`). Where the layout asks
for it, each gas's cross-sections at each g-point are then scaled by factors fitted to
line-by-line fluxes (:mod:`specforce.kdist.fit`), folded into the tables.

Each g-point also carries the spectral points' share of the Planck function, kept as
(wavenumber, weight) pairs, one per g-point and 1 cm-1 bin, so that its source term follows
the temperature through its own points' wavenumbers and not through a band-mean Planck
function (Hogan 2010 makes the same point); it is interpolated from a table at every kelvin,
within 3e-7 of those sums (:meth:`KTables.planck_sources`).
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np

from .._version import __version__
from ..errors import SettingsError
from .layout import Layout

__all__ = ["KTables", "K_FLOOR", "table_key", "table_settings"]

#: Smallest absorption coefficient the tables hold [cm2 molecule-1]: they interpolate ln k.
K_FLOOR = 1e-40
# Temperatures of the Planck-source table [K] (see KTables.planck_sources).
_PLANCK_T = np.arange(100.0, 401.0)


@dataclass(frozen=True)
class KTables:
    """The fast model's tables.

    Attributes
    ----------
    layout : Layout
        Bands and table nodes.
    band : numpy.ndarray
        Band of each g-point, shape (ngpoints,).
    log_k : dict of str to numpy.ndarray
        ln of the absorption cross-section of each g-point [ln(cm2 molecule-1)]: the mean over
        its spectral points, times the fitted factor where the layout has a fit; per gas: shape
        (ngpoints, npressure, ntemperature), and for H2O (ngpoints, npressure, ntemperature,
        nwater). The continuum is in H2O's.
    planck_gpoint, planck_wavenumber, planck_weight : numpy.ndarray
        The g-points' spectral points in 1 cm-1 bins: for each pair its g-point, the
        weighted mean wavenumber [cm-1] and the summed quadrature weight [cm-1]; sorted by
        g-point. A g-point's Planck source is sum(weight * B(wavenumber, T)).
    key : str
        sha256 under which the tables are cached (see :func:`specforce.kdist.build.table_key`).
    provenance : dict
        What they were built from, how, when and in how long.
    calibration : dict
        Errors against line-by-line over the calibration set (empty until calibrated).
    """

    layout: Layout
    band: np.ndarray
    log_k: dict
    planck_gpoint: np.ndarray
    planck_wavenumber: np.ndarray
    planck_weight: np.ndarray
    key: str
    provenance: dict = field(default_factory=dict)
    calibration: dict = field(default_factory=dict)

    @property
    def ngpoints(self):
        """Number of g-points."""
        return int(self.band.size)

    @property
    def gases(self):
        """The gases with tables."""
        return tuple(self.log_k)

    def gpoints_per_band(self):
        """Number of g-points of each band."""
        return np.bincount(self.band, minlength=self.layout.nbands)

    def planck_sources(self, temperature):
        """Each g-point's Planck source at each temperature [W m-2 sr-1], shape (ntemps, ngpoints).

        Between 101 and 398 K by cubic Lagrange interpolation of their logarithms, tabulated at
        every kelvin (:attr:`_planck_table`, made at the first call); elsewhere as the sum over
        each g-point's pairs. The two agree within 3e-7, relative (2.1e-7 measured at 2,000
        temperatures with the default tables; the test checks it on the reduced ones).

        Parameters
        ----------
        temperature : array_like
            Temperatures [K].
        """
        t = np.atleast_1d(np.asarray(temperature, dtype=float))
        if t.min() < _PLANCK_T[1] or t.max() > _PLANCK_T[-3]:
            return self._planck_sums(t)
        x = t - _PLANCK_T[0]
        i = x.astype(np.int64)
        f = (x - i)[:, None]
        tab = self._planck_table
        return np.exp(-f * (f - 1) * (f - 2) / 6 * tab[i - 1] + (f + 1) * (f - 1) * (f - 2) / 2 * tab[i]
                      - (f + 1) * f * (f - 2) / 2 * tab[i + 1] + (f + 1) * f * (f - 1) / 6 * tab[i + 2])

    def _planck_sums(self, t):
        """The Planck sources as sums over each g-point's (wavenumber, weight) pairs, (nt, ngpoints)."""
        from ..radiation.transfer import planck

        b = planck(self.planck_wavenumber[None, :], t[:, None]) * self.planck_weight[None, :]
        starts = np.flatnonzero(np.r_[True, np.diff(self.planck_gpoint) != 0])
        return np.add.reduceat(b, starts, axis=1)

    @cached_property
    def _planck_table(self):
        """ln of the Planck sources at every kelvin of :data:`_PLANCK_T`, (nT, ngpoints); made once."""
        sums = np.concatenate([self._planck_sums(_PLANCK_T[k:k + 32]) for k in range(0, _PLANCK_T.size, 32)])
        return np.log(np.maximum(sums, 1e-300))

    @cached_property
    def _node_major(self):
        """Each gas's ln k with the g-points last, (np, nT[, nw], ngpoints), so that the rows the
        interpolation gathers lie together in memory."""
        return {g: np.ascontiguousarray(np.moveaxis(t, 0, -1)) for g, t in self.log_k.items()}

    def optical_depth(self, layers, gases):
        """Each layer's optical depth at each g-point [dimensionless], shape (nlayers, ngpoints).

        Parameters
        ----------
        layers : specforce.radiation.layers.Layers
            The column's layers (pressure [Pa], temperature [K], columns [molecule cm-2]).
        gases : sequence of str
            The active gases; those without a table are an error.
        """
        missing = [g for g in gases if g not in self.log_k]
        if missing:
            raise SettingsError(f"the fast model has no table for {', '.join(missing)} (it has "
                                f"{', '.join(self.gases)}); leave {'it' if len(missing) == 1 else 'them'} out "
                                f"with --gases or use the line-by-line model")
        lay = self.layout
        ip, fp = _nodes(np.log(np.asarray(lay.pressure)[::-1]), np.log(layers.pressure))
        ip = len(lay.pressure) - 2 - ip  # the table runs from high to low pressure
        fp = 1.0 - fp
        it, ft = _nodes(1.0 / np.asarray(lay.temperature)[::-1], 1.0 / layers.temperature)
        it = len(lay.temperature) - 2 - it
        ft = 1.0 - ft
        tau = np.zeros((layers.nlayers, self.ngpoints))
        for g in gases:
            table = self._node_major[g]
            if g == "H2O":
                w = np.asarray(lay.water)
                iw = np.clip(np.searchsorted(w, layers.vmr["H2O"]) - 1, 0, w.size - 2)
                fw = (layers.vmr["H2O"] - w[iw]) / (w[iw + 1] - w[iw])
                fw = np.maximum(fw, 0.0)  # below the first node: its value; above the last: linear
                k = ((1.0 - fw)[:, None] * np.exp(_bilinear(table, ip, fp, it, ft, iw))
                     + fw[:, None] * np.exp(_bilinear(table, ip, fp, it, ft, iw + 1)))
            else:
                k = np.exp(_bilinear(table, ip, fp, it, ft))
            tau += k * layers.column[g][:, None]
        return tau

    def outside(self, layers):
        """Where ``layers`` leave the tables' pressure, temperature or water range: a list of
        sentences (empty where none)."""
        lay, out = self.layout, []
        p, t = layers.pressure, layers.temperature
        if p.max() > lay.pressure[0] * (1 + 1e-9) or p.min() < lay.pressure[-1] * (1 - 1e-9):
            out.append(f"layer pressures {p.min():.3g}-{p.max():.4g} Pa leave the tables' "
                       f"{lay.pressure[-1]:.3g}-{lay.pressure[0]:.4g} Pa (held at the nearest node)")
        if t.max() > lay.temperature[-1] or t.min() < lay.temperature[0]:
            out.append(f"layer temperatures {t.min():.1f}-{t.max():.1f} K leave the tables' "
                       f"{lay.temperature[0]:g}-{lay.temperature[-1]:g} K (held at the nearest node)")
        if "H2O" in layers.vmr and layers.vmr["H2O"].max() > lay.water[-1]:
            out.append(f"water mole fractions up to {layers.vmr['H2O'].max():.3g} leave the tables' "
                       f"{lay.water[-1]:g} (extrapolated linearly)")
        return out


def table_settings(settings, layout):
    """The line-by-line settings the tables are built with: ``settings`` over the layout's range,
    unrefined."""
    return replace(settings, wavenumber_range=(float(layout.edges[0]), float(layout.edges[-1])), refine=1,
                   spectral_model="lbl", grid="graded")


def table_key(spectroscopy, settings, layout, *, digest=None):
    """sha256 (hex) of everything the tables depend on: the spectroscopy's lines and continuum
    table, the line-shape and grid settings, the layout and specforce's version."""
    s = table_settings(settings, layout)
    record = {
        "spectroscopy": digest or spectroscopy.digest(),
        "line_shape": repr(s.line_shape()),
        "settings": {k: getattr(s, k) for k in ("method", "cutoff", "continuum", "spacing", "spacing_fraction",
                                                "grading", "resolve_tau", "max_spacing", "output_resolution",
                                                "co2_chi", "co2_cutoff", "h2o_far_wing")},
        "layout": layout.digest(),
        "version": __version__,
    }
    return hashlib.sha256(json.dumps(record, sort_keys=True, default=str).encode()).hexdigest()


def _nodes(nodes, values):
    """Interval index and fraction of ``values`` on increasing ``nodes``, held at the ends."""
    i = np.clip(np.searchsorted(nodes, values) - 1, 0, nodes.size - 2)
    f = np.clip((values - nodes[i]) / (nodes[i + 1] - nodes[i]), 0.0, 1.0)
    return i, f


def _bilinear(table, ip, fp, it, ft, *water):
    """ln k at each layer, shape (nlayers, ngpoints), from a (np, nT[, nw], ngpoints) table at the
    layers' pressure and temperature intervals (and water nodes ``water``)."""
    def at(i, j):
        return table[(i, j, *water)]
    a, b = fp[:, None], ft[:, None]
    return ((1 - a) * ((1 - b) * at(ip, it) + b * at(ip, it + 1))
            + a * ((1 - b) * at(ip + 1, it) + b * at(ip + 1, it + 1)))

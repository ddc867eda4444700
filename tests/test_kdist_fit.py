"""The fit of the fast model's tables to line-by-line fluxes (specforce.kdist.fit): the knot
basis, the folding of the factors into the tables, the optimiser on a problem whose answer is
known, and the training states. The fitted model's error on the reduced band set is in
tests/test_kdist.py; the default layout's figures come from benchmarks/bench_kdist.py."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

import specforce
from specforce.errors import SettingsError
from specforce.kdist import fit
from specforce.kdist.cases import CHANGES, TRAINING_CHANGES, calibration_states
from specforce.kdist.layout import DEFAULT_LAYOUT, REDUCED_LAYOUT
from specforce.radiation.layers import layers
from specforce.radiation.transfer import source_fluxes


def test_knot_basis_is_piecewise_linear_and_constant_beyond_the_knots():
    knots = np.log(np.array([10.0, 100.0, 1000.0]))
    lp = np.log(np.array([1.0, 10.0, np.sqrt(10.0 * 100.0), 100.0, 500.0, 1000.0, 1e5]))
    b = fit.knot_basis(lp, knots)
    np.testing.assert_allclose(b.sum(axis=1), 1.0, rtol=0, atol=1e-15)
    np.testing.assert_allclose(b[0], [1, 0, 0])  # above the top knot: its value
    np.testing.assert_allclose(b[2], [0.5, 0.5, 0])  # midway in ln p
    np.testing.assert_allclose(b[4], [0, 1 - np.log(5) / np.log(10), np.log(5) / np.log(10)])
    np.testing.assert_allclose(b[-1], [0, 0, 1])


def test_the_knots_must_be_table_pressures():
    with pytest.raises(SettingsError, match="fit_pressures"):
        dataclasses.replace(DEFAULT_LAYOUT, fit_pressures=(5e4, 1e3))
    with pytest.raises(SettingsError, match="fit_pressures"):
        dataclasses.replace(DEFAULT_LAYOUT, fit_pressures=DEFAULT_LAYOUT.fit_pressures[::-1])


def test_extra_training_columns_must_be_variants_of_the_calibration_set():
    with pytest.raises(SettingsError, match="fit_variants"):
        dataclasses.replace(DEFAULT_LAYOUT, fit_variants=(("tropical", "H2O x3"),))
    with pytest.raises(SettingsError, match="fit_coupling"):
        dataclasses.replace(DEFAULT_LAYOUT, fit_coupling=1.5)


def test_training_changes_hold_the_calibration_ones_and_reach_above_present_day():
    assert set(CHANGES) < set(TRAINING_CHANGES)
    base, pairs = calibration_states(specforce.load_profile("mls"), changes=TRAINING_CHANGES)
    b, pert = pairs["CH4 1831.5->3663 ppb"]
    assert b is base and np.allclose(pert.vmr["CH4"], 2 * 1831.5e-9)
    # the benchmark's held-out CH4 case (1831.5 -> 2500 ppb) is not a training change
    assert not any(v[0] == "CH4" and v[2] * 1831.5e-9 == pytest.approx(2500e-9) for v in TRAINING_CHANGES.values())


def _problem(rng, truth, truth_knots=None):
    """A training set whose 'line-by-line' fluxes are the model's with the corrections ``truth``
    (on ``truth_knots``, default the fit's three)."""
    nlay, ng, gases = 12, truth.shape[-1], ["A", "B"]
    log_p = np.log(np.geomspace(1e5, 50.0, nlay))
    knots = np.log(np.array([100.0, 3e3, 1e5]))
    tau = {"A": rng.uniform(0.01, 0.6, (nlay, 1, ng)) * np.ones((1, 2, 1)),
           "B": rng.uniform(0.01, 0.3, (nlay, 1, ng)) * np.array([1.0, 2.0])[None, :, None]}
    tau["B"][..., :2] = 0.0  # gas B absent at two g-points: its factors are not free there
    t = np.linspace(290.0, 210.0, nlay + 1)
    source = (t[:, None, None] / 290.0) ** 4 * rng.uniform(1.0, 3.0, (1, 1, ng)) * np.ones((1, 2, 1))
    surface = source[0] * 1.02
    col = fit._Column(log_p=log_p, tau=tau, source=source, surface=surface, emissivity=1.0,
                      heat=np.full((nlay, 2), 5.0), up=None, down=None, pairs=[])
    basis = fit.knot_basis(log_p, knots)
    made = fit.knot_basis(log_p, knots if truth_knots is None else truth_knots)
    up, dn = source_fluxes(fit._depth(col, truth, gases, made), source, surface, 1.0)
    col.up, col.down = up, dn
    forcing = ((up - dn)[:, 1] - (up - dn)[:, 0]).sum(axis=-1)
    col.pairs = [(0, 1, 0.01 * np.maximum(np.abs(forcing), 0.25 * np.abs(forcing).max()))]
    return fit.TrainingSet(columns=[col], nodes=3, diffusivity=False), gases, knots, basis


def test_the_fit_finds_corrections_that_reproduce_known_fluxes():
    rng = np.random.default_rng(7)
    truth = rng.uniform(-0.4, 0.4, (2, 3, 5))
    truth[1, :, :2] = 0.0
    training, gases, knots, basis = _problem(rng, truth)
    c, record = fit.fit_corrections(training, gases, knots)
    col = training.columns[0]
    before = (fit._residuals(col, fit._depth(col, np.zeros_like(truth), gases, basis), training) ** 2).sum()
    after = (fit._residuals(col, fit._depth(col, c, gases, basis), training) ** 2).sum()
    assert before > 1.0  # the unfitted model is off
    assert after < 1e-3 * before  # the ridge (1e-3 per unit c squared) leaves a little
    assert record["loss"][0] == pytest.approx(before) and np.all(np.diff(record["loss"]) <= 0)
    # the factors themselves (not only the fluxes) come back (measured within 1.1e-6 when written;
    # 0.06 with the earlier loop that stepped accepted g-points again); gas B's stay 0 where it is absent
    np.testing.assert_allclose(c, truth, atol=1e-4)
    assert np.all(c[1, :, :2] == 0.0)


def test_coupled_g_points_share_their_bands_summed_errors():
    # Fluxes made with factors on six knots cannot be matched on the fit's three: each g-point keeps
    # errors of its own. Coupled (Layout.fit_coupling), the g-points of a band take shares of its
    # summed error, and the band sums come closer than when each g-point is fitted alone, at the
    # cost of the g-points' own errors (measured when written, in tolerance units squared: band sums
    # 1485 alone, 1206 coupled by 0.5, 750 by 1; the g-points' own 2185, 2213, 2638).
    rng = np.random.default_rng(11)
    truth = rng.uniform(-0.8, 0.8, (2, 6, 8))
    truth[1, :, :2] = 0.0
    training, gases, knots, basis = _problem(rng, truth, np.log(np.geomspace(50.0, 1e5, 6)))
    col = training.columns[0]
    bands = np.repeat([0, 1], 4)

    def summed(c):  # each band's errors summed over its g-points, squared, added up
        r = fit._residuals(col, fit._depth(col, c, gases, basis), training)
        return float(sum((r[:, bands == b].sum(axis=1) ** 2).sum() for b in (0, 1)))

    alone = summed(fit.fit_corrections(training, gases, knots)[0])
    coupled = summed(fit.fit_corrections(training, gases, knots, bands=bands, coupling=0.5)[0])
    assert alone > 100.0  # the fit alone leaves summed errors ...
    assert coupled < 0.9 * alone  # ... that coupling shrinks


def test_folded_factors_scale_the_optical_depths_exactly_at_any_layer(reduced_unfitted):
    tables = reduced_unfitted
    gases = list(tables.log_k)
    knots = REDUCED_LAYOUT.fit_knots
    c = np.random.default_rng(3).uniform(-0.5, 0.5, (len(gases), knots.size, tables.ngpoints))
    folded = fit.apply_corrections(tables, gases, knots, c)
    lay = layers(specforce.load_profile("mls"))
    factor = np.exp(fit.knot_basis(np.log(lay.pressure), knots) @ c[gases.index("CO2")])
    np.testing.assert_allclose(folded.optical_depth(lay, ["CO2"]), factor * tables.optical_depth(lay, ["CO2"]),
                               rtol=1e-12)


def test_tabulated_planck_sources_equal_the_sums_over_each_gpoints_pairs(reduced_unfitted):
    t = np.random.default_rng(5).uniform(101.0, 398.0, 500)
    fresh = dataclasses.replace(reduced_unfitted)  # no table made yet
    np.testing.assert_allclose(fresh.planck_sources(t), fresh._planck_sums(t), rtol=3e-7, atol=0)
    cold = np.array([90.0, 250.0])  # outside the table: the sums themselves
    np.testing.assert_array_equal(fresh.planck_sources(cold), fresh._planck_sums(cold))


@pytest.mark.slow  # a reduced build with its training runs, and line-by-line: about 20 s
def test_training_fluxes_sum_to_line_by_line_and_pair_the_right_states(monkeypatch):
    # The line-by-line fluxes of each g-point's own points, summed over the g-points, are the
    # column's line-by-line fluxes; the CO2 2x pair's forcing is line-by-line's. They differ by the
    # sampling of two graded grids (the builder's also resolves every table node's lines): within
    # 1e-3, and 0.01 W m-2 for the small downward fluxes aloft (measured 0.003 when written).
    import specforce.kdist.build as build
    from specforce.radiation.longwave import Settings, compute_longwave_states

    caught = {}

    def keep(training, gases, knots, pool=None, report=None, **coupling):
        caught["training"] = training
        c = np.zeros((len(gases), knots.size, training.columns[0].up.shape[-1]))
        return c, {"loss": [0], "coupled_from_iteration": None}

    monkeypatch.setattr(build, "fit_corrections", keep)
    spec, s = specforce.spectroscopy(), Settings(wavenumber_range=(500.0, 820.0))
    build.build_tables(spec, s, dataclasses.replace(REDUCED_LAYOUT, splits=(2, 1, 2)))
    col = caught["training"].columns[0]
    base, pairs = calibration_states(specforce.load_profile("mls"), changes=TRAINING_CHANGES)
    lbl = compute_longwave_states(list(pairs["CO2 2x"]), spec, s)
    np.testing.assert_allclose(col.up[:, 0].sum(axis=-1), lbl[0].flux_up, rtol=1e-3)
    np.testing.assert_allclose(col.down[:, 0].sum(axis=-1), lbl[0].flux_down, rtol=1e-3, atol=0.01)
    i, j, _ = col.pairs[list(TRAINING_CHANGES).index("CO2 2x")]
    net = (col.up - col.down).sum(axis=-1)
    forcing = net[:, i] - net[:, j]
    np.testing.assert_allclose(forcing[[0, -1]], [lbl[0].net_flux[k] - lbl[1].net_flux[k] for k in (0, -1)], rtol=1e-3)


def test_every_state_of_the_full_calibration_set_can_be_made():
    # Water doubled takes the tropical surface air to 151 % relative humidity: the set's states are
    # the issue's, not checked for saturation (the full calibration stopped there until this test).
    from specforce.kdist.cases import CALIBRATION_SETS, PROFILES

    for name in PROFILES:
        profile = specforce.load_profile(name)
        for variant in CALIBRATION_SETS["full"]:
            base, pairs = calibration_states(profile, variant)
            assert len(pairs) == len(CHANGES)
            if variant == "H2O x2":
                np.testing.assert_allclose(base.vmr["H2O"], 2 * profile.vmr["H2O"])

"""Threads: the threaded path equals the serial one, and the thread count is checked.

The calculation runs its tasks (one per layer and set of absorbers, then runs of points in the
transfer) on a pool of threads (specforce.radiation.workers). Each task writes only its own part
and partial sums are added in a fixed order, so the results should be the same bits for any
thread count; the issue asks for 1e-9 relative, and we check equality.
"""

from __future__ import annotations

import numpy as np
import pytest
from click.testing import CliRunner

from specforce import api
from specforce.absorption.linesum import LayerState, distant_wings, layer_lines, optical_depth
from specforce.absorption.treatments import ChiPerrinHartmann, LineTreatment
from specforce.errors import SettingsError
from specforce.molecular.lines import LineList
from specforce.radiation.workers import TaskPool, available_cores, thread_count


@pytest.fixture(scope="module")
def spec():
    return api.spectroscopy()


def _same(a, b, what):
    a, b = np.asarray(a, float), np.asarray(b, float)
    assert a.shape == b.shape, what
    np.testing.assert_allclose(a, b, rtol=1e-9, atol=0, err_msg=what)
    assert np.array_equal(a, b), f"{what}: not the same bits (largest difference {np.max(np.abs(a - b))})"


@pytest.mark.parametrize("grid", ["graded", "uniform"])
def test_olr_on_two_threads_equals_one(spec, grid):
    rng = (640.0, 700.0) if grid == "graded" else (660.0, 670.0)
    one = api.olr("mls", spec, wavenumber_range=rng, grid=grid, threads=1)
    two = api.olr("mls", spec, wavenumber_range=rng, grid=grid, threads=2)
    _same(one.flux_up, two.flux_up, "flux up")
    _same(one.flux_down, two.flux_down, "flux down")
    _same(one.heating_rate, two.heating_rate, "heating rate")
    _same(one.olr_spectrum, two.olr_spectrum, "OLR spectrum")
    _same(one.surface_down_spectrum, two.surface_down_spectrum, "surface downward spectrum")


def test_forcing_on_two_threads_equals_one(spec):
    kw = dict(wavenumber_range=(600.0, 740.0))
    one = api.radiative_forcing("mls", {"CO2": "2x"}, spec, threads=1, **kw)
    two = api.radiative_forcing("mls", {"CO2": "2x"}, spec, threads=2, **kw)
    _same([one.toa, one.tropopause, one.surface], [two.toa, two.tropopause, two.surface], "forcing")
    _same(one.spectral_toa, two.spectral_toa, "TOA forcing spectrum")
    _same(one.base.heating_rate, two.base.heating_rate, "heating rate of the base state")
    _same(one.perturbed.heating_rate, two.perturbed.heating_rate, "heating rate of the perturbed state")


def test_two_states_computed_together_equal_three(spec):
    # A forcing's two states have their own gases' optical depths computed layer by layer in one
    # task (Absorbers.layer_depths_together, sharing the layer's far-wing kernels); three states go
    # state by state. The states both have in common must come out the same bits either way.
    from specforce.forcing.scenario import apply_perturbations, parse_change
    from specforce.radiation.longwave import Settings, compute_longwave_states

    base, pert = apply_perturbations(api.load_profile("mls"), [parse_change("CO2", "2x")])
    settings = Settings(wavenumber_range=(600.0, 740.0), threads=2)
    two = compute_longwave_states([base, pert], spec, settings)
    three = compute_longwave_states([base, pert, pert], spec, settings)
    for a, b in zip(two, three):
        _same(a.flux_up, b.flux_up, "flux up")
        _same(a.flux_down, b.flux_down, "flux down")
        _same(a.olr_spectrum, b.olr_spectrum, "OLR spectrum")


def test_runs_repeat_bit_for_bit(spec):
    a = api.olr("mls", spec, wavenumber_range=(650.0, 690.0), threads=2)
    b = api.olr("mls", spec, wavenumber_range=(650.0, 690.0), threads=2)
    assert np.array_equal(a.flux_up, b.flux_up) and np.array_equal(a.olr_spectrum, b.olr_spectrum)


def _invented_co2_layer(n, span, state, seed):
    """A layer's LayerLines of ``n`` invented lines (not real transitions) of CO2 in ``span`` [cm-1],
    taking the chi-factor treatment that reaches 250 cm-1."""
    rng = np.random.default_rng(seed)
    lines = LineList({"wavenumber": np.sort(rng.uniform(*span, n)), "intensity": 10 ** rng.uniform(-24, -19, n),
                      "lower_energy": rng.uniform(0, 2000, n), "gamma_air": np.full(n, 0.07),
                      "gamma_self": np.full(n, 0.09), "n_air": np.full(n, 0.75), "delta_air": np.zeros(n),
                      "molecule": np.full(n, 2), "isotopologue": np.ones(n, np.int64)})
    chi = (LineTreatment(25.0), LineTreatment(250.0, far_wing=ChiPerrinHartmann()))
    return layer_lines(lines, state, 1e21, chi, np.ones(n, np.int64))


def test_distant_wings_computed_once_give_the_same_optical_depth():
    """The distant wings of long-reaching lines (CO2 with the chi factor, 250 cm-1), summed once over
    a whole range, then used by a block that passes only the lines within 26 cm-1 of it, against the
    block passing every line within reach. Same decomposition, other grid origins: equal to 1e-6 of
    the peak (measured 1e-9)."""
    ls = _invented_co2_layer(3000, (500.0, 850.0), LayerState(50000.0, 250.0), seed=7)
    x = np.linspace(880.0, 960.0, 20001)  # beyond the band: the distant wings alone reach here
    near = np.linspace(640.0, 700.0, 30001)
    wings = distant_wings(ls, 400.0, 1000.0)
    assert wings is not None and wings.split == 25.0
    for pts in (x, near):
        whole = optical_depth(ls, pts, exact_tau=1e-3)
        part = optical_depth(ls.window(pts[0] - 27.0, pts[-1] + 27.0), pts, exact_tau=1e-3, distant=wings)
        assert whole.max() > 0
        np.testing.assert_allclose(part, whole, rtol=0, atol=1e-6 * whole.max())


def test_distant_wings_of_windows_of_lines_add_up():
    """Long line lists are summed window by window (memory stays flat): the wings of two halves,
    added on their common coarse grid, are the wings of the whole (to rounding: the same terms are
    added in another order, hence 1e-12 of the largest value)."""
    ls = _invented_co2_layer(2000, (550.0, 800.0), LayerState(30000.0, 230.0), seed=3)
    whole = distant_wings(ls, 400.0, 1000.0, reach=251.0)
    half = distant_wings(ls.window(0.0, 700.0), 400.0, 1000.0, reach=251.0)
    both = distant_wings(ls.window(700.0 + 1e-9, 2000.0), 400.0, 1000.0, reach=251.0, into=half)
    assert (both.start, both.step) == (whole.start, whole.step)
    np.testing.assert_allclose(both.values, whole.values, rtol=0, atol=1e-12 * np.abs(whole.values).max())


def test_thread_counts_are_checked():
    assert thread_count(None) == available_cores() >= 1
    assert thread_count(3) == 3
    for bad in (0, -1, 1.5, True):
        with pytest.raises(SettingsError, match="threads must be a whole number"):
            thread_count(bad)
    with pytest.raises(SettingsError, match="threads"):
        api.settings(threads=0)
    # the thread count does not change the results, so settings that differ in it compare equal
    assert api.settings(threads=1) == api.settings(threads=2)


def test_a_task_error_reaches_the_caller():
    def fail(i):
        if i == 3:
            raise ValueError("task 3")
        return i

    with TaskPool(2) as pool:
        assert pool.map(lambda i: i * i, range(5)) == [0, 1, 4, 9, 16]
        with pytest.raises(ValueError, match="task 3"):
            pool.map(fail, range(6))


def test_threads_on_the_command_line(tmp_path):
    from specforce.cli import main

    runner = CliRunner()
    bad = runner.invoke(main, ["olr", "--profile", "mls", "--range", "660", "670", "--threads", "0"])
    assert bad.exit_code == 2 and "--threads" in bad.output
    out = {}
    for n in (1, 2):
        res = runner.invoke(main, ["olr", "--profile", "mls", "--range", "660", "670", "--threads", str(n),
                                   "--json"])
        assert res.exit_code == 0, res.output
        out[n] = res.output
    import json

    one, two = json.loads(out[1]), json.loads(out[2])
    assert one["olr_W_m2"] == two["olr_W_m2"] and one["settings"]["threads"] == 1


def test_batch_fingerprint_ignores_threads():
    from dataclasses import replace

    from specforce.batch_jobs import BatchJob

    job = BatchJob((), api.settings(wavenumber_range=(600.0, 700.0)))
    assert job.fingerprint() == replace(job, threads=4).fingerprint()
    assert job.fingerprint() == replace(job, settings=replace(job.settings, threads=2)).fingerprint()


def test_states_that_share_some_amounts(spec):
    # Four states of one column: N2O's base amount is shared by three of them, CO2's by two, so
    # each of those is summed once for its states (radiation.sharing). Every state must come out as
    # when it is computed alone on the same grid, to the tiered line sum's dependence on how the gases
    # are split between absorbers (it splits near and distant wings by each absorber's lines: about
    # 1e-6, measured; the direct sum takes minutes here). A state given another state's amount of N2O
    # (doubled in the last) or CO2 would be off by percents in this range.
    from specforce.forcing.scenario import apply_perturbations, parse_change
    from specforce.radiation.column import Column
    from specforce.radiation.longwave import Settings, compute_longwave_states
    from specforce.radiation.sharing import share_absorbers

    mls = api.load_profile("mls")
    states = [apply_perturbations(mls, [parse_change("CO2", "2x")])[0]]
    states += [apply_perturbations(mls, [parse_change(gas, "2x")])[1] for gas in ("CO2", "N2O")]
    states.insert(2, apply_perturbations(mls, [parse_change("CO2", "4x")])[1])
    settings = Settings(wavenumber_range=(560.0, 700.0), threads=2)
    parts = share_absorbers([Column(s, spec, settings) for s in states], spec, settings)
    assert [a.per_gas[0][0] for a in parts.groups] == ["CO2", "N2O"]
    assert parts.members == [[0, 1], [1], [1], [0]]
    together = compute_longwave_states(states, spec, settings)
    for state, res in zip(states, together):
        alone = compute_longwave_states([state], spec, settings, grid=res.grid)
        np.testing.assert_allclose(res.flux_up, alone[0].flux_up, rtol=1e-5)
        np.testing.assert_allclose(res.flux_down, alone[0].flux_down, rtol=1e-5, atol=1e-6)

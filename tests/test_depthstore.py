"""Layer optical depths kept between calculations (specforce.radiation.depthstore).

A kept row is the row the calculation would compute, so a calculation with a store must give the
same bits as one without; only layers whose state is unchanged may be taken from it.
"""

from __future__ import annotations

import numpy as np
import pytest

from specforce import api
from specforce.errors import SettingsError
from specforce.io.profiles import load_profile
from specforce.radiation.depthstore import DepthStore
from specforce.radiation.longwave import Settings, compute_longwave, compute_longwave_states

SETTINGS = Settings(wavenumber_range=(640.0, 700.0))


@pytest.fixture(scope="module")
def spec():
    return api.spectroscopy()


def _warmed(prof, levels, dt):
    t = prof.temperature.copy()
    t[levels] += dt
    return prof.copy(temperature=t, check_saturation=False)


def test_kept_layers_give_the_same_bits_and_changed_layers_are_computed_again(spec):
    prof = load_profile("mls")
    first = compute_longwave(prof, spec, SETTINGS)
    grid = first.grid
    nlay = prof.nlevels - 1
    store = DepthStore(layers=range(nlay), sample=500)
    again = compute_longwave(prof, spec, SETTINGS, grid=grid, store=store)
    assert store.reused == 0 and np.array_equal(again.flux_up, first.flux_up)
    # warm levels 20-24: layers 19-24 change, every other layer is taken from the store
    warm = _warmed(prof, np.arange(20, 25), 3.0)
    with_store = compute_longwave(warm, spec, SETTINGS, grid=grid, store=store)
    assert store.reused == nlay - 6
    without = compute_longwave(warm, spec, SETTINGS, grid=grid)
    for name in ("flux_up", "flux_down", "heating_rate", "olr_spectrum", "surface_down_spectrum"):
        assert np.array_equal(getattr(with_store, name), getattr(without, name)), name
    assert not np.array_equal(with_store.flux_up, first.flux_up)  # the warming is seen
    # the changed layers were kept anew: back to the first state, only they differ from the store
    back = compute_longwave(prof, spec, SETTINGS, grid=grid, store=store)
    assert store.reused == nlay - 6 and np.array_equal(back.flux_up, first.flux_up)


def test_the_sample_stands_for_the_whole_grid(spec):
    prof = load_profile("mls")
    store = DepthStore(sample=2000)
    res = compute_longwave(prof, spec, SETTINGS, store=store)
    sample = store.sample
    assert 1800 <= sample.wavenumber.size <= 2100  # every k-th point, k = ceil(points / 2000), per sub-grid
    assert sample.optical_depth.shape == (prof.nlevels - 1, sample.wavenumber.size)
    assert np.all(np.diff(sample.wavenumber) >= 0)
    # the weights add up to the range (sub-grids share their end points, each taking half)
    assert sample.weight.sum() == pytest.approx(60.0, rel=1e-9)
    assert res.grid.wavenumber.size > 10 * sample.wavenumber.size


def test_a_store_is_dropped_when_the_grid_spectroscopy_or_settings_change(spec):
    import copy

    prof = load_profile("mls")
    nlay = prof.nlevels - 1
    store = DepthStore(layers=range(nlay))
    compute_longwave(prof, spec, SETTINGS, store=store)
    # a setting that changes the optical depths (the line cut-off)
    other = Settings(wavenumber_range=(640.0, 700.0), cutoff=10.0)
    res = compute_longwave(prof, spec, other, store=store)
    assert store.reused == 0
    assert np.array_equal(res.flux_up, compute_longwave(prof, spec, other, grid=res.grid).flux_up)
    # another grid
    narrower = Settings(wavenumber_range=(650.0, 690.0), cutoff=10.0)
    res = compute_longwave(prof, spec, narrower, store=store)
    assert store.reused == 0
    assert np.array_equal(res.flux_up, compute_longwave(prof, spec, narrower, grid=res.grid).flux_up)
    # another spectroscopy object (rows are taken for the same object only)
    compute_longwave(prof, spec, narrower, store=store, grid=res.grid)
    assert store.reused == nlay
    compute_longwave(prof, copy.copy(spec), narrower, store=store, grid=res.grid)
    assert store.reused == 0


def test_a_full_store_splits_the_grid_as_the_first_call_did(spec, monkeypatch):
    # With every layer kept, the second call sums no distant wings; the grid must still be split
    # into the same sub-grids (the split follows the lines a block needs). A small window of
    # lines stands in for a long imported list, where the split depends on it.
    from specforce.radiation import longwave

    monkeypatch.setattr(longwave, "WINDOW_LINES", 20000)
    prof = load_profile("mls")
    nlay = prof.nlevels - 1
    store = DepthStore(layers=range(nlay))
    narrow = Settings(wavenumber_range=(660.0, 670.0))
    first = compute_longwave(prof, spec, narrow, store=store)
    again = compute_longwave(prof, spec, narrow, grid=first.grid, store=store)
    assert store.reused == nlay
    assert np.array_equal(again.flux_up, first.flux_up) and np.array_equal(again.flux_down, first.flux_down)


def test_a_store_takes_one_state_on_the_graded_line_by_line_path(spec):
    prof = load_profile("mls")
    with pytest.raises(SettingsError, match="one state"):
        compute_longwave_states([prof, prof], spec, SETTINGS, store=DepthStore())
    with pytest.raises(SettingsError, match="graded"):
        compute_longwave(prof, spec, Settings(wavenumber_range=(660.0, 670.0), grid="uniform"), store=DepthStore())
    with pytest.raises(SettingsError, match="graded"):
        compute_longwave(prof, spec, Settings(wavenumber_range=(660.0, 670.0), spectral_model="kdist"),
                         store=DepthStore())
    with pytest.raises(SettingsError, match="sample"):
        DepthStore(sample=-1)

"""The built-in spectroscopy: generated once, cached by the tables' hash, with its provenance."""

import os

import pytest

from specforce import builtin
from specforce.errors import SettingsError


def test_built_in_set_is_cached_and_says_what_it_is(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    spec = builtin.builtin_spectroscopy()
    assert set(spec.gases) == set(builtin.GENERATED_MOLECULES)
    store = spec.provenance["store"]
    assert store.startswith(str(tmp_path)) and os.path.basename(store).startswith("builtin-")
    assert spec.provenance["generator_version"] == builtin.GENERATOR_VERSION
    assert all(len(h) == 64 for h in spec.provenance["tables_sha256"].values())  # sha256 of each table
    assert "band intensities" in spec.provenance["accuracy"]
    stamp = os.stat(store).st_mtime_ns
    again = builtin.builtin_spectroscopy()  # from the cache, not generated again
    assert os.stat(store).st_mtime_ns == stamp and again.provenance["store"] == store


def test_unknown_molecule_is_a_clear_error():
    with pytest.raises(SettingsError, match="no line generator for XX"):
        builtin.generate_builtin_lines(["XX"])

"""The built-in spectroscopy: generated once, cached by the tables' hash, with its provenance."""

import os

import pytest

from specforce.molecular import builtin
from specforce.errors import SettingsError


@pytest.mark.slow  # generates every built-in line list again, into an empty cache
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


def test_accuracy_statements_follow_where_each_gas_came_from():
    from specforce.molecular.builtin import BUILTIN_ACCURACY, accuracy_statements

    # Pincus et al. (2020) benchmarks, AFGL area mean at the top of the atmosphere (measured on this code)
    # (tests/test_co2_concentrations.py checks the CO2 figures against a fresh area-mean sweep)
    assert "8 % above" in BUILTIN_ACCURACY["CO2"]["forcing"] and "2.928 vs 2.709" in BUILTIN_ACCURACY["CO2"]["forcing"]
    assert "falls about 6 %" in BUILTIN_ACCURACY["CO2"]["forcing"]
    assert "35 % below" in BUILTIN_ACCURACY["CH4"]["forcing"] and "10 % above" in BUILTIN_ACCURACY["N2O"]["forcing"]
    assert "0.9 %" in BUILTIN_ACCURACY["H2O"]["forcing"] and "2.9 %" in BUILTIN_ACCURACY["H2O"]["forcing"]
    built_in = {"kind": "built-in (generated from molecular constants)"}
    assert accuracy_statements(["CH4", "CH4"], built_in) == [BUILTIN_ACCURACY["CH4"]["forcing"]]
    assert accuracy_statements(["CO"], built_in) == []  # no built-in lines, nothing to claim
    assert accuracy_statements(["CO2"], {"kind": "line store"}) == []
    combined = {"kind": "combined", "imported_gases": ["CO2", "H2O"],
                "coverage": {"CO2": {"built_in": [[300.0, 500.0]]}, "H2O": {"built_in": []}}}
    assert accuracy_statements(["H2O"], combined) == []  # all from the imported list
    partly, = accuracy_statements(["CO2"], combined)
    assert partly.startswith("CO2 from the imported list where it has lines, built-in elsewhere")
    assert accuracy_statements(["N2O"], combined) == [BUILTIN_ACCURACY["N2O"]["forcing"]]

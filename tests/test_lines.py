"""Line data in memory: coverage of a line list, and imported lines taking precedence only where they cover."""

import numpy as np
import pytest

from specforce.molecular.lines import LineList, Spectroscopy, coverage


def _lines(wn, iso=1, molecule=2, s=1e-21):
    n = len(wn)
    return LineList({"molecule": np.full(n, molecule, np.uint8), "isotopologue": np.full(n, iso, np.uint8),
                     "wavenumber": np.asarray(wn, float), "intensity": np.full(n, s), "lower_energy": np.zeros(n),
                     "gamma_air": np.full(n, 0.07), "gamma_self": np.full(n, 0.09), "n_air": np.full(n, 0.7),
                     "delta_air": np.zeros(n)})


def test_coverage_splits_at_gaps():
    assert coverage([], 25.0) == []
    assert coverage([10.0, 30.0, 54.0, 80.0, 200.0], 25.0) == [(10.0, 54.0), (80.0, 80.0), (200.0, 200.0)]


def test_imported_lines_replace_built_in_ones_only_where_they_cover():
    # Required: imported lines replace built-in ones per isotopologue and only within the imported span,
    # so that a CO2 list covering 0-500 cm-1 leaves the built-in 667 cm-1 band in place.
    built_in = Spectroscopy({"CO2": LineList.concat([_lines(np.arange(100.0, 800.0, 1.0)),
                                                     _lines([300.5, 650.5], iso=2)])}, {"kind": "built-in"})
    imported = Spectroscopy({"CO2": _lines(np.arange(0.2, 500.0, 0.5), s=2e-21)}, {"kind": "line store",
                                                                                  "store": "x.h5"})
    out = built_in.overridden_by(imported)
    co2 = out.lines["CO2"]
    main = co2.wavenumber[co2.isotopologue == 1]
    assert np.all(np.diff(co2.wavenumber) >= 0)
    assert np.array_equal(main[main < 500], np.arange(0.2, 500.0, 0.5))       # imported where it covers
    assert np.array_equal(main[main >= 500], np.arange(500.0, 800.0, 1.0))    # built-in beyond 499.7
    assert sorted(co2.wavenumber[co2.isotopologue == 2]) == [300.5, 650.5]     # the other isotopologue untouched
    cov = out.provenance["coverage"]["CO2"]
    assert np.allclose(cov["imported"]["1"], [[0.2, 499.7]]) and cov["built_in"] == [[300.5, 300.5], [500.0, 799.0]]
    assert len(out.provenance["warnings"]) == 1 and "300-300, 500-799 cm-1" in out.provenance["warnings"][0]


@pytest.mark.slow  # two doubled-CO2 forcings over 500-850 cm-1
def test_real_partial_list_keeps_the_forcing(real_lines, tmp_path):
    # Required with the real list as well: sample_CO2.par stops at 500 cm-1 (PROVENANCE.md). The
    # doubled-CO2 forcing over 500-850 cm-1 with it stays within 5 % of the built-in set's (its lines
    # below 500 cm-1 barely matter there), instead of collapsing to zero.
    import warnings

    import specforce
    from specforce.errors import CoverageWarning
    from specforce.io.lineimport import import_lines

    import_lines([real_lines / "sample_CO2.par"], tmp_path / "co2.h5")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        spec = specforce.spectroscopy(lines=tmp_path / "co2.h5")
    assert any(issubclass(w.category, CoverageWarning) for w in caught)
    kw = dict(wavenumber_range=(500.0, 850.0), continuum=False, gases=("CO2", "H2O"))
    with_list = specforce.radiative_forcing("mls", {"CO2": "2x"}, spectroscopy=spec, **kw)
    built_in = specforce.radiative_forcing("mls", {"CO2": "2x"}, **kw)
    assert with_list.tropopause == pytest.approx(built_in.tropopause, rel=0.05)
    assert "CO2 from" in with_list.summary() and "built-in elsewhere" in with_list.summary()

"""Concentration sweeps, their comparison with the published formulas, and refits."""

import json
import warnings

import numpy as np
import pytest
import xarray as xr
from click.testing import CliRunner

from specforce.io.profiles import load_profile
from specforce.molecular.builtin import builtin_spectroscopy
from specforce.cli import main
from specforce.forcing.formula_choice import formula_forcing
from specforce.forcing.formulas import FormulaRangeWarning
from specforce.radiation.longwave import Settings
from specforce.errors import FormulaError
from specforce.forcing.refits import fit_logarithmic
from specforce.forcing.sweep import (AREA_WEIGHTS, SweepResult, concentration_sweep, parse_sweep_bound, refit_sweep,
                             sweep_values)

# the CO2 band centre on a fixed grid, no continuum: cheap enough for the suite
FAST = Settings(wavenumber_range=(600.0, 740.0), continuum=False, spacing=0.002, block_width=10.0, gases=("CO2", "H2O"))


@pytest.fixture(scope="module")
def spec():
    return builtin_spectroscopy()


@pytest.fixture(scope="module")
def co2_sweep(spec):
    values = sweep_values("CO2", 139.0, 1112.0, 4)
    return concentration_sweep("CO2", values, [load_profile("mls"), load_profile("saw")], spec, FAST,
                               weights=[3.0, 1.0])


def test_sweep_is_monotonic_and_zero_at_the_reference(co2_sweep, spec):
    # physics (common practice, no source needed): more CO2 absorbs more, so forcing rises with
    # concentration at the tropopause and at the top of the atmosphere
    assert np.all(np.diff(co2_sweep.forcing_tropopause, axis=1) > 0)
    assert np.all(np.diff(co2_sweep.forcing_toa, axis=1) > 0)
    one = concentration_sweep("CO2", [278.0], [load_profile("mls")], spec, FAST)
    assert one.forcing_tropopause[0, 0] == 0.0


def test_weights_are_normalised_and_applied(co2_sweep):
    assert co2_sweep.weights.tolist() == [0.75, 0.25]
    assert np.allclose(co2_sweep.weighted, 0.75 * co2_sweep.forcing[0] + 0.25 * co2_sweep.forcing[1])


def test_sweep_is_near_logarithmic(co2_sweep):
    # Zhong & Haigh (2013), Weather 68, 100: forcing close to logarithmic in CO2 over 0.5x-4x;
    # here the log fit leaves residuals under 10 % of the forcing (the band centre alone)
    for values in (*co2_sweep.forcing, co2_sweep.weighted):
        f = fit_logarithmic(co2_sweep.concentration, values, co2_sweep.reference)
        assert f.coefficients["alpha"] > 0 and f.relative_rms < 0.1


def test_a_partial_range_sweep_has_no_formula_comparison_and_no_refits(co2_sweep):
    # 600-740 cm-1 holds a fraction of the surface's emission: its forcing is not the whole-spectrum
    # forcing the formulas give, so neither the comparison nor a refit of their forms is offered
    why = co2_sweep.comparison_omitted
    assert why.startswith("600-740 cm-1 holds only") and "whole longwave spectrum" in why
    assert co2_sweep.formulas() == {}
    with pytest.raises(FormulaError, match="refit of the CO2 sweep: 600-740 cm-1 holds only"):
        refit_sweep(co2_sweep)
    d = co2_sweep.to_dict()
    assert d["wavenumber_range_cm-1"] == [600.0, 740.0] and d["comparison_omitted"] == why
    assert d["formulas"] == {} and d["refits"] == {}
    text = co2_sweep.summary()
    assert "range 600-740 cm-1" in text and f"no comparison with the published formulas and no refits: {why}" in text
    assert "myhre" not in text
    ds = co2_sweep.to_dataset()
    assert ds.attrs["comparison_omitted"] == why and list(ds.attrs["wavenumber_range_cm-1"]) == [600.0, 740.0]
    assert not [v for v in ds.data_vars if v.startswith(("formula_", "difference_"))]


def test_a_sweep_with_built_in_lines_states_their_accuracy(co2_sweep):
    from specforce.molecular.builtin import BUILTIN_ACCURACY

    statement = BUILTIN_ACCURACY["CO2"]["forcing"]
    assert co2_sweep.to_dict()["spectroscopy_accuracy"] == [statement]
    assert f"  accuracy: {statement}" in co2_sweep.summary()
    assert co2_sweep.to_dataset().attrs["spectroscopy_accuracy"] == statement


def test_a_whole_range_sweep_keeps_the_comparison():
    conc = sweep_values("CO2", 139.0, 556.0, 3)
    sweep = SweepResult("CO2", "ppm", conc, 278.0, {"CO2": 278.0, "CH4": 722.0, "N2O": 270.0}, ["mls"], np.ones(1),
                        np.zeros((1, 3)), np.zeros((1, 3)), None, np.zeros(1),
                        {"settings": Settings(wavenumber_range=(10.0, 3000.0))})
    assert sweep.comparison_omitted is None
    d = sweep.to_dict()
    assert d["formulas"]["myhre1998"][2] == pytest.approx(3.708, abs=1e-3)  # Myhre et al. 1998: 5.35 ln 2
    assert "range 10-3000 cm-1" in sweep.summary() and "myhre1998" in sweep.summary()
    assert "difference_myhre1998" in sweep.to_dataset()


def _rendered_sweep():
    """A whole-range CO2 sweep of two profiles (invented forcings) with its refits, as a run makes it."""
    import dataclasses

    conc = sweep_values("CO2", 139.0, 556.0, 3)
    f = np.array([[-3.7, 0.0, 3.7], [-3.3, 0.0, 3.3]])
    s = SweepResult("CO2", "ppm", conc, 278.0, {"CO2": 278.0, "CH4": 722.0, "N2O": 270.0}, ["mls", "saw"],
                    np.array([0.75, 0.25]), f, f * 1.1, None, np.array([2.2e4, 3.0e4]),
                    {"settings": Settings(), "spectroscopy": {"kind": "built-in"}, "specforce_version": "0",
                     "seconds": 2.0})
    return dataclasses.replace(s, refits=refit_sweep(s))


def test_sweep_renders_as_dataset_dict_and_text():
    # The sweep's one rendering (specforce.io.sweep_results): the keys, variables and attributes files
    # and scripts rely on, and a few values (the weighted forcing is 0.75 x mls + 0.25 x saw)
    s = _rendered_sweep()
    assert isinstance(s.provenance["settings"], Settings)  # typed until written
    d = s.to_dict()
    assert list(d) == ["gas", "unit", "reference", "background", "wavenumber_range_cm-1", "comparison_omitted",
                       "concentration", "profiles", "weights", "forcing_kind", "forcing", "forcing_toa",
                       "weighted_forcing", "formulas", "refits", "forcing_per_doubling_W_m2",
                       "formula_range_warnings", "comparison_note", "spectroscopy_accuracy", "caution",
                       "spectroscopy", "settings", "run_seconds"]
    assert d["weighted_forcing"] == pytest.approx([-3.6, 0.0, 3.6]) and d["wavenumber_range_cm-1"] == [10.0, 3000.0]
    assert d["forcing_toa"]["saw"] == pytest.approx([-3.63, 0.0, 3.63]) and d["run_seconds"] == 2.0
    assert d["settings"]["wavenumber_range"] == [10.0, 3000.0] and d["settings"]["gases"] is None
    assert set(d["settings"]) == set(Settings.__dataclass_fields__)
    assert list(d["refits"]["weighted"]) == ["form", "coefficients", "standard_errors", "rms_residual_W_m2",
                                             "max_residual_W_m2", "warning"]
    assert d["refits"]["weighted"]["coefficients"]["alpha"] == pytest.approx(3.6 / np.log(2.0))
    assert json.loads(json.dumps(d)) == d
    ds = s.to_dataset()
    assert list(ds.data_vars) == ["forcing_tropopause", "forcing_toa", "weighted_forcing", "formula_myhre1998",
                                  "difference_myhre1998", "formula_etminan2016", "difference_etminan2016",
                                  "formula_meinshausen2020", "difference_meinshausen2020"]
    assert list(ds.coords) == ["concentration", "profile", "weight", "tropopause_pressure"]
    assert sorted(ds.attrs) == ["Conventions", "comment", "comparison_note", "concentration_unit", "forcing_kind",
                                "gas", "provenance", "reference_concentration", "refits", "source",
                                "spectroscopy_accuracy", "title", "wavenumber_range_cm-1"]
    assert json.loads(ds.attrs["provenance"])["settings"] == d["settings"]
    assert list(json.loads(ds.attrs["refits"])["mls"]) == ["form", "coefficients", "standard_errors", "rms_residual",
                                                          "warning"]
    assert ds["difference_myhre1998"].values[2] == pytest.approx(3.6 - 5.35 * np.log(2.0))  # Myhre et al. 1998
    lines = s.summary().splitlines()
    assert lines[:2] == ["CO2 sweep, reference 278 ppm; profiles mls (0.75), saw (0.25)",
                         "  forcing: instantaneous, tropopause, clear-sky longwave, range 10-3000 cm-1 [W m-2]; "
                         "spectroscopy: built-in"]
    assert "     CO2 [ppm]  specforce       myhre1998     etminan2016 meinshausen2020  per 2x" in lines
    assert "           556      3.600   3.708 ( -0.11)   3.802 ( -0.20)   3.748 ( -0.15)   3.600" in lines
    assert any(line.startswith("  refit weighted: alpha ln(C/C0): alpha = 5.1937 +- ") for line in lines)
    assert lines[-1] == "  (2.0 s)"


def _with_forcing(sweep, values):
    f = np.tile(values, (len(sweep.profiles), 1))
    return SweepResult(sweep.gas, sweep.unit, sweep.concentration, sweep.reference, sweep.background,
                       sweep.profiles, sweep.weights, f, f, None, sweep.tropopause_pressure)


@pytest.mark.parametrize("gas, lo, hi, key, expected", [
    ("CO2", 180.0, 2000.0, "alpha", 5.35),  # Myhre et al. 1998, Table 3: 5.35 ln(C/C0)
    ("CH4", 400.0, 3000.0, "a", 0.036),     # Myhre et al. 1998, Table 3: 0.036 (sqrt M - sqrt M0), no overlap
])
def test_refit_recovers_a_formula_used_as_the_computed_values(gas, lo, hi, key, expected):
    ref = {"CO2": 278.0, "CH4": 722.0}[gas]
    conc = sweep_values(gas, lo, hi, 20)
    base = SweepResult(gas, "ppm" if gas == "CO2" else "ppb", conc, ref, {"CO2": 278.0, "CH4": 722.0, "N2O": 270.0},
                       ["a", "b"], np.array([0.5, 0.5]), None, None, None, np.zeros(2))
    if gas == "CO2":
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FormulaRangeWarning)
            values = formula_forcing("myhre1998", gas, conc, ref)
    else:
        values = expected * (np.sqrt(conc) - np.sqrt(ref))
    fits = refit_sweep(_with_forcing(base, values))
    for f in fits.values():
        assert f.coefficients[key] == pytest.approx(expected, rel=1e-12)
        assert f.max_residual < 1e-12


def test_quadratic_refit_recovers_etminan():
    conc = sweep_values("CO2", 180.0, 2000.0, 20)
    values = formula_forcing("etminan2016", "CO2", conc, 278.0)
    base = SweepResult("CO2", "ppm", conc, 278.0, {"CO2": 278.0, "CH4": 722.0, "N2O": 270.0}, ["x"], np.ones(1),
                       None, None, None, np.zeros(1))
    fit = refit_sweep(_with_forcing(base, values), quadratic=True)["x"]
    # Etminan et al. 2016, Table 1: a1 = -2.4e-7, b1 = 7.2e-4, 5.36 + c1 N with c1 = -2.1e-4, N = 270 ppb
    assert fit.coefficients["a"] == pytest.approx(-2.4e-7, rel=1e-8)
    assert fit.coefficients["b"] == pytest.approx(7.2e-4, rel=1e-8)
    assert fit.coefficients["alpha"] == pytest.approx(5.36 - 2.1e-4 * 270, rel=1e-10)


def test_sweep_errors(spec):
    from specforce.radiation.longwave import Spectroscopy

    without_n2o = Spectroscopy({g: ll for g, ll in spec.lines.items() if g != "N2O"})
    with pytest.raises(ValueError, match="no N2O lines"):
        concentration_sweep("N2O", [300.0], [load_profile("mls")], without_n2o, FAST)
    # the swept gas must be active: FAST has CO2 and H2O only
    with pytest.raises(ValueError, match=r"the sweep of CH4 does nothing: CH4 is not an active gas"):
        concentration_sweep("CH4", [1000.0], [load_profile("mls")], spec, FAST)
    with pytest.raises(ValueError, match="one non-negative weight per profile"):
        concentration_sweep("CO2", [556.0], [load_profile("mls")], spec, FAST, weights=[1.0, 2.0])
    with pytest.raises(ValueError, match="CO2, CH4 or N2O"):
        sweep_values("O3", 1.0, 2.0, 3)
    with pytest.raises(ValueError, match="0 < from < to"):
        sweep_values("CO2", 500.0, 100.0, 3)
    assert parse_sweep_bound("N2O", "0.2ppm", 270.0) == 200.0
    assert abs(sum(AREA_WEIGHTS.values()) - 1.0) < 1e-9


def test_sweep_command_outputs(tmp_path):
    nc, png = tmp_path / "s.nc", tmp_path / "s.png"
    res = CliRunner().invoke(main, ["sweep", "--gas", "CO2", "--from", "0.5x", "--to", "2x", "--steps", "3",
                                    "--profile", "mls", "--range", "600", "740", "--spacing", "0.002",
                                    "--gases", "CO2,H2O",
                                    "--no-continuum", "--json", "--netcdf", str(nc), "--plot", str(png)])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    assert out["concentration"] == pytest.approx([139.0, 278.0, 556.0])
    # a partial range: the range is stated, the formulas and refits left out, and why
    assert out["wavenumber_range_cm-1"] == [600.0, 740.0] and out["formulas"] == {} and out["refits"] == {}
    assert "600-740 cm-1 holds only" in out["comparison_omitted"]
    ds = xr.open_dataset(nc, engine="h5netcdf")
    assert ds["forcing_tropopause"].dims == ("profile", "concentration")
    assert "formula_myhre1998" not in ds and "600-740 cm-1 holds only" in ds.attrs["comparison_omitted"]
    ds.close()
    assert png.stat().st_size > 10_000
    bad = CliRunner().invoke(main, ["sweep", "--gas", "N2O", "--from", "0.6ppm", "--to", "0.2ppm"])
    assert bad.exit_code != 0 and "0 < from < to" in bad.output

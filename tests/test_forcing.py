"""The forcing driver: exact identities, published shapes, scenarios and the command line."""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from specforce.io.profiles import load_profile
from specforce.molecular.builtin import builtin_spectroscopy
from specforce.cli import main
from specforce.errors import SettingsError
from specforce.forcing.instantaneous import instantaneous_forcing, per_gas_forcing, wmo_tropopause
from specforce.forcing.formulas import ch4_n2o_overlap_myhre1998
from specforce.radiation.longwave import Settings
from specforce.forcing.scenario import apply_perturbations, parse_change

# The CO2 band centre and wings only, on a fixed 0.001 cm-1 grid (the same for base and
# perturbed, so the identities below hold exactly), with CO2 and H2O lines only (the O3 and
# N2O bands in this range would triple the cost and change nothing tested), to keep the suite fast.
FAST = Settings(wavenumber_range=(540.0, 800.0), continuum=False, spacing=0.001, block_width=10.0, gases=("CO2", "H2O"))


@pytest.fixture(scope="module")
def spec():
    return builtin_spectroscopy()


def test_zero_perturbation_gives_exactly_zero(spec):
    prof = load_profile("mls")
    base, pert = apply_perturbations(prof, [parse_change("CO2", "1x")])
    r = instantaneous_forcing(base, pert, spec, FAST)
    assert np.all(r.forcing == 0.0) and np.all(r.spectral_toa == 0.0)


@pytest.mark.slow  # two forcings on a 0.001 cm-1 grid; the default run checks the same symmetry in
# tests/properties/test_physics_invariants.py
def test_swapping_base_and_perturbed_reverses_the_sign(spec):
    prof = load_profile("mls")
    base, pert = apply_perturbations(prof, [parse_change("CO2", "2x")])
    a = instantaneous_forcing(base, pert, spec, FAST)
    b = instantaneous_forcing(pert, base, spec, FAST)
    assert np.allclose(a.forcing, -b.forcing, rtol=1e-12, atol=1e-12)
    assert a.toa > 0 and a.tropopause > a.toa  # CO2 cools the stratosphere: larger forcing at the tropopause


@pytest.mark.slow  # five runs over 540-800 cm-1 on a 0.001 cm-1 grid
def test_co2_forcing_is_close_to_logarithmic(spec):
    # Zhong & Haigh (2013), Weather 68, 100 (from memory): CO2 forcing grows close to
    # logarithmically up to about 16x pre-industrial. Here the forcing per doubling at the
    # tropopause over 540-800 cm-1 is 5.53, 5.54, 5.50 and 5.39 W m-2 from 1x to 16x (max/min
    # 1.03, measured, with the chi-factor wings of CO2; cut at 25 cm-1 like the other gases it
    # falls from 5.46 to 5.15, 1.06). Checked: positive, and within 10 %.
    from specforce.radiation.longwave import compute_longwave

    prof = load_profile("mls")
    trop = wmo_tropopause(prof)
    net = []
    for k in range(5):
        r = compute_longwave(prof.with_vmr("CO2", 280e-6 * 2**k), spec, FAST)
        net.append(r.flux_down[trop] - r.flux_up[trop])
    per_doubling = np.diff(net)
    assert np.all(per_doubling > 0) and per_doubling.max() / per_doubling.min() < 1.10


def test_wmo_tropopause_of_the_afgl_profiles():
    # The AFGL models' tropopauses lie near 17 km (tropical), 13 km (mid-latitude summer) and
    # 9-10 km (subarctic winter) (Anderson et al. 1986 temperature profiles).
    assert load_profile("tropical").altitude[wmo_tropopause(load_profile("tropical"))] == pytest.approx(17000, abs=1500)
    assert load_profile("mls").altitude[wmo_tropopause(load_profile("mls"))] == pytest.approx(13000, abs=1500)
    assert load_profile("saw").altitude[wmo_tropopause(load_profile("saw"))] == pytest.approx(9000, abs=1500)


def test_forcing_command_json(tmp_path):
    res = CliRunner().invoke(main, ["forcing", "--profile", "mls", "--co2", "2x", "--range", "640", "700",
                                    "--gases", "CO2,H2O",
                                    "--no-continuum", "--spacing", "0.002", "--json",
                                    "--netcdf", str(tmp_path / "f.nc"), "--plot", str(tmp_path / "f.png")])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    for key in ("forcing_toa_W_m2", "forcing_tropopause_W_m2", "forcing_surface_W_m2", "olr_base_W_m2",
                "olr_perturbed_W_m2", "tropopause_pressure_Pa", "settings", "spectroscopy"):
        assert key in out
    assert out["olr_base_W_m2"] - out["olr_perturbed_W_m2"] == pytest.approx(out["forcing_toa_W_m2"], rel=1e-9)
    assert (tmp_path / "f.png").stat().st_size > 10000
    import xarray as xr

    with xr.open_dataset(tmp_path / "f.nc") as ds:
        assert ds["spectral_forcing_toa"].attrs["units"] == "W m-2 (cm-1)-1"
        assert float(ds["spectral_forcing_toa"].sum()) * 0.1 == pytest.approx(out["forcing_toa_W_m2"], rel=1e-9)


def test_forcing_command_refuses_responses_over_a_partial_range():
    # Required: the responses need the whole spectrum; a partial range is refused with a message.
    part = CliRunner().invoke(main, ["forcing", "--profile", "usstd", "--h2o", "1.2x", "--range", "500", "800",
                                     "--responses"])
    assert part.exit_code == 1 and "need the whole longwave spectrum" in part.output


@pytest.mark.slow  # four whole-spectrum runs, even on a coarse grid (about a minute on 2 cores)
def test_forcing_command_responses_signs():
    # Sign conventions (common practice): lambda_Planck < 0 (warming raises OLR), the no-feedback
    # warming F / -lambda_Planck > 0 for a positive forcing, and a water-vapour response > 0 in a
    # water band. The responses need the whole spectrum; a coarse fixed grid (0.05 cm-1) keeps
    # this cheaper, and the magnitudes are tested in tests/test_responses.py.
    res = CliRunner().invoke(main, ["forcing", "--profile", "usstd", "--h2o", "1.2x", "--gases", "H2O,CO2",
                                    "--no-continuum", "--spacing", "0.05", "--responses", "--json"])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    assert out["forcing_tropopause_W_m2"] > 0
    assert out["planck_response_W_m2_K"] < 0 and out["water_vapour_response_W_m2_K"] > 0
    # no-feedback warming: positive, and with a Planck response between -3 and -4 W m-2 K-1 (Soden & Held
    # 2006, J. Climate 19, 3354, for a clear column: see tests/test_responses.py) a quarter to a third of the
    # forcing in K per W m-2
    f = out["forcing_tropopause_W_m2"]
    assert f / 4.0 < out["no_feedback_warming_K"] < f / 3.0
    assert out["no_feedback_warming_from"] == "instantaneous"
    assert "emission_temperature_K" in out and "emission_altitude_m" in out  # NaN-free JSON: null outside range


def test_plots_are_written_as_png_and_pdf(spec, tmp_path):
    # Required: PNG and PDF; matplotlib picks the format from the suffix.
    from specforce.io.plots import plot_forcing, save_figure

    prof = load_profile("mls")
    base, pert = apply_perturbations(prof, [parse_change("CO2", "2x")])
    r = instantaneous_forcing(base, pert, spec, Settings(wavenumber_range=(640.0, 700.0), continuum=False,
                                                              gases=("CO2", "H2O"),
                                                              spacing=0.002))
    for suffix, magic in ((".png", b"\x89PNG"), (".pdf", b"%PDF")):
        path = tmp_path / f"f{suffix}"
        save_figure(plot_forcing(r, "mid-latitude summer, CO2 x2"), str(path))
        assert path.read_bytes()[:4] == magic
    assert sorted(p.name for p in tmp_path.iterdir()) == ["f.pdf", "f.png"]  # no temporary files left


def test_per_gas_forcing_and_the_ch4_n2o_overlap(spec):
    # CH4 722 -> 1866 ppb and N2O 270 -> 332 ppb absorb in the same 7-8 um region, so together they
    # force less than the sum of each alone. Myhre et al. (1998), GRL 25, 2715, Table 1: the
    # overlap f(M, N) = 0.47 ln[1 + 2.01e-5 (MN)^0.75 + 5.31e-15 M (MN)^1.52] gives a cross term
    # -[f(M,N) - f(M,N0) - f(M0,N) + f(M0,N0)] = -0.0094 W m-2 (global, all-sky, adjusted). The
    # clear-sky column overlaps more (no clouds masking either band): measured -0.017 W m-2 at the
    # tropopause over 1150-1400 cm-1. Checked: negative, and within a factor of three of the formula.
    prof = load_profile("mls")
    changes = [parse_change("CH4", "722ppb:1866ppb"), parse_change("N2O", "270ppb:332ppb")]
    s = Settings(wavenumber_range=(1150.0, 1400.0), continuum=False)
    out = per_gas_forcing(prof, changes, spec, s)
    f = ch4_n2o_overlap_myhre1998
    cross = -(f(1866.0, 332.0) - f(1866.0, 270.0) - f(722.0, 332.0) + f(722.0, 270.0))
    assert out.overlap["tropopause"] < 0
    assert cross / 3 > out.overlap["tropopause"] > 3 * cross
    # each gas alone equals an independent run of that change alone (same grid rule, own grid)
    base, pert = apply_perturbations(prof, changes[:1])
    alone = instantaneous_forcing(base.with_vmr("N2O", 270e-9), pert.with_vmr("N2O", 270e-9), spec, s)
    assert out.alone["CH4"]["tropopause"] == pytest.approx(alone.tropopause, abs=2e-4)
    with pytest.raises(SettingsError, match="one change per gas"):
        per_gas_forcing(prof, [changes[0], changes[0]], spec, s)


@pytest.mark.parametrize("hpa", [5000.0, -100.0, 1e-6])
def test_tropopause_outside_the_profile_is_an_error(spec, hpa):
    # Required: a tropopause outside the profile (5000 or -100 hPa) is an error, never moved to the surface.
    prof = load_profile("mls")
    base, pert = apply_perturbations(prof, [parse_change("CO2", "2x")])
    with pytest.raises(SettingsError, match="outside the profile"):
        instantaneous_forcing(base, pert, spec, FAST, tropopause=hpa * 100.0)



# A change that cannot change any flux is an error naming the gas and the fix, never a silent 0 W m-2.

@pytest.mark.parametrize("settings, changes, message", [
    # CO2 left out of the active gases
    (dict(gases=("H2O",)), {"CO2": "2x"}, r"CO2 \(2x\) does nothing: CO2 is not an active gas .*--gases H2O,CO2"),
    # a gas the spectroscopy has no lines for
    ({}, {"CO": "2x"}, r"CO \(2x\) does nothing: the spectroscopy in use has no CO lines .*import a line list"),
    # a gas whose lines all lie outside the range (the built-in CH4 lines start near 1060 cm-1)
    (dict(wavenumber_range=(600.0, 700.0)), {"CH4": "2x"},
     r"CH4 \(2x\) does nothing: .* no CH4 lines within reach of 600-700 cm-1"),
])
def test_a_change_that_does_nothing_is_an_error(spec, settings, changes, message):
    from specforce.api import radiative_forcing
    from specforce.errors import ScenarioError

    with pytest.raises(ScenarioError, match=message):
        radiative_forcing("mls", changes, spec, **settings)


def test_a_change_that_does_nothing_is_an_error_on_the_command_line():
    res = CliRunner().invoke(main, ["forcing", "--co2", "2x", "--gases", "H2O", "--range", "600", "700"])
    assert res.exit_code != 0 and "CO2 is not an active gas" in res.output and "--gases H2O,CO2" in res.output
    assert "0.000" not in res.output


def test_water_change_in_the_window_counts_through_the_continuum(spec):
    # water with the window continuum on acts in 800-1250 cm-1 even where no water line is near
    from specforce.forcing.instantaneous import check_changes_active

    check_changes_active([parse_change("H2O", "1.2x")], spec, Settings(wavenumber_range=(900.0, 910.0)))


# The stratosphere-adjusted forcing balances heating rates, which a partial range makes band-limited
# (over 600-700 cm-1 it came out 0.9 % below the instantaneous forcing instead of about 8-10 %):
# refused by the rule that refuses the responses there.

def test_adjusted_forcing_over_a_partial_range_is_refused(spec):
    from specforce.api import radiative_forcing, sweep_concentrations

    with pytest.raises(SettingsError, match=r"stratosphere-adjusted forcing .* need the whole longwave spectrum, "
                                            r"but 600-700 cm-1 holds only [0-9]+% of the surface's blackbody"):
        radiative_forcing("mls", {"CO2": "2x"}, spec, adjusted=True, wavenumber_range=(600.0, 700.0))
    with pytest.raises(SettingsError, match="stratosphere-adjusted forcing"):
        sweep_concentrations("CO2", [556.0], ["mls"], spec, adjusted=True, wavenumber_range=(600.0, 700.0))
    res = CliRunner().invoke(main, ["forcing", "--co2", "2x", "--adjusted", "--range", "600", "700"])
    assert res.exit_code != 0 and "holds only" in res.output and "10-3000 cm-1" in res.output


# No result without its accuracy: a forcing with the built-in lines states their measured accuracy for
# the gases changed (Pincus et al. 2020 benchmarks; numbers in specforce.molecular.builtin.BUILTIN_ACCURACY).

def test_a_forcing_with_built_in_lines_states_their_accuracy(spec):
    from specforce.api import radiative_forcing

    r = radiative_forcing("mls", {"CH4": "2x"}, spec, wavenumber_range=(1300.0, 1310.0), gases=("CH4",),
                          continuum=False, spacing=0.01)
    statement = ("built-in CH4 lines: about 35 % below line-by-line benchmarks (0.397 vs 0.613 W m-2, Pincus et al. "
                 "2020); import a line list for CH4 work")
    assert f"  accuracy: {statement}" in r.summary()
    assert r.to_dict()["spectroscopy_accuracy"] == [statement]
    assert r.to_dataset().attrs["spectroscopy_accuracy"] == statement


def test_a_forcing_with_imported_lines_alone_has_no_built_in_statement(spec):
    from specforce.api import radiative_forcing
    from specforce.radiation.longwave import Spectroscopy

    imported = Spectroscopy({"CH4": spec.lines["CH4"].window(1270.0, 1340.0)}, {"kind": "line store", "store": "x.h5"})
    r = radiative_forcing("mls", {"CH4": "2x"}, imported, wavenumber_range=(1300.0, 1310.0), gases=("CH4",),
                          continuum=False, spacing=0.01)
    assert r.to_dict()["spectroscopy_accuracy"] == [] and "accuracy:" not in r.summary()
    assert "spectroscopy_accuracy" not in r.to_dataset().attrs
    assert "line store x.h5" in r.summary()  # the provenance says where the lines came from

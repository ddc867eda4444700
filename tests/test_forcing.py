"""The forcing driver: exact identities, published shapes, scenarios and the command line."""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from specforce.io.profiles import load_profile
from specforce.constants import STEFAN_BOLTZMANN
from specforce.builtin import builtin_spectroscopy
from specforce.cli import main
from specforce.forcing import (apply_perturbations, instantaneous_forcing, load_scenario, parse_change,
                               per_gas_forcing, wmo_tropopause)
from specforce.longwave import Settings

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


def test_swapping_base_and_perturbed_reverses_the_sign(spec):
    prof = load_profile("mls")
    base, pert = apply_perturbations(prof, [parse_change("CO2", "2x")])
    a = instantaneous_forcing(base, pert, spec, FAST)
    b = instantaneous_forcing(pert, base, spec, FAST)
    assert np.allclose(a.forcing, -b.forcing, rtol=1e-12, atol=1e-12)
    assert a.toa > 0 and a.tropopause > a.toa  # CO2 cools the stratosphere: larger forcing at the tropopause


def test_co2_forcing_is_close_to_logarithmic(spec):
    # Zhong & Haigh (2013), Weather 68, 100: CO2 forcing grows close to logarithmically, with
    # forcing per doubling constant to within about 10 % from 1x to 16x pre-industrial (280 ppm).
    from specforce.longwave import compute_longwave

    prof = load_profile("mls")
    trop = wmo_tropopause(prof)
    net = []
    for k in range(5):
        r = compute_longwave(prof.with_vmr("CO2", 280e-6 * 2**k), spec, FAST)
        net.append(r.flux_down[trop] - r.flux_up[trop])
    per_doubling = np.diff(net)
    assert np.all(per_doubling > 0)
    assert per_doubling.max() / per_doubling.min() < 1.10 / 0.90


def test_wmo_tropopause_of_the_afgl_profiles():
    # The AFGL models' tropopauses lie near 17 km (tropical), 13 km (mid-latitude summer) and
    # 9-10 km (subarctic winter) (Anderson et al. 1986 temperature profiles).
    assert load_profile("tropical").altitude[wmo_tropopause(load_profile("tropical"))] == pytest.approx(17000, abs=1500)
    assert load_profile("mls").altitude[wmo_tropopause(load_profile("mls"))] == pytest.approx(13000, abs=1500)
    assert load_profile("saw").altitude[wmo_tropopause(load_profile("saw"))] == pytest.approx(9000, abs=1500)


def test_per_gas_decomposition_adds_up(spec):
    prof = load_profile("mls")
    out = per_gas_forcing(prof, [parse_change("CO2", "2x"), parse_change("H2O", "1.2x")], spec,
                          Settings(wavenumber_range=(640.0, 700.0), continuum=True, spacing=0.002, block_width=10.0,
                                   gases=("CO2", "H2O")))
    for k in ("toa", "tropopause"):
        assert out["overlap"][k] == pytest.approx(out["all"][k] - out["CO2"][k] - out["H2O"][k], abs=1e-12)


def test_parse_change_and_errors():
    assert parse_change("co2", "2x").kind == "scale"
    p = parse_change("CH4", "722ppb:1866ppb")
    assert (p.kind, p.base, p.value) == ("ratio", pytest.approx(722e-9), pytest.approx(1866e-9))
    assert parse_change("CO2", "560ppm").value == pytest.approx(560e-6)
    with pytest.raises(ValueError, match="not an amount"):
        parse_change("CO2", "lots")
    with pytest.raises(ValueError, match="unknown gas"):
        parse_change("XX", "2x")


def test_scenario_file(tmp_path):
    good = tmp_path / "s.toml"
    good.write_text('name = "demo doubling"\nprofile = "demo"\ntropopause_hPa = 200\n'
                    '[[change]]\ngas = "CO2"\nscale = 2.0\n[[change]]\nwarming = 1.0\nfixed_rh = true\n')
    sc = load_scenario(good)
    assert sc.name == "demo doubling" and sc.tropopause_pressure == 20000.0
    base, pert = apply_perturbations(sc.profile, sc.perturbations)
    assert np.allclose(pert.vmr["CO2"], 2 * base.vmr["CO2"])
    assert np.allclose(pert.temperature - base.temperature, 1.0)
    bad = tmp_path / "b.toml"
    bad.write_text('profile = "demo"\ncolour = "red"\n')
    with pytest.raises(ValueError, match=r"unknown key\(s\) \['colour'\]"):
        load_scenario(bad)
    bad.write_text('profile = "demo"\n[[change]]\ngas = "CO2"\ntimes = 2\n')
    with pytest.raises(ValueError, match=r"change 1: unknown key\(s\) \['times'\]"):
        load_scenario(bad)


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


def test_forcing_command_responses_signs():
    # Sign conventions (common practice): lambda_Planck < 0 (warming raises OLR), the no-feedback
    # warming F / -lambda_Planck > 0 for a positive forcing, and a water-vapour response > 0 in a
    # water band. A narrow water band keeps this cheap; the magnitudes are tested elsewhere.
    res = CliRunner().invoke(main, ["forcing", "--profile", "usstd", "--h2o", "1.2x", "--range", "1500", "1560",
                                    "--no-continuum", "--spacing", "0.005", "--responses", "--json"])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    assert out["forcing_tropopause_W_m2"] > 0
    assert out["planck_response_W_m2_K"] < 0 and out["water_vapour_response_W_m2_K"] > 0
    lam = out["planck_response_W_m2_K"]
    assert out["no_feedback_warming_K"] == pytest.approx(out["forcing_tropopause_W_m2"] / -lam)
    assert out["no_feedback_warming_from"] == "instantaneous"
    assert "emission_temperature_K" in out and "emission_altitude_m" in out  # NaN-free JSON: null outside range


def test_adjusted_forcing_converges_and_cools_the_stratosphere(spec):
    # Fixed dynamical heating (Fels et al. 1980): doubled CO2 cools the stratosphere (most near
    # the stratopause) and the adjusted tropopause forcing is below the instantaneous one, by
    # "roughly 10-15 %" in issue 6: IPCC AR4 WG1 Sec. 10.2.1.4 quotes about 13 % for CO2
    # (global, all-sky); Hansen et al. (2005), Table 1, give 4.52 -> 4.12 W m-2, 9 %.
    # The O3 lines matter: without them the lower stratosphere of this column cooled by only
    # 0.5-1 K and the reduction was 4-5 %. Measured with CO2, H2O and O3 lines, 540-1100 cm-1:
    # -7.9 % on this 0.02 cm-1 grid (127 s), -7.8 % on a 0.01 grid over 500-1100, -8.5 % over
    # 10-3000 cm-1 with every gas (4.550 -> 4.163 W m-2). Checked here: between 5 and 15 %.
    from specforce.forcing import adjusted_forcing

    settings = Settings(wavenumber_range=(540.0, 1100.0), continuum=False, spacing=0.02,
                        gases=("CO2", "H2O", "O3"))
    prof = load_profile("mls")
    base, pert = apply_perturbations(prof, [parse_change("CO2", "2x")])
    inst = instantaneous_forcing(base, pert, spec, settings)
    adj = adjusted_forcing(inst, pert, spec, settings)
    trop = inst.tropopause_level
    dt = adj["temperature_change"]
    assert adj["iterations"] < 40
    assert np.all(dt[: trop + 1] == 0.0)
    assert dt[trop + 1 :][pert.pressure[trop + 1 :] >= 100.0].max() < 0.0
    assert dt.min() < -5.0
    assert 0.85 * inst.tropopause < adj["forcing_tropopause"] < 0.95 * inst.tropopause


def test_plots_are_written_as_png_and_pdf(spec, tmp_path):
    # The issue asks for PNG and PDF; matplotlib picks the format from the suffix.
    from specforce.plots import plot_forcing

    prof = load_profile("mls")
    base, pert = apply_perturbations(prof, [parse_change("CO2", "2x")])
    r = instantaneous_forcing(base, pert, spec, Settings(wavenumber_range=(640.0, 700.0), continuum=False,
                                                              gases=("CO2", "H2O"),
                                                              spacing=0.002))
    for suffix, magic in ((".png", b"\x89PNG"), (".pdf", b"%PDF")):
        path = tmp_path / f"f{suffix}"
        plot_forcing(r, str(path), "mid-latitude summer, CO2 x2")
        assert path.read_bytes()[:4] == magic
    assert sorted(p.name for p in tmp_path.iterdir()) == ["f.pdf", "f.png"]  # no temporary files left


def test_planck_and_water_vapour_responses_of_the_us_standard_atmosphere(spec):
    # Planck response: between -3 and -4 W m-2 K-1 for a standard clear-sky column (Soden & Held
    # 2006, J. Climate 19, 3354: -3.2 global mean all-sky; the blackbody bound 4 sigma T^3 is 3.76
    # at 255 K). Measured: -3.57 (U.S. Standard 1976, built-in lines with O3, 10-3000 cm-1; -3.78
    # before the O3 lines were added).
    # Fixed-RH water-vapour response: positive, and Planck + water vapour near the clear-sky OLR
    # slope at fixed RH of about -2.2 W m-2 K-1 (Koll & Cronin 2018, PNAS 115, 10293; from
    # memory, medium confidence), within 0.5 because their slope also carries lapse-rate changes.
    # Measured: +1.29, sum -2.29 (emission temperature 262.7 K, reached at 3.92 km; 152 s). A
    # 0.01 cm-1 grid gave the same figures to 0.001 as the default grid (measured without O3
    # lines) in a third of the time.
    # The no-feedback warming is F / -lambda (a positive warming for a positive forcing), and the
    # emission temperature (OLR/sigma)^(1/4) is reached where the profile is that cold.
    from specforce.forcing import climate_responses, emission_temperature

    prof = load_profile("usstd")
    r = climate_responses(prof, 3.7, spec, Settings(spacing=0.01))
    lam, wv = r["planck_response_W_m2_K"], r["water_vapour_response_W_m2_K"]
    assert -4.0 < lam < -3.0
    assert wv > 0.0
    assert lam + wv == pytest.approx(-2.2, abs=0.5)
    assert r["no_feedback_warming_K"] == pytest.approx(3.7 / -lam, rel=1e-12)
    t_e = r["emission_temperature_K"]
    assert emission_temperature(STEFAN_BOLTZMANN * t_e**4) == pytest.approx(t_e, rel=1e-12)
    # U.S. Standard 1976: 6.5 K/km from 288.15 K, so T_e is reached at (288.15 - T_e) / 6.5 km
    assert r["emission_altitude_m"] == pytest.approx((288.15 - t_e) / 6.5e-3, rel=0.02)

"""The top-level scripting API (its docstring examples also run as doctests)."""

import numpy as np
import pytest

import specforce

OPTS = {"wavenumber_range": (640.0, 700.0), "spacing": 0.002, "continuum": False, "gases": ("CO2", "H2O")}


@pytest.fixture(scope="module")
def spec():
    return specforce.spectroscopy()


def test_olr_result_and_its_dataset(spec):
    r = specforce.olr("mls", spectroscopy=spec, **OPTS)
    ds = r.to_dataset()
    assert ds["olr_spectrum"].dims == ("wavenumber",) and ds["flux_up"].dims == ("level",)
    assert ds["wavenumber"].attrs["units"] == "cm-1" and ds["pressure"].attrs["units"] == "Pa"
    assert '"spectroscopy"' in ds.attrs["provenance"] and ds.attrs["profile"] == "mls"
    # the broadband OLR is the integral of the binned spectrum
    width = float(np.diff(ds["wavenumber"].values)[0])
    assert r.olr == pytest.approx(float(ds["olr_spectrum"].sum()) * width, rel=1e-9)
    assert float(ds["olr"]) == r.olr and r.to_dict()["olr_W_m2"] == r.olr
    assert "OLR" in r.summary() and "not an assessment value" in r.summary()


def test_forcing_reuses_spectroscopy_and_matches_the_driver(spec):
    from specforce.forcing.instantaneous import instantaneous_forcing
    from specforce.forcing.scenario import apply_perturbations, parse_change

    r = specforce.radiative_forcing("mls", {"CO2": "2x"}, spectroscopy=spec, **OPTS)
    prof = specforce.load_profile("mls")
    b, p = apply_perturbations(prof, [parse_change("CO2", "2x")])
    ref = instantaneous_forcing(b, p, spec, specforce.settings(**OPTS))
    assert r.tropopause == ref.tropopause and r.name == "mls: CO2 2x"
    ds = r.to_dataset()
    assert ds.attrs["forcing_tropopause_W_m2"] == ref.tropopause
    assert ds["forcing"].dims == ("level",) and ds["spectral_forcing_toa"].dims == ("wavenumber",)
    assert ds.attrs["changes"] == "CO2 330 -> 660 ppm at the surface, 330 -> 660 ppm column mean"


def test_settings_and_spectroscopy_errors():
    from specforce.errors import ScenarioError, SettingsError

    with pytest.raises(SettingsError, match="unknown setting"):
        specforce.settings(resolution=1.0)
    with pytest.raises(SettingsError, match="not a gas specforce knows"):
        specforce.settings(gases=("CO2", "XYZ"))
    with pytest.raises(SettingsError, match="line store"):
        specforce.spectroscopy(builtin=False)
    with pytest.raises(ScenarioError, match="not both"):
        specforce.radiative_forcing("mls", {"CO2": "4x"}, scenario="examples/kestrel_ridge_2xco2.toml")
    with pytest.raises(AttributeError):
        specforce.no_such_function  # noqa: B018

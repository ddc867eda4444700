"""The top-level scripting API (its docstring examples also run as doctests)."""

import numpy as np
import pytest

import specforce

OPTS = {"wavenumber_range": (640.0, 700.0), "spacing": 0.002, "continuum": False, "gases": ("CO2", "H2O")}


@pytest.fixture(scope="module")
def spec():
    return specforce.spectroscopy()


def test_olr_dataset_has_named_dimensions_units_and_provenance(spec):
    ds = specforce.olr("mls", spectroscopy=spec, **OPTS)
    assert ds["olr_spectrum"].dims == ("wavenumber",) and ds["flux_up"].dims == ("level",)
    assert ds["wavenumber"].attrs["units"] == "cm-1" and ds["pressure"].attrs["units"] == "Pa"
    assert '"spectroscopy"' in ds.attrs["provenance"] and ds.attrs["label"] == "mls"
    # the broadband OLR is the integral of the binned spectrum
    width = float(np.diff(ds["wavenumber"].values)[0])
    assert ds.attrs["olr_W_m2"] == pytest.approx(float(ds["olr_spectrum"].sum()) * width, rel=1e-9)


def test_forcing_reuses_spectroscopy_and_matches_the_driver(spec):
    from specforce.forcing import apply_perturbations, instantaneous_forcing, parse_change

    ds = specforce.radiative_forcing("mls", {"CO2": "2x"}, spectroscopy=spec, **OPTS)
    prof = specforce.load_profile("mls")
    b, p = apply_perturbations(prof, [parse_change("CO2", "2x")])
    ref = instantaneous_forcing(b, p, spec, specforce.settings(**OPTS))
    assert ds.attrs["forcing_tropopause_W_m2"] == ref.tropopause
    assert ds["forcing"].dims == ("level",) and ds["spectral_forcing_toa"].dims == ("wavenumber",)


def test_settings_and_spectroscopy_errors():
    with pytest.raises(TypeError, match="unknown setting"):
        specforce.settings(resolution=1.0)
    with pytest.raises(ValueError, match="line store"):
        specforce.spectroscopy(builtin=False)
    with pytest.raises(AttributeError):
        specforce.no_such_function  # noqa: B018

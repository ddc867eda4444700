"""Profile files: the plain-text format, CSV and netCDF, and the bundled profiles."""

import numpy as np
import pytest
import xarray as xr

from specforce.errors import ProfileError
from specforce.io.profiles import BUNDLED_PROFILES, load_profile, read_profile_csv, read_profile_text, write_profile_text


def test_text_and_csv_round_trip(tmp_path):
    prof = load_profile("demo")
    write_profile_text(prof, tmp_path / "p.txt")
    back = read_profile_text(tmp_path / "p.txt")
    assert np.allclose(back.pressure, prof.pressure, rtol=1e-5)
    assert np.allclose(back.vmr["CH4"], prof.vmr["CH4"], rtol=1e-5)
    assert back.surface_emissivity == prof.surface_emissivity
    csvp = tmp_path / "p.csv"
    csvp.write_text("pressure_hPa,temperature_C,H2O_ppmv,CO2_ppmv\n1000,15,8000,420\n500,-20,500,420\n100,-60,5,420\n")
    c = read_profile_csv(csvp)
    assert c.temperature[0] == pytest.approx(288.15) and c.vmr["CO2"][0] == pytest.approx(4.2e-4)
    assert c.altitude[1] > 5000  # computed hypsometrically
    bad = tmp_path / "bad.csv"
    bad.write_text("pressure,temperature_K\n1000,290\n500,260\n100,220\n")
    with pytest.raises(ProfileError, match="column 'pressure' has no unit"):
        read_profile_csv(bad)


def test_bundled_names_and_errors():
    for name in BUNDLED_PROFILES:
        assert load_profile(name).nlevels > 10
    assert load_profile("midlatitude_summer").name == "mls"
    with pytest.raises(ProfileError, match="neither a bundled profile"):
        load_profile("nowhere")


def test_netcdf_profile_round_trip(tmp_path):
    # A user profile from netCDF: variables with units attributes (xarray/h5netcdf).
    xr = pytest.importorskip("xarray")
    prof = load_profile("mlw")
    ds = xr.Dataset(
        {
            "pressure": ("level", prof.pressure / 100, {"units": "hPa"}),
            "temperature": ("level", prof.temperature, {"units": "K"}),
            "altitude": ("level", prof.altitude, {"units": "m"}),
            "H2O": ("level", prof.vmr["H2O"], {"units": "mol mol-1"}),
            "CO2": ("level", prof.vmr["CO2"] * 1e6, {"units": "ppmv"}),
        },
        attrs={"name": "mlw-from-netcdf"},
    )
    path = tmp_path / "p.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    back = load_profile(str(path))
    assert back.name == "mlw-from-netcdf"
    assert np.allclose(back.pressure, prof.pressure) and np.allclose(back.vmr["CO2"], prof.vmr["CO2"])
    ds["CO2"].attrs["units"] = "furlongs"
    ds.to_netcdf(tmp_path / "bad.nc", engine="h5netcdf")
    with pytest.raises(ProfileError, match="variable CO2 has units 'furlongs'"):
        load_profile(str(tmp_path / "bad.nc"))


def test_netcdf_profiles_in_the_usual_layouts(tmp_path):
    # Regression (issue 18): pressure as the dimension coordinate, CF standard names, mol/mol and 1 as
    # mixing-ratio units, and extra variables (lat, time) ignored with a note rather than refused.
    from specforce.errors import ProfileWarning

    prof = load_profile("mls")
    ds = xr.Dataset(
        {
            "ta": ("plev", prof.temperature, {"units": "K", "standard_name": "air_temperature"}),
            "hus_like": ("plev", prof.vmr["H2O"], {"units": "mol/mol", "standard_name": "mole_fraction_of_water_vapor_in_air"}),
            "CO2": ("plev", prof.vmr["CO2"], {"units": "1"}),
            "lat": ((), 45.0, {"units": "degrees_north"}),
        },
        coords={"plev": ("plev", prof.pressure, {"units": "Pa", "standard_name": "air_pressure"})},
    )
    path = tmp_path / "cf.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    with pytest.warns(ProfileWarning, match="ignored lat"):
        back = load_profile(str(path))
    assert np.allclose(back.pressure, prof.pressure) and np.allclose(back.vmr["H2O"], prof.vmr["H2O"])
    assert np.allclose(back.vmr["CO2"], prof.vmr["CO2"]) and back.altitude[-1] > 50000  # hypsometric altitude


def test_csv_errors_name_row_and_column(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("pressure_hPa,temperature_K,H2O_ppmv\n1000,290,8000\n500,warm,500\n100,220,5\n")
    with pytest.raises(ProfileError, match="row 3, column temperature_K: 'warm' is not a number"):
        read_profile_csv(bad)
    bad.write_text("pressure_hPa,temperature_K\n1000,290\n500,260,7\n100,220\n")
    with pytest.raises(ProfileError, match="row 3: 3 values for 2 columns"):
        read_profile_csv(bad)


def test_a_file_that_is_not_a_profile_is_named(tmp_path):
    store = tmp_path / "lines.h5"
    store.write_bytes(b"\x89HDF\r\n\x1a\n" + bytes(100))
    with pytest.raises(ProfileError, match="a damaged HDF5 file"):
        load_profile(str(store))
    records = tmp_path / "lines.par"
    records.write_text(" 21  667.380000 1.000E-19" + " " * 135 + "\n")
    with pytest.raises(ProfileError, match="160-character line records"):
        load_profile(str(records))


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
    import xarray as xr

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
    # Required: netCDF profiles in the usual layouts are read: pressure as the dimension coordinate, CF
    # standard names, mol/mol and 1 as mixing-ratio units, and extra variables (lat, time) ignored with a
    # note rather than refused.
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



# ------------------------------------------------------------------ unit mistakes, odd files, the waiver


def _mls_lines(pressure_scale=1.0, header="altitude_km pressure_hPa temperature_K H2O_ppmv CO2_ppmv",
               co2=400.0, alt_scale=1.0, sep=" "):
    prof = load_profile("mls")
    rows = [sep.join(header.split())]
    for i in range(prof.nlevels):
        rows.append(sep.join(f"{x:.6g}" for x in (prof.altitude[i] / 1000 * alt_scale, prof.pressure[i] / 100 *
                                                   pressure_scale, prof.temperature[i], prof.vmr["H2O"][i] * 1e6, co2)))
    return "\n".join(rows) + "\n"


def test_unit_mistakes_in_files_are_named_with_the_file(tmp_path):
    # kPa values under an hPa header once put the surface at 101 hPa and changed the sign of the TOA forcing
    kpa = tmp_path / "kpa.txt"
    kpa.write_text(_mls_lines(pressure_scale=0.1))
    with pytest.raises(ProfileError, match=r"kpa\.txt: .*level 0 \(line 2\): surface pressure 101\.3 hPa .*kPa under "
                                           r"an hPa header"):
        load_profile(str(kpa))
    co2 = tmp_path / "co2.csv"
    co2.write_text(_mls_lines(co2=0.0004, sep=","))
    with pytest.raises(ProfileError, match=r"co2\.csv: .*level 0 \(row 2\): CO2 0\.0004 ppmv.*mole fraction "
                                           r"\(mol/mol\) under a ppmv"):
        load_profile(str(co2))
    top_down = tmp_path / "top_down.txt"
    lines = _mls_lines(pressure_scale=0.1).splitlines()
    top_down.write_text("\n".join([lines[0]] + lines[:0:-1]) + "\n")
    with pytest.raises(ProfileError, match=r"level 0 \(line 51\): surface pressure 101\.3 hPa"):
        load_profile(str(top_down))
    km = tmp_path / "km.txt"
    km.write_text(_mls_lines(header="altitude_m pressure_hPa temperature_K H2O_ppmv CO2_ppmv"))
    with pytest.raises(ProfileError, match=r"km\.txt: .*km values under an m header"):
        load_profile(str(km))
    # the waiver lets the file through and records what the checks found
    prof = load_profile(str(km), accept_unusual=True)
    assert "km values under an m header" in prof.checks_note


def test_csv_with_a_byte_order_mark_is_read(tmp_path):
    # spreadsheets write UTF-8 CSV with a byte-order mark; it once made the first column unknown
    path = tmp_path / "bom.csv"
    path.write_text(_mls_lines(sep=","), encoding="utf-8-sig")
    assert path.read_bytes().startswith(b"\xef\xbb\xbf")
    assert load_profile(str(path)).nlevels == 50
    text = tmp_path / "bom.txt"
    text.write_text(_mls_lines(), encoding="utf-8-sig")
    assert load_profile(str(text)).nlevels == 50


def test_csv_with_semicolons_is_refused_naming_file_and_row(tmp_path):
    path = tmp_path / "semi.csv"
    path.write_text(_mls_lines(sep=";"))
    with pytest.raises(ProfileError, match=r"semi\.csv, row 1: the columns are separated by ';'.*save it with ','"):
        load_profile(str(path))


def test_two_dimensional_netcdf_profile_points_at_collections(tmp_path):
    prof = load_profile("mls")
    ds = xr.Dataset(
        {"ta": (("time", "plev"), np.stack([prof.temperature] * 3), {"units": "K"}),
         "H2O": (("time", "plev"), np.stack([prof.vmr["H2O"]] * 3), {"units": "1"})},
        coords={"plev": ("plev", prof.pressure, {"units": "Pa"}), "time": [0, 1, 2]},
    )
    path = tmp_path / "many.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    with pytest.raises(ProfileError, match=r"many\.nc: variable ta \(temperature\) is on \(time=3, plev=50\).*"
                                           r"specforce batch run .*ds\.isel\(time=0\)"):
        load_profile(str(path))


def test_the_waiver_is_recorded_in_every_output(tmp_path):
    import json

    import specforce
    from specforce.io.collection import collect_profiles

    path = tmp_path / "upper.txt"
    lines = _mls_lines().splitlines()
    path.write_text("\n".join([lines[0]] + [r for r in lines[1:] if float(r.split()[1]) < 250]) + "\n")
    with pytest.raises(ProfileError, match="accept_unusual=True"):
        specforce.olr(str(path), gases=["CO2"], wavenumber_range=(660.0, 661.0), continuum=False)
    res = specforce.olr(str(path), gases=["CO2"], wavenumber_range=(660.0, 661.0), continuum=False,
                        accept_unusual=True)
    note = res.provenance["profile_checks"]
    assert note.startswith("plausibility checks waived") and "surface pressure 243 hPa" in note
    assert res.to_dict()["profile_checks"] == note
    assert note in res.summary()
    assert res.to_dataset().attrs["profile_checks"] == note
    assert "profile_checks" in json.loads(res.to_dataset().attrs["provenance"])
    # collections (batch runs) record it in their source, which the batch output keeps as its input attribute
    coll = collect_profiles([str(path)], accept_unusual=True)
    assert "plausibility checks waived" in coll.source


def test_every_command_that_reads_profiles_has_the_waiver_switch():
    from click.testing import CliRunner

    from specforce.cli import main

    for cmd in (["olr"], ["forcing"], ["compare"], ["sweep"], ["batch", "run"], ["batch", "pack"]):
        out = CliRunner().invoke(main, [*cmd, "--help"]).output
        assert "--accept-unusual-profile" in out, cmd

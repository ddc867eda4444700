"""Results as files: CF conventions, the profile inside, the record of the change, and reading them back."""

import errno
import json
import os
import subprocess
import sys

import numpy as np
import pytest
import xarray as xr

import specforce
from specforce.errors import OutputPathError, ResultFileError
from specforce.io import files
from specforce.io.results import read_result, write_netcdf

OPTS = {"wavenumber_range": (660.0, 680.0), "continuum": False, "gases": ("CO2", "H2O")}


@pytest.fixture(scope="module")
def forcing():
    return specforce.radiative_forcing("mls", {"CO2": "2x"}, **OPTS)


def test_forcing_file_follows_cf_and_stands_on_its_own(forcing, tmp_path):
    # CF conventions 1.10 (cfconventions.org): global Conventions, title, source, history; units on
    # every variable; standard names from the CF standard-name table where one exists.
    path = tmp_path / "f.nc"
    write_netcdf(forcing.to_dataset(), path)
    with xr.open_dataset(path, engine="h5netcdf") as ds:
        for key in ("Conventions", "title", "source", "history", "references", "comment"):
            assert ds.attrs[key], key
        assert ds.attrs["Conventions"] == "CF-1.10" and "not an assessment value" in ds.attrs["comment"]
        for name, var in ds.data_vars.items():
            assert "units" in var.attrs, name
        standard = {v.attrs.get("standard_name") for v in ds.data_vars.values()} | {ds["pressure"].attrs["standard_name"]}
        assert {"air_pressure", "air_temperature", "mole_fraction_of_carbon_dioxide_in_air",
                "tendency_of_air_temperature_due_to_longwave_heating", "upwelling_longwave_flux_in_air",
                "tropopause_air_pressure"} <= standard
        # the profile's own variables, base and perturbed, so that the file can be read on its own
        assert np.allclose(ds["CO2_perturbed"].values, 2 * ds["CO2"].values)
        assert ds["air_temperature"].attrs["units"] == "K" and ds["CO2"].attrs["units"] == "1"
        assert ds.attrs["changes"] == "CO2 330 -> 660 ppm at the surface, 330 -> 660 ppm column mean"
        assert ds.attrs["forcing_toa_W_m2"] == pytest.approx(forcing.toa)


def test_olr_file_names_cf_quantities(tmp_path):
    r = specforce.olr("saw", **OPTS)
    write_netcdf(r.to_dataset(), tmp_path / "o.nc")
    with xr.open_dataset(tmp_path / "o.nc", engine="h5netcdf") as ds:
        assert ds["olr"].attrs["standard_name"] == "toa_outgoing_longwave_flux"
        assert ds["surface_downwelling_longwave"].attrs["standard_name"] == "surface_downwelling_longwave_flux_in_air"
        assert float(ds["olr"]) == pytest.approx(r.olr)
    d = r.to_dict()
    assert json.loads(json.dumps(d))["heating_rate_K_day"] == pytest.approx(r.heating_rate.tolist())


def test_reading_back_and_files_that_are_not_results(forcing, tmp_path):
    path = tmp_path / "f.nc"
    write_netcdf(forcing.to_dataset(), path)
    base = read_result(f"{path}#base")
    assert np.array_equal(base["olr_spectrum"].values, forcing.base.olr_spectrum)
    other = tmp_path / "other.nc"
    xr.Dataset({"sst": ("x", [1.0, 2.0])}).to_netcdf(other, engine="h5netcdf")
    with pytest.raises(ResultFileError, match="not a specforce result .it holds sst"):
        read_result(other)
    text = tmp_path / "t.nc"
    text.write_text("not netCDF at all")
    with pytest.raises(ResultFileError, match="not a netCDF file"):
        read_result(text)


def _big_dataset():
    """About 1.6 MB of random numbers, more than the small disks below hold."""
    rng = np.random.default_rng(5)
    return xr.Dataset({"olr_spectrum": ("wavenumber", rng.random(200_000))},
                      coords={"wavenumber": np.arange(200_000) * 0.01})


def test_netcdf_write_that_runs_out_of_space_keeps_the_old_file(tmp_path, monkeypatch):
    # The error is injected at the one place that writes HDF5 bytes, so this runs anywhere.
    path = tmp_path / "o.nc"
    path.write_bytes(b"old result")
    write = files._WriteLatch._raw_write

    def write_until_full(self, view):
        if self._raw.tell() + len(view) > 300_000:
            raise OSError(errno.ENOSPC, "No space left on device")
        write(self, view)

    monkeypatch.setattr(files._WriteLatch, "_raw_write", write_until_full)
    with pytest.raises(OutputPathError, match=r"^no space left on device while writing .*o\.nc: .*nothing was "
                                              r"written .*Free space or choose another folder"):
        write_netcdf(_big_dataset(), path)
    assert path.read_bytes() == b"old result" and os.listdir(tmp_path) == ["o.nc"]


_SMALL_DISK_SCRIPT = """
import sys
import numpy as np, xarray as xr
from specforce.io.results import write_netcdf
rng = np.random.default_rng(5)
ds = xr.Dataset({"olr_spectrum": ("wavenumber", rng.random(200_000))})
try:
    write_netcdf(ds, sys.argv[1])
except Exception as exc:
    print(type(exc).__name__, exc)
"""


def test_netcdf_onto_a_full_disk_is_one_clear_error(tmp_path):
    # 'olr --netcdf' onto a full disk crashed (segmentation fault, exit 139) after HDF5 tracebacks.
    # A 256 KiB tmpfs (root only; skipped elsewhere) and a child process, since the failure was a crash.
    small = tmp_path / "small"
    small.mkdir()
    try:
        mount = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", str(small)],
                               capture_output=True, text=True)
    except OSError as exc:
        pytest.skip(f"cannot mount a small tmpfs here: {exc}")
    if mount.returncode != 0:
        pytest.skip(f"cannot mount a small tmpfs here (it needs root): {mount.stderr.strip()}")
    try:
        proc = subprocess.run([sys.executable, "-c", _SMALL_DISK_SCRIPT, str(small / "o.nc")], capture_output=True,
                              text=True, timeout=300)
        left = os.listdir(small)
    finally:
        subprocess.run(["umount", str(small)], check=False)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert proc.stdout.startswith(f"OutputPathError no space left on device while writing {small / 'o.nc'}:")
    assert "Traceback" not in proc.stderr and "Exception ignored" not in proc.stderr, proc.stderr[-2000:]
    assert left == []


def test_settings_stay_typed_until_written(forcing, tmp_path):
    # The result keeps the Settings object; the dict, the netCDF provenance and the text write it out,
    # every field, tuples as lists.
    from specforce.radiation.longwave import Settings

    settings = forcing.provenance["settings"]
    assert isinstance(settings, Settings) and forcing.base.provenance["settings"] is settings
    assert settings.wavenumber_range == (660.0, 680.0) and settings.gases == ("CO2", "H2O")
    expected = {name: (list(v) if isinstance(v, tuple) else v)
                for name in Settings.__dataclass_fields__ for v in (getattr(settings, name),)}
    assert forcing.to_dict()["settings"] == expected and forcing.base.to_dict()["settings"] == expected
    assert expected["wavenumber_range"] == [660.0, 680.0] and expected["gases"] == ["CO2", "H2O"]
    path = tmp_path / "f.nc"
    write_netcdf(forcing.to_dataset(), path)
    with xr.open_dataset(path, engine="h5netcdf") as ds:
        assert json.loads(ds.attrs["provenance"])["settings"] == expected
    assert "clear-sky longwave forcing, range 660-680 cm-1 [W m-2]" in forcing.summary()
    assert "range 660-680 cm-1; continuum off; method fast, graded grid" in forcing.base.summary()

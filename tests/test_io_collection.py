"""Profile collections: the netCDF layout of many profiles (the input of batch runs)."""

import numpy as np
import pytest
import xarray as xr

from specforce.errors import ProfileError
from specforce.io.collection import collect_profiles, read_profile_collection, write_profile_collection
from specforce.io.profiles import load_profile


def _same(a, b):
    assert np.array_equal(a.pressure, b.pressure) and np.array_equal(a.temperature, b.temperature)
    assert np.array_equal(a.altitude, b.altitude) and sorted(a.vmr) == sorted(b.vmr)
    assert all(np.array_equal(a.vmr[g], b.vmr[g]) for g in a.vmr)
    assert a.surface_temperature == b.surface_temperature and a.surface_emissivity == b.surface_emissivity


def test_round_trip_of_profiles_with_different_level_counts(tmp_path):
    short = load_profile("mls")
    short = short.copy(pressure=short.pressure[:30], temperature=short.temperature[:30],
                       altitude=short.altitude[:30], vmr={g: v[:30] for g, v in short.vmr.items()})
    profs = [load_profile("tropical"), short, load_profile("saw")]
    write_profile_collection(collect_profiles(profs, weights=[2, 1, 1], labels=["a", "b", "c"]), tmp_path / "c.nc")
    back = read_profile_collection(tmp_path / "c.nc")
    assert back.dimension == "site" and list(back.labels) == ["a", "b", "c"]
    assert np.array_equal(back.weights, [2.0, 1.0, 1.0])
    for a, b in zip(profs, back.profiles):
        _same(a, b)  # bit for bit, the shorter one unpadded


def test_shared_pressure_levels_and_a_bad_site(tmp_path):
    # The usual reanalysis layout: pressure on the level dimension alone, the rest per site. A site with an
    # impossible temperature is kept as its error; the others are read.
    p = np.array([1000.0, 850, 500, 250, 100, 50, 10]) * 100
    t = np.array([[290, 282, 260, 225, 205, 210, 225], [300, 290, 268, 230, 195, 205, 228],
                  [290, 282, 2600, 225, 205, 210, 225]], dtype=float)
    ds = xr.Dataset({"ta": (("station", "plev"), t, {"units": "K"}),
                     "H2O": (("station", "plev"), np.tile([1e-2, 5e-3, 1e-3, 5e-5, 5e-6, 5e-6, 5e-6], (3, 1)),
                             {"units": "mol/mol"})},
                    coords={"plev": ("plev", p, {"units": "Pa"}), "station": ["north", "south", "broken"]})
    ds.to_netcdf(tmp_path / "r.nc", engine="h5netcdf")
    coll = read_profile_collection(tmp_path / "r.nc")
    assert coll.dimension == "station" and len(coll) == 3 and coll.weights is None
    assert np.array_equal(coll.profiles[1].temperature, t[1]) and np.array_equal(coll.profiles[0].pressure, p)
    assert list(coll.errors) == [2] and "station broken" in coll.errors[2] and "2600 K" in coll.errors[2]


@pytest.mark.parametrize("change, message", [
    (lambda ds: ds.drop_vars("temperature"), "no temperature variable"),
    (lambda ds: ds.expand_dims(time=2).transpose("time", "site", "level"), "one site dimension"),
    (lambda ds: ds.isel(site=0), "that is one profile"),
    (lambda ds: ds.assign(weight=ds["weight"] * -1), "weights must be finite, non-negative"),
])
def test_collection_errors_name_the_problem(tmp_path, change, message):
    write_profile_collection(collect_profiles(["mls", "saw"], weights=[1, 1]), tmp_path / "c.nc")
    with xr.open_dataset(tmp_path / "c.nc", engine="h5netcdf") as ds:
        bad = change(ds.load())
    bad.to_netcdf(tmp_path / "bad.nc", engine="h5netcdf")
    with pytest.raises(ProfileError, match=message):
        read_profile_collection(tmp_path / "bad.nc")


def test_folders_and_unreadable_files(tmp_path):
    from specforce.io.profiles import write_profile_text

    write_profile_text(load_profile("mls"), tmp_path / "a.txt")
    (tmp_path / "b.csv").write_text("pressure_hPa,temperature_K\n1000,290\n")  # one level: unusable
    coll = collect_profiles([tmp_path])
    assert list(coll.labels) == ["a.txt", "b.csv"] and list(coll.errors) == [1]
    with pytest.raises(ProfileError, match="cannot be read, so the collection is not written"):
        write_profile_collection(coll, tmp_path / "c.nc")
    assert not (tmp_path / "c.nc").exists()

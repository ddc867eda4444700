"""OLR comparisons: band sums, identities, file round trips and the command line."""

import json
import pathlib

import numpy as np
import pytest
import xarray as xr
from click.testing import CliRunner

import specforce
from specforce.cli import main
from specforce.errors import ComparisonError
from specforce.forcing.compare import DEFAULT_BANDS, band_sums, bands_from_edges, compare_spectra, smooth_to_resolution

RANGE = ["--range", "600", "740", "--spacing", "0.002", "--no-continuum", "--gases", "CO2,H2O"]
OPTS = {"wavenumber_range": (600.0, 740.0), "spacing": 0.002, "continuum": False, "gases": ("CO2", "H2O")}


@pytest.fixture(scope="module")
def spec():
    return specforce.spectroscopy()


@pytest.fixture(scope="module")
def mls(spec):
    return specforce.olr("mls", spectroscopy=spec, **OPTS)


def test_identical_states_give_zero_everywhere(mls):
    c = compare_spectra(mls, mls)
    assert c.olr_difference == 0.0
    d = c.to_dataset()
    assert d.attrs["olr_difference_W_m2"] == 0.0
    assert np.all(d["olr_difference"].values == 0.0)
    assert np.all(d["band_difference"].values == 0.0)
    assert np.all(d["brightness_temperature_difference"].values == 0.0)


def test_band_sums_add_up_to_the_broadband_difference(spec, mls):
    warm = specforce.olr(specforce.load_profile("mls").with_vmr("CO2", 700e-6), spectroscopy=spec, **OPTS)
    d = compare_spectra(mls, warm, resolution=5.0).to_dataset()
    # the bins tile the range, so the bands add up to the broadband change to rounding
    assert d["band_difference"].sum().item() == pytest.approx(d.attrs["olr_difference_W_m2"], abs=1e-9)
    assert d.attrs["olr_difference_W_m2"] < 0  # more CO2, less OLR
    assert list(d["band"].values) == ["CO2 low wing", "CO2 centre", "CO2 high wing"]
    assert d["band_lower"].values[0] == pytest.approx(600.0) and d["band_upper"].values[-1] == pytest.approx(740.0)
    assert d["brightness_temperature_difference_smoothed"].size == 28


def test_band_helpers():
    nu = np.arange(0.5, 10.0, 1.0)
    sums = band_sums(nu, np.ones_like(nu), bands_from_edges([0, 4, 10]))
    assert [s[3] for s in sums] == [4.0, 6.0]
    with pytest.raises(ComparisonError, match="rising"):
        bands_from_edges([5, 3])
    x, y = smooth_to_resolution(nu, nu, 5.0)
    assert x.tolist() == y.tolist() == [2.5, 7.5]
    assert DEFAULT_BANDS[0][1] == 10.0 and DEFAULT_BANDS[-1][2] == 3000.0
    assert all(a[2] == b[1] for a, b in zip(DEFAULT_BANDS, DEFAULT_BANDS[1:]))  # no gaps, no overlaps


def test_different_grids_are_refused(spec, mls):
    other = specforce.olr("mls", spectroscopy=spec, wavenumber_range=(600.0, 700.0), spacing=0.002, continuum=False,
                            gases=("CO2", "H2O"))
    with pytest.raises(ComparisonError, match="different bins"):
        compare_spectra(mls, other)


def test_compare_command_json_round_trip_and_files(tmp_path):
    run = CliRunner()
    saved = tmp_path / "mls.nc"
    assert run.invoke(main, ["olr", "--profile", "mls", *RANGE, "--netcdf", str(saved)]).exit_code == 0
    scen = tmp_path / "s.toml"
    scen.write_text('name = "more CO2"\nprofile = "mls"\n[[change]]\ngas = "CO2"\nscale = 2.0\n')
    nc, png = tmp_path / "c.nc", tmp_path / "c.png"
    res = run.invoke(main, ["compare", str(saved), str(scen), *RANGE, "--json", "--netcdf", str(nc),
                            "--plot", str(png), "--bands", "600,667,740"])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    ds = xr.open_dataset(nc, engine="h5netcdf")
    # JSON and netCDF carry the same numbers
    assert out["olr_difference_W_m2"] == pytest.approx(ds.attrs["olr_difference_W_m2"], rel=1e-12)
    assert [b["difference_W_m2"] for b in out["bands"]] == pytest.approx(ds["band_difference"].values.tolist())
    assert [b["band"] for b in out["bands"]] == ["600-667", "667-740"]
    assert out["label_b"] == "more CO2" and out["olr_difference_W_m2"] < 0
    assert out["provenance_b"]["profile"] == "mls"
    ds.close()
    assert png.stat().st_size > 10_000


def test_two_line_sources_for_one_atmosphere(tmp_path):
    # the built-in lines written to a store and read back must give the same OLR as the built-in set
    run = CliRunner()
    store = tmp_path / "gen.h5"
    assert run.invoke(main, ["lines", "generate", "-o", str(store)]).exit_code == 0
    res = run.invoke(main, ["compare", "mls", "--lines-b", str(store), *RANGE, "--json"])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    assert out["olr_difference_W_m2"] == pytest.approx(0.0, abs=1e-9)
    assert "built-in" in out["label_a"] and str(store) in out["label_b"]
    bad = run.invoke(main, ["compare", "mls"])
    assert bad.exit_code != 0 and "--lines-b" in bad.output


def test_compare_says_what_a_wrong_file_is(tmp_path):
    # Required: a line store or an arbitrary CSV given as a state is named for what it is,
    # with no traceback, before any computation.
    from specforce.io.linerecords import format_record
    from specforce.io.lineimport import import_lines

    rec = format_record(molecule=2, isotopologue=1, wavenumber=667.0, intensity=1e-21, einstein_a=1.0,
                        gamma_air=0.07, gamma_self=0.09, lower_energy=100.0, n_air=0.75, delta_air=0.0,
                        g_upper=3.0, g_lower=1.0)  # an invented line
    (tmp_path / "a.par").write_text(rec + "\n")
    import_lines([tmp_path / "a.par"], tmp_path / "store.h5")
    (tmp_path / "table.csv").write_text("station,value\nA,1\n")
    runner = CliRunner()
    res = runner.invoke(main, ["compare", str(tmp_path / "store.h5"), "mls"])
    assert res.exit_code != 0 and "is a specforce line store" in res.output and "Traceback" not in res.output
    res = runner.invoke(main, ["compare", str(tmp_path / "table.csv"), "mls"])
    assert res.exit_code != 0 and "is a text file beginning 'station,value'" in res.output
    assert isinstance(res.exception, SystemExit)  # a message, not an uncaught exception


@pytest.mark.parametrize("edges, expected", [
    ("600,abc,700", "'abc' in '600,abc,700' is not a wavenumber"),
    ("600,inf", "'inf' in '600,inf' is not a wavenumber"),
    ("700,600", "rising"),
])
def test_bad_band_edges_are_an_error_naming_bands(edges, expected):
    # A word or a falling edge in --bands is the user's mistake: a message naming the option, no traceback.
    res = CliRunner().invoke(main, ["compare", "mls", "tropical", "--bands", edges, *RANGE])
    assert res.exit_code == 2, res.output
    assert "--bands" in res.output and expected in res.output and "e.g. --bands 10,550" in res.output
    assert res.exception is None or isinstance(res.exception, SystemExit)


README = pathlib.Path(__file__).parent.parent / "README.md"


def test_readme_names_the_bands_compare_prints():
    # The README's list of default bands must be the names and edges the command prints.
    text = README.read_text()
    paragraph = text[text.index("`compare` prints the broadband OLR"):]
    paragraph = paragraph[:paragraph.index("\n")]
    for name, lo, hi in DEFAULT_BANDS:
        assert f"{name} {lo:g}-{hi:g}" in paragraph, name


def test_readme_compares_a_scenario_with_its_own_profile():
    # The README's "profile against a scenario's perturbed state" example must name the scenario's own
    # profile, so that the difference is the scenario's change and not another atmosphere.
    import tomllib

    line = next(x for x in README.read_text().splitlines() if x.startswith("specforce compare ") and ".toml" in x)
    state_a, scenario = line.split()[2:4]
    with open(README.parent / scenario, "rb") as fh:
        assert tomllib.load(fh)["profile"] == state_a


def _invented_comparison():
    """A flat spectrum against one with a dip at the CO2 band centre (invented), 600-740 cm-1."""
    nu = np.arange(600.05, 740.0, 0.1)
    a = xr.Dataset({"olr_spectrum": ("wavenumber", np.full(nu.size, 0.2))}, coords={"wavenumber": nu},
                   attrs={"label": "flat", "provenance": json.dumps({"profile": "mls"})})
    b = xr.Dataset({"olr_spectrum": ("wavenumber", 0.2 - 0.05 * np.exp(-((nu - 667.0) / 20.0) ** 2))},
                   coords={"wavenumber": nu}, attrs={"label": "dip"})
    return compare_spectra(a, b, resolution=5.0)


def test_comparison_renders_as_dataset_dict_and_text():
    # The comparison's one rendering (specforce.io.comparison_results): the keys, variables and
    # attributes files and scripts rely on, and the band table (0.2 W m-2 (cm-1)-1 over 140 cm-1 is 28 W m-2)
    c = _invented_comparison()
    d = c.to_dict()
    assert list(d) == ["label_a", "label_b", "olr_a_W_m2", "olr_b_W_m2", "olr_difference_W_m2", "bands",
                       "provenance_a", "provenance_b", "caution"]
    assert d["olr_a_W_m2"] == pytest.approx(28.0) and d["provenance_a"] == {"profile": "mls"}
    assert d["provenance_b"] is None
    assert list(d["bands"][1]) == ["band", "lower_cm-1", "upper_cm-1", "olr_a_W_m2", "olr_b_W_m2", "difference_W_m2"]
    assert d["bands"][1]["band"] == "CO2 centre" and d["bands"][1]["olr_a_W_m2"] == pytest.approx(16.0)
    ds = c.to_dataset()
    assert list(ds.data_vars) == ["olr_spectrum_a", "olr_spectrum_b", "olr_difference", "brightness_temperature_a",
                                  "brightness_temperature_b", "brightness_temperature_difference", "band_olr_a",
                                  "band_olr_b", "band_difference", "brightness_temperature_difference_smoothed"]
    assert list(ds.coords) == ["wavenumber", "band", "band_lower", "band_upper", "wavenumber_smoothed"]
    assert sorted(ds.attrs) == ["Conventions", "comment", "label_a", "label_b", "olr_a_W_m2", "olr_b_W_m2",
                                "olr_difference_W_m2", "provenance_a", "provenance_b", "smoothing_cm-1", "source",
                                "title"]
    assert ds.attrs["olr_difference_W_m2"] == pytest.approx(d["olr_difference_W_m2"])
    assert ds.attrs["smoothing_cm-1"] == 5.0 and ds["wavenumber_smoothed"].size == 28
    assert c.summary().splitlines()[:8] == [
        "A: flat", "B: dip", "  OLR A 28.000, B 26.228, B - A -1.772 W m-2",
        "  band                      cm-1         A         B    B - A  [W m-2]",
        "  CO2 low wing         600-630       6.000     5.992   -0.008",
        "  CO2 centre           630-710      16.000    14.238   -1.762",
        "  CO2 high wing        710-740       6.000     5.998   -0.002",
        "  sum of bands                     -1.772"]

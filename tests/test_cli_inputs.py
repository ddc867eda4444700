"""Bad input at the command line: each way it once got through is now refused with a message.

Each case must end in a one-line domain error that names the option, file or field, before any
computation (the whole module runs in a few seconds), with no traceback and no file written.
"""

import json
import os

import pytest
from click.testing import CliRunner

from specforce.cli import main
from specforce.io.linerecords import format_record

BASE = dict(molecule=2, isotopologue=1, intensity=1e-21, gamma_air=0.07, gamma_self=0.09,
            lower_energy=100.0, n_air=0.75, g_upper=3.0, g_lower=1.0)  # invented lines


def _par(path, wns, **over):
    path.write_text("\n".join(format_record(**{**BASE, **over, "wavenumber": w}) for w in wns) + "\n")
    return str(path)


def _fails(args, *expected):
    res = CliRunner().invoke(main, args)
    assert res.exit_code != 0, res.output
    assert isinstance(res.exception, SystemExit), res.exception  # a message, not an uncaught exception
    for text in expected:
        assert text in res.output, res.output
    return res.output


# Required: each option has a valid range, and a value outside it (a negative --cutoff, --refine 0, a
# negative --smooth, a --spacing coarser than the output bins, molecules --temperature -5) is refused with a
# message, never used or ended in a traceback.
@pytest.mark.parametrize("args, expected", [
    (["forcing", "--co2", "2x", "--cutoff", "-5"], "'--cutoff': -5.0 is not in the range x>=0.0"),
    (["forcing", "--co2", "2x", "--refine", "0"], "'--refine': 0 is not in the range 1<=x<=16"),
    (["forcing", "--co2", "2x", "--angles", "0"], "'--angles'"),
    (["forcing", "--co2", "2x", "--spacing", "50"], "spacing must be positive and at most the output bins"),
    (["forcing", "--co2", "2x", "--spacing", "0"], "'--spacing'"),
    (["forcing", "--co2", "2x", "--range", "800", "500"], "range"),
    (["compare", "mls", "mls", "--smooth", "-5"], "'--smooth': -5.0 is not in the range x>=0.0"),
    (["sweep", "--gas", "CO2", "--steps", "1"], "'--steps'"),
    (["molecules", "--temperature", "-5"], "'--temperature': -5.0 is not in the range"),
    (["forcing", "--co2", "2x", "--gases", "XYZ"], "XYZ is not a gas specforce knows"),
    (["forcing", "--co2", "-2x"], "CO2"),
    (["forcing", "--co2", "2 apples"], "CO2"),
])
def test_options_out_of_range_are_errors(args, expected):
    _fails(args, expected)


@pytest.mark.parametrize("pressure", ["5000", "0.00001"])
def test_tropopause_outside_the_profile_is_an_error(pressure):
    # Required: refused, never moved silently to the surface
    _fails(["forcing", "--co2", "2x", "--tropopause", pressure], "outside the profile 'mls'", "give a pressure within it")


def test_responses_refuse_a_partial_range():
    # Required: the responses need the whole longwave spectrum; over 500-800 cm-1 they are meaningless
    _fails(["forcing", "--co2", "2x", "--responses", "--range", "500", "800"], "need the whole longwave spectrum")


def test_scenario_with_gas_switches_is_an_error(tmp_path):
    # Required: --scenario with a gas switch is refused, never one of the two dropped
    scen = tmp_path / "s.toml"
    scen.write_text('profile = "mls"\n[[change]]\ngas = "CO2"\nscale = 2\n')
    _fails(["forcing", "--scenario", str(scen), "--co2", "4x"], "--co2")
    _fails(["forcing", "--scenario", str(scen), "--profile", "tropical"], "--profile")
    scen.write_text('profile = "mls"\n[[change]]\ngas = "CO2"\nscale = 2\nset = "560ppm"\n')
    _fails(["forcing", "--scenario", str(scen)], str(scen), "change 1 (CO2): give exactly one of scale, set")


def test_profile_in_pascals_under_an_hpa_header(tmp_path):
    # Required: refused as a likely unit mistake (the surface would be at 101,300 hPa)
    rows = [(101300, 288, 7000), (50000, 255, 500), (10000, 217, 4), (100, 270, 5)]
    path = tmp_path / "pa.csv"
    path.write_text("pressure_hPa,temperature_K,H2O_ppmv\n" + "".join(f"{p},{t},{q}\n" for p, t, q in rows))
    _fails(["forcing", "--profile", str(path), "--co2", "2x"], "profile 'pa.csv'", "given in Pa under an hPa header")


@pytest.mark.parametrize("option, name, expected", [
    ("--netcdf", os.path.join("missing-folder", "f.nc"), "does not exist; create it first"),
    ("--plot", "f.xyz", "the suffix must be one of .png, .pdf, .svg"),
    ("--netcdf", ".", "is a directory"),
])
def test_output_paths_are_checked_before_computing(tmp_path, option, name, expected):
    target = str(tmp_path / name) if name != "." else str(tmp_path)
    out = _fails(["forcing", "--co2", "2x", option, target], expected, target)
    assert ".partial-" not in out and ".probe-" not in out  # the user's name, never a hidden one
    assert sorted(os.listdir(tmp_path)) == []


def test_unwritable_place_is_found_before_computing(tmp_path):
    # permission bits alone do not tell (root, read-only mounts): specforce tries to create a file
    if not os.path.isdir("/proc/self"):
        pytest.skip("needs a /proc file system, where no file can be created")
    _fails(["olr", "--netcdf", "/proc/specforce-test.nc"], "cannot create files in /proc")


def test_empty_import_is_an_error(tmp_path):
    (tmp_path / "empty.par").write_text("")
    _fails(["lines", "import", str(tmp_path / "empty.par"), "-o", str(tmp_path / "s.h5")], "empty.par")
    assert not (tmp_path / "s.h5").exists()


def test_duplicates_are_counted_and_can_be_dropped(tmp_path):
    a = _par(tmp_path / "a.par", [500.0, 600.0, 600.0, 700.0])
    r = CliRunner()
    res = r.invoke(main, ["lines", "import", a, a, "-o", str(tmp_path / "s.h5")])
    assert res.exit_code == 0, res.output
    assert "twice" in res.output or "same source" in res.output, res.output
    assert "duplicate" in res.output and "--drop-duplicates" in res.output, res.output
    info = json.loads(r.invoke(main, ["lines", "info", str(tmp_path / "s.h5"), "--json"]).output)
    assert info["total_lines"] == 8
    res = r.invoke(main, ["lines", "import", a, "-o", str(tmp_path / "d.h5"), "--drop-duplicates"])
    assert res.exit_code == 0, res.output
    info = json.loads(r.invoke(main, ["lines", "info", str(tmp_path / "d.h5"), "--json"]).output)
    assert info["total_lines"] == 3


def test_select_that_matches_nothing_says_so(tmp_path):
    store = str(tmp_path / "s.h5")
    assert CliRunner().invoke(main, ["lines", "import", _par(tmp_path / "a.par", [500.0]), "-o", store]).exit_code == 0
    _fails(["lines", "select", store, "--molecule", "CH4", "-o", str(tmp_path / "sel.h5")],
           "no line passes the selection", "nothing written")
    assert not (tmp_path / "sel.h5").exists()


def test_leftovers_are_listed_and_removed(tmp_path):
    store = str(tmp_path / "s.h5")
    assert CliRunner().invoke(main, ["lines", "import", _par(tmp_path / "a.par", [500.0]), "-o", store]).exit_code == 0
    stale = tmp_path / ".s.h5.partial-999999999-abc"  # a process id that cannot be alive
    stale.write_bytes(b"x" * 1000)
    r = CliRunner()
    res = r.invoke(main, ["lines", "info", store])
    assert "leftover" in res.output and stale.name in res.output, res.output
    res = r.invoke(main, ["leftovers", str(tmp_path)])
    assert stale.name in res.output and stale.exists()
    res = r.invoke(main, ["leftovers", str(tmp_path), "--remove"])
    assert res.exit_code == 0 and not stale.exists()


# An output that is one of the command's inputs would replace that input with the results (batch run
# coll.nc -o coll.nc replaced the profile collection): every command refuses it before computing.
# The inputs are placeholder bytes, since the check comes before anything is read.
@pytest.mark.parametrize("args, expected", [
    (["olr", "--profile", "{p.nc}", "--netcdf", "{p.nc}"], "--netcdf {p.nc} is the same file as the input --profile"),
    (["olr", "--profile", "{link.nc}", "--netcdf", "{p.nc}"], "same file as the input --profile {link.nc}"),
    (["olr", "--lines", "{l.png}", "--plot", "{l.png}"], "--plot {l.png} is the same file as the input --lines"),
    (["forcing", "--co2", "2x", "--continuum", "{c.nc}", "--netcdf", "{c.nc}"], "the input --continuum"),
    (["forcing", "--scenario", "{s.toml}", "--netcdf", "{p.nc}"], "the input --scenario {s.toml}'s profile"),
    (["forcing", "--profile", "{p.nc}", "--co2", "2x", "--netcdf", "{p.nc}"], "the input --profile"),
    (["compare", "{p.nc}#base", "mls", "--netcdf", "{p.nc}"], "the input STATE_A {p.nc}"),
    (["compare", "mls", "{s.toml}", "--netcdf", "{p.nc}"], "the input STATE_B {s.toml}'s profile"),
    (["compare", "mls", "--lines-b", "{c.nc}", "--netcdf", "{c.nc}"], "the input --lines-b"),
    (["sweep", "--gas", "CO2", "--from", "1x", "--to", "2x", "--profile", "{p.nc}:0.5", "--netcdf", "{p.nc}"],
     "the input --profile {p.nc}"),
    (["batch", "run", "{p.nc}", "--co2", "2x", "-o", "{p.nc}"], "-o {p.nc} is the same file as the input INPUTS"),
    (["batch", "run", "mls", "--lines", "{o.nc.log}", "-o", "{o.nc}"], "the log of -o {o.nc.log}"),
    (["batch", "run", "{o.nc.parts/p.nc}", "-o", "{o.nc}"], "the parts folder of -o {o.nc.parts} is the folder "
                                                           "that holds the input INPUTS {o.nc.parts/p.nc}"),
    (["batch", "pack", "mls", "{p.nc}", "-o", "{p.nc}"], "-o {p.nc} is the same file as the input INPUTS"),
    (["lines", "import", "{a.par}", "{s.h5}", "-o", "{s.h5}"], "-o {s.h5} is the same file as the input FILES"),
    (["lines", "select", "{s.h5}", "-o", "{s.h5}"], "-o {s.h5} is the same file as the input STORE"),
    (["lines", "generate", "--molecule", "CO2", "-o", "{table.h5}"], "the same file as the input table"),
])
def test_an_output_over_an_input_is_refused_before_computing(tmp_path, args, expected):
    from specforce import linedata

    (tmp_path / "o.nc.parts").mkdir()
    for name in ("p.nc", "c.nc", "l.png", "s.h5", "a.par", "o.nc.log", "o.nc.parts/p.nc"):
        (tmp_path / name).write_bytes(b"an input\n")
    (tmp_path / "s.toml").write_text('profile = "p.nc"\n[[change]]\ngas = "CO2"\nscale = 2.0\n')
    os.link(tmp_path / "p.nc", tmp_path / "link.nc")
    # a link to a bundled table: were the check missing, only the link would be replaced
    os.symlink(os.path.join(os.path.dirname(linedata.__file__), "co2_polyads.toml"), tmp_path / "table.h5")
    before = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()}

    def fill(text):
        for name in ("p.nc", "link.nc", "c.nc", "l.png", "s.toml", "s.h5", "a.par", "o.nc.log", "o.nc.parts/p.nc",
                     "o.nc.parts", "o.nc", "table.h5"):
            text = text.replace("{" + name + "}", str(tmp_path / name))
        return text

    _fails([fill(a) for a in args], fill(expected), "give the output another path")
    assert {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()} == before
    assert not (tmp_path / "o.nc").exists() and (tmp_path / "table.h5").is_symlink()


def test_an_output_that_does_not_exist_yet_is_no_input(tmp_path):
    from specforce.io.files import check_outputs_not_inputs

    missing = str(tmp_path / "new.nc")
    check_outputs_not_inputs([("--netcdf", missing)], [("--profile", missing), ("--profile", "mls"), ("--lines", None)])

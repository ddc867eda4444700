"""The command line, through click's CliRunner (it must only call the public API)."""

import json

import pytest
from click.testing import CliRunner

from specforce.cli import main
from specforce.io.linerecords import format_record

BASE = dict(molecule=2, isotopologue=1, intensity=1e-21, gamma_air=0.07, gamma_self=0.09,
            lower_energy=100.0, n_air=0.75, g_upper=3.0, g_lower=1.0)  # invented lines


def _par(path, wns, **over):
    path.write_text("\n".join(format_record(**{**BASE, **over, "wavenumber": w}) for w in wns) + "\n")
    return str(path)


def test_lines_import_info_select(tmp_path):
    r = CliRunner()
    a = _par(tmp_path / "a.par", [500.0, 600.0, 700.0])
    b = _par(tmp_path / "b.par", [650.0], molecule=1)
    store = str(tmp_path / "s.h5")
    res = r.invoke(main, ["lines", "import", a, b, "-o", store])
    assert res.exit_code == 0, res.output
    assert "3 records" in res.output and "wrote" in res.output
    res = r.invoke(main, ["lines", "info", store, "--json"])
    assert res.exit_code == 0, res.output
    info = json.loads(res.output)
    assert info["total_lines"] == 4
    assert info["molecules"]["CO2"] == {"lines": 3, "wavenumber_min": 500.0, "wavenumber_max": 700.0}
    assert info["molecules"]["H2O"]["lines"] == 1
    res = r.invoke(main, ["lines", "info", store])
    assert "CO2" in res.output and "4 lines" in res.output
    out = str(tmp_path / "sel.h5")
    res = r.invoke(main, ["lines", "select", store, "--molecule", "CO2", "--range", "550", "850",
                          "--min-intensity", "1e-25", "--temperature", "250", "-o", out])
    assert res.exit_code == 0, res.output
    assert json.loads(r.invoke(main, ["lines", "info", out, "--json"]).output)["total_lines"] == 2


def test_import_errors_are_clear_and_skip_is_available(tmp_path):
    r = CliRunner()
    bad = tmp_path / "bad.par"
    bad.write_text(format_record(**{**BASE, "wavenumber": 1.0}) + "\n" + "short line\n")
    res = r.invoke(main, ["lines", "import", str(bad), "-o", str(tmp_path / "s.h5")])
    assert res.exit_code != 0
    assert "line 2" in res.output and "expected 160" in res.output and "--skip-bad" in res.output
    assert not (tmp_path / "s.h5").exists()
    res = r.invoke(main, ["lines", "import", str(bad), "-o", str(tmp_path / "s.h5"), "--skip-bad"])
    assert res.exit_code == 0 and "1 skipped (1 wrong record length)" in res.output


def test_olr_command_contract(tmp_path):
    # --gases none: a transparent atmosphere, so OLR is the surface's emission in the range.
    r = CliRunner()
    res = r.invoke(main, ["olr", "--profile", "tropical", "--gases", "none", "--range", "500", "600", "--json",
                          "--netcdf", str(tmp_path / "o.nc"), "--plot", str(tmp_path / "o.png")])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    for key in ("olr_W_m2", "surface_down_W_m2", "profile", "settings", "spectroscopy"):
        assert key in out
    assert out["surface_down_W_m2"] == 0.0 and out["gases"] == []
    import math

    from scipy import integrate

    from specforce.radiation.transfer import planck

    inside = math.pi * integrate.quad(lambda v: float(planck(v, 299.7)), 500, 600)[0]
    assert out["olr_W_m2"] == pytest.approx(inside, rel=1e-6)
    assert (tmp_path / "o.png").stat().st_size > 1000
    import xarray as xr

    with xr.open_dataset(tmp_path / "o.nc") as ds:
        assert ds["olr_spectrum"].attrs["units"] == "W m-2 (cm-1)-1"
        assert ds.attrs["olr_W_m2"] == pytest.approx(out["olr_W_m2"])
    bad = r.invoke(main, ["olr", "--profile", "nowhere"])
    assert bad.exit_code != 0 and "neither a bundled profile" in bad.output


def test_lines_generate_writes_an_ordinary_store(tmp_path):
    r = CliRunner()
    res = r.invoke(main, ["lines", "generate", "-o", str(tmp_path / "gen.h5")])
    assert res.exit_code == 0, res.output
    info = json.loads(r.invoke(main, ["lines", "info", str(tmp_path / "gen.h5"), "--json"]).output)
    # the CO2 polyad model: about 42,000 lines, the lowest in the P branch of the 20003-11101 band (471.5 cm-1)
    assert info["molecules"]["CO2"]["lines"] > 30000
    assert 250 < info["molecules"]["CO2"]["wavenumber_min"] < 471.5
    assert info["molecules"]["H2O"]["lines"] > 4000 and info["molecules"]["CH4"]["lines"] > 1000
    assert info["molecules"]["N2O"]["lines"] > 3000 and info["molecules"]["O3"]["lines"] > 10000
    res = r.invoke(main, ["lines", "generate", "--molecule", "h2o", "-o", str(tmp_path / "w.h5")])
    info = json.loads(r.invoke(main, ["lines", "info", str(tmp_path / "w.h5"), "--json"]).output)
    assert list(info["molecules"]) == ["H2O"]
    res = r.invoke(main, ["lines", "generate", "--molecule", "CO", "-o", str(tmp_path / "x.h5")])
    assert res.exit_code != 0 and "no line generator for CO" in res.output


def test_progress_shows_no_estimate_until_it_means_something():
    # Required: no estimate of the remaining time before 10 % of the work and 3 s (earlier, the rate is
    # not yet known and an estimate can be off by a factor 50); then the remaining time from the average
    # rate so far.
    from specforce.cli.common import _Progress

    class Bar:
        def update(self, n):
            pass

    p = _Progress(Bar(), 1000)
    p(0.5)
    assert p.label() == ""  # half done, but too early in time
    p = _Progress(Bar(), 1000)
    p.start -= 20.0
    p(0.05)  # 5 % after 20 s: still no estimate
    assert p.label() == ""
    p(0.5)  # half after 20 s: 20 s left
    assert p.label() in ("20 s left", "21 s left")


def test_cut_off_defaults_of_the_command_line_are_the_api_defaults():
    # The command line repeats the two cut-off defaults as numbers (importing specforce.absorption.linesum to read them
    # would cost about a second at every start): they must stay equal to the API's.
    from specforce.absorption.linesum import CO2_CHI_CUTOFF, DEFAULT_CUTOFF
    from specforce.radiation.longwave import Settings

    command = main.commands["forcing"]
    defaults = {p.name: p.default for p in command.params}
    assert defaults["cutoff"] == DEFAULT_CUTOFF == Settings().cutoff
    assert defaults["co2_cutoff"] == CO2_CHI_CUTOFF == Settings().co2_cutoff


# --lines-only: an imported line list alone, without built-in lines filling in, on every computing command
# (the only way to check specforce against a list of one's own from the command line).

_SMALL = ["--range", "655", "675", "--gases", "CO2", "--no-continuum", "--no-co2-chi", "--angles", "2"]


@pytest.mark.parametrize("command", [
    ["olr"], ["forcing", "--co2", "2x"], ["sweep", "--gas", "CO2", "--from", "0.5x", "--to", "2x", "--steps", "2"],
    ["compare", "mls", "tropical"], ["batch", "run", "mls", "-o", "{tmp}/b.nc", "--scheduler", "serial"],
])
def test_lines_only_without_lines_is_an_error(tmp_path, command):
    args = [a.replace("{tmp}", str(tmp_path)) for a in command]
    res = CliRunner().invoke(main, [*args, *_SMALL, "--lines-only"])
    assert res.exit_code != 0 and "--lines-only uses an imported line list alone" in res.output, res.output
    assert "--lines STORE" in res.output and not (tmp_path / "b.nc").exists()


@pytest.fixture(scope="module")
def co2_store(tmp_path_factory):
    d = tmp_path_factory.mktemp("only")
    store = str(d / "co2.h5")
    res = CliRunner().invoke(main, ["lines", "import", _par(d / "co2.par", [662.0, 665.0, 668.0]), "-o", store])
    assert res.exit_code == 0, res.output
    return store


def test_lines_only_uses_the_store_alone(co2_store, tmp_path):
    r = CliRunner()
    alone = r.invoke(main, ["olr", *_SMALL, "--lines", co2_store, "--lines-only", "--json"])
    assert alone.exit_code == 0, alone.output
    topped = r.invoke(main, ["olr", *_SMALL, "--lines", co2_store, "--json"])
    a, b = json.loads(alone.stdout), json.loads(topped.stdout)  # stdout: the top-up warning goes to stderr
    assert "warning: CO2: the imported lines cover" in topped.stderr and not alone.stderr
    assert a["spectroscopy"]["kind"] == "line store" and b["spectroscopy"]["kind"] == "combined"
    # three invented weak lines absorb far less than the built-in 15 um band that tops them up
    assert a["olr_W_m2"] > b["olr_W_m2"] + 1.0
    forcing = r.invoke(main, ["forcing", "--co2", "2x", *_SMALL, "--lines", co2_store, "--lines-only", "--json"])
    f = json.loads(forcing.stdout)
    assert f["spectroscopy"]["kind"] == "line store" and f["spectroscopy_accuracy"] == []  # no built-in lines used
    # compare: A with the store alone, B with the built-in lines
    cmp_ = r.invoke(main, ["compare", "mls", "--lines-b", "builtin", *_SMALL, "--lines", co2_store, "--lines-only",
                           "--json"])
    assert cmp_.exit_code == 0, cmp_.output
    assert json.loads(cmp_.stdout)["olr_difference_W_m2"] < -1.0
    batch = r.invoke(main, ["batch", "run", "mls", "-o", str(tmp_path / "b.nc"), "--scheduler", "serial", *_SMALL,
                            "--lines", co2_store, "--lines-only", "--json"])
    assert batch.exit_code == 0, batch.output
    from specforce.io.batchfiles import read_batch

    with read_batch(tmp_path / "b.nc") as ds:
        assert float(ds["olr"][0]) == pytest.approx(a["olr_W_m2"], rel=1e-12)  # the same store alone


def test_lines_only_with_a_real_list(real_lines, tmp_path):
    r = CliRunner()
    store = str(tmp_path / "co2.h5")
    assert r.invoke(main, ["lines", "import", str(real_lines / "sample_CO2.par"), "-o", store]).exit_code == 0
    args = ["--range", "480", "500", "--gases", "CO2", "--no-continuum", "--no-co2-chi", "--angles", "2", "--json"]
    alone = json.loads(r.invoke(main, ["olr", *args, "--lines", store, "--lines-only"]).stdout)
    assert alone["spectroscopy"]["kind"] == "line store" and alone["spectroscopy"]["store"].endswith("co2.h5")


def test_progress_bar_draws_on_a_terminal(monkeypatch):
    # click draws the bar, label included, as soon as it is entered: the label must work before any
    # progress is reported (it raised KeyError, so every long command failed in a terminal).
    import io

    from specforce.cli.common import _progress

    class Terminal(io.StringIO):
        def isatty(self):
            return True

    screen = Terminal()
    monkeypatch.setattr("sys.stderr", screen)
    with _progress("computing", length=10) as progress:
        progress(0.5)
        progress.add(5)
    assert "computing" in screen.getvalue() and "100%" in screen.getvalue()
    assert progress.done == 10

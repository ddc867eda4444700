"""Fuzzing every kind of user input: line records, profile files (CSV, text, netCDF),
scenario files and command options.

Each generated case must end in a specforce domain error (a :class:`SpecforceError`, which the
command line prints as one line) or in a valid result, with no other exception, no numpy
RuntimeWarning and no temporary or partial file left behind. 2,000 cases per kind (marked slow),
and a quick run of 100 per kind in the default test run.

The command-option fuzz replaces the radiative-transfer engine with a probe that checks what it
is given and stops there: what is fuzzed is everything between the user and the engine
(parsing, validation, output-path checks), and the engine's own correctness is tested elsewhere.
"""

import math
import os
import shutil
import warnings

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from specforce.radiation.atmosphere import GASES, Profile
from specforce.errors import SpecforceError, SpecforceWarning
from specforce.io.profiles import load_profile
from specforce.io.lineimport import import_lines
from specforce.io.linerecords import format_record, read_records
from specforce.forcing.scenario import apply_perturbations, load_scenario

EXAMPLE_TABLE = os.path.join(os.path.dirname(__file__), os.pardir, os.pardir, "examples", "invented_continuum_table.txt")

# Each fuzz test runs twice: QUICK cases in the default run, and CASES under the slow marker.
CASES = 2000
QUICK = 100


def _fuzz(examples):
    return settings(max_examples=examples, deadline=None, derandomize=True, database=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])


def _quick_and_full(body, **strategies):
    """The fuzz test ``body`` with QUICK cases, and with CASES cases marked slow."""
    quick = _fuzz(QUICK)(given(**strategies)(body))
    full = pytest.mark.slow(_fuzz(CASES)(given(**strategies)(body)))
    return quick, full

printable = st.characters(min_codepoint=32, max_codepoint=126)


def _clean(folder):
    """No temporary, partial or probe file may remain."""
    names = [n for n in os.listdir(folder) if ".partial-" in n or ".probe-" in n]
    assert names == [], names


def _strict():
    """Warnings as errors, except specforce's own (which are the documented way to note things)."""
    ctx = warnings.catch_warnings()
    ctx.__enter__()
    warnings.simplefilter("error")
    warnings.simplefilter("ignore", SpecforceWarning)
    return ctx



def _load_and_check(path):
    """Load a generated profile file: a domain error naming it, or a profile that passes every check."""
    ctx = _strict()
    try:
        prof = load_profile(str(path))
    except SpecforceError as exc:
        event("domain error")
        assert str(path) in str(exc) or "profile '" in str(exc), exc
    else:
        event("valid")
        _check_profile(prof)
    finally:
        ctx.__exit__(None, None, None)

def _check_profile(p):
    assert isinstance(p, Profile)
    assert np.all(np.isfinite(p.pressure)) and np.all(np.diff(p.pressure) < 0) and p.pressure[0] <= 1.1e5
    assert np.all((p.temperature >= 100) & (p.temperature <= 400))
    assert np.all(np.diff(p.altitude) > 0) and p.altitude[0] == 0
    for v in p.vmr.values():
        assert np.all(np.isfinite(v) & (v >= 0) & (v < 1))
    assert 100 <= p.surface_temperature <= 400 and 0 <= p.surface_emissivity <= 1


# ------------------------------------------------------------------ line records

GOOD = format_record(molecule=1, isotopologue=1, wavenumber=1234.5678, intensity=1.5e-22, einstein_a=0.5,
                     gamma_air=0.08, gamma_self=0.4, lower_energy=300.0, n_air=0.7, delta_air=-0.002,
                     g_upper=3.0, g_lower=1.0)  # an invented line


@st.composite
def mangled_record(draw):
    rec = list(GOOD)
    for _ in range(draw(st.integers(1, 8))):
        rec[draw(st.integers(0, 159))] = draw(printable)
    text = "".join(rec)
    cut = draw(st.integers(0, 4))
    if cut == 1:
        text = text[: draw(st.integers(0, 159))]
    elif cut == 2:
        text = text + draw(st.text(printable, min_size=1, max_size=5))
    elif cut == 3:
        text = text.replace(" ", draw(st.sampled_from(["\t", "", "0", "-"])), 1)
    return text


def _line_records(tmp_path, recs):
    p = tmp_path / "fuzz.par"
    p.write_text("\n".join([GOOD] + recs) + "\n", encoding="latin-1")
    ctx = _strict()
    try:
        cols = read_records(p)
    except SpecforceError as exc:
        event("domain error")
        assert str(p) in str(exc) and exc.line >= 2
    else:
        event("valid")
        assert np.all(cols["wavenumber"] > 0) and np.all(cols["intensity"] >= 0)
        assert np.all(np.isfinite(cols["gamma_air"])) and np.all(cols["gamma_air"] >= 0)
    finally:
        ctx.__exit__(None, None, None)
    store = tmp_path / "fuzz.h5"  # the import ends the same way, and writes a store only when it succeeds
    try:
        import_lines([p], store)
    except SpecforceError:
        assert not store.exists()
    else:
        store.unlink()
    _clean(tmp_path)


test_line_records, test_line_records_2000_cases = _quick_and_full(
    _line_records, recs=st.lists(mangled_record(), min_size=1, max_size=4))


# ------------------------------------------------------------------ profile files

_BASE_ROWS = [(1013.0, 294.0, 18000.0, 400.0), (700.0, 280.0, 5000.0, 400.0), (300.0, 240.0, 200.0, 400.0),
              (100.0, 210.0, 4.0, 400.0), (10.0, 230.0, 4.5, 400.0), (1.0, 270.0, 5.0, 400.0)]
_HEADERS = ["pressure_hPa", "temperature_K", "H2O_ppmv", "CO2_ppmv"]
_BAD_NUMBERS = ["nan", "inf", "-inf", "-1", "0", "1e308", "-0", "1e-320", "abc", "", " ", "1,5", "0x10", "1e5", "5000"]
_OTHER_HEADERS = ["pressure_Pa", "pressure_kPa", "pressure_atm", "pressure", "temperature_C", "temperature_F",
                  "altitude_km", "altitude_m", "O3_ppbv", "CH4_vmr", "N2O_percent", "XX_ppmv", "H2O_ppmv", "",
                  "pressure_hPa", "CO2_ppm", "temperature_degC"]


@st.composite
def profile_table(draw):
    header = list(_HEADERS)
    rows = [[repr(v) for v in r] for r in _BASE_ROWS]
    for _ in range(draw(st.integers(0, 6))):
        what = draw(st.integers(0, 6))
        if what == 0 and rows:  # a cell becomes something odd
            r = rows[draw(st.integers(0, len(rows) - 1))]
            if r:
                r[draw(st.integers(0, len(r) - 1))] = draw(
                    st.sampled_from(_BAD_NUMBERS) | st.floats(allow_nan=True).map(repr) | st.text(printable, max_size=6))
        elif what == 1:  # a header changes
            header[draw(st.integers(0, len(header) - 1))] = draw(st.sampled_from(_OTHER_HEADERS) | st.text(printable, max_size=8))
        elif what == 2 and len(rows) > 0:  # a row goes
            rows.pop(draw(st.integers(0, len(rows) - 1)))
        elif what == 3 and rows:  # a row repeats
            rows.append(list(rows[draw(st.integers(0, len(rows) - 1))]))
        elif what == 4 and rows:  # a row gains or loses a cell
            r = rows[draw(st.integers(0, len(rows) - 1))]
            r.append("1") if draw(st.booleans()) else (r.pop() if r else None)
        elif what == 5:  # a column is scaled, as by a unit mistake
            j = draw(st.integers(0, len(header) - 1))
            f = draw(st.sampled_from([100.0, 0.01, 1e6, -1.0]))
            for r in rows:
                try:
                    r[j] = repr(float(r[j]) * f)
                except (ValueError, IndexError):
                    pass
        else:  # the rows are shuffled
            rows = draw(st.permutations(rows))
    meta = draw(st.fixed_dictionaries({}, optional={
        "surface_temperature_K": st.sampled_from(["290", "abc", "nan", "-5", "1e9", ""]),
        "surface_emissivity": st.sampled_from(["0.98", "1.5", "-1", "x", "nan", ""]),
        "name": st.text(printable, max_size=10)}))
    return header, rows, meta


def _profile_files(tmp_path, table, kind):
    header, rows, meta = table
    path = tmp_path / f"p.{kind}"
    if kind == "csv":
        path.write_text(",".join(header) + "\n" + "".join(",".join(r) + "\n" for r in rows))
    else:
        head = "".join(f"# {k}: {v}\n" for k, v in meta.items())
        path.write_text(head + " ".join(h or "_" for h in header) + "\n" + "".join(" ".join(c or "_" for c in r) + "\n" for r in rows))
    _load_and_check(path)
    _clean(tmp_path)


test_profile_files, test_profile_files_2000_cases = _quick_and_full(
    _profile_files, table=profile_table(), kind=st.sampled_from(["csv", "txt"]))


_NC_UNITS = ["Pa", "hPa", "K", "degC", "1", "mol/mol", "ppmv", "ppbv", "", "furlongs", "m", "km", "kg kg-1"]
_NC_NAMES = ["pressure", "plev", "temperature", "ta", "H2O", "CO2", "O3", "lat", "time", "z", "hus"]


@st.composite
def netcdf_profile(draw):
    n = draw(st.integers(0, 6))
    pressure = np.array([1013.0, 700.0, 300.0, 100.0, 10.0, 1.0][:n]) * 100.0
    temperature = np.array([294.0, 280.0, 240.0, 210.0, 230.0, 270.0][:n])
    h2o = np.array([0.018, 5e-3, 2e-4, 4e-6, 4.5e-6, 5e-6][:n])
    variables = {"pressure": (pressure, "Pa"), "temperature": (temperature, "K"), "H2O": (h2o, "1")}
    for _ in range(draw(st.integers(0, 4))):
        what = draw(st.integers(0, 4))
        name = draw(st.sampled_from(sorted(variables)))
        values, unit = variables[name]
        if what == 0:
            variables[name] = (values, draw(st.sampled_from(_NC_UNITS)))
        elif what == 1 and values.size:
            values = values.copy()
            values[draw(st.integers(0, values.size - 1))] = draw(st.floats(allow_nan=True, allow_infinity=True))
            variables[name] = (values, unit)
        elif what == 2:
            variables[draw(st.sampled_from(_NC_NAMES))] = variables.pop(name)
        elif what == 3:
            variables[name] = (values[: draw(st.integers(0, max(values.size - 1, 0)))], unit)
        else:
            variables[draw(st.sampled_from(_NC_NAMES))] = (values[::-1], draw(st.sampled_from(_NC_UNITS)))
    return variables, draw(st.booleans())


def _profile_netcdf(tmp_path, case):
    import h5netcdf

    variables, as_coordinate = case
    path = tmp_path / "p.nc"
    with h5netcdf.File(path, "w") as f:
        for i, (name, (values, unit)) in enumerate(variables.items()):
            dim = "plev" if as_coordinate and name in ("pressure", "plev") else f"level{values.size}"
            dim = name if dim == "plev" else dim
            if dim not in f.dimensions:
                f.dimensions[dim] = values.size
            var = f.create_variable(name, (dim,), float, data=values)
            if unit:
                var.attrs["units"] = unit
    _load_and_check(path)
    _clean(tmp_path)


test_profile_netcdf, test_profile_netcdf_2000_cases = _quick_and_full(_profile_netcdf, case=netcdf_profile())


# ------------------------------------------------------------------ scenario files

_VALUES = st.one_of(st.integers(-10**6, 10**6), st.floats(allow_nan=True, allow_infinity=True), st.booleans(),
                    st.sampled_from(["2x", "560ppm", "280ppm", "722ppb", "4e-4vmr", "1.5vmr", "-3ppm", "abc", "", "1e400ppm"]))


def _toml_value(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return "nan" if math.isnan(v) else ("inf" if v == math.inf else ("-inf" if v == -math.inf else repr(v)))
    if isinstance(v, int):
        return str(v)
    return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'


@st.composite
def scenario_text(draw):
    lines = []
    if draw(st.integers(0, 9)):
        lines.append(f'profile = {_toml_value(draw(st.sampled_from(["mls", "tropical", "saw", "nowhere", "demo"])))}')
    if draw(st.booleans()):
        lines.append(f"tropopause_hPa = {_toml_value(draw(_VALUES))}")
    if not draw(st.integers(0, 9)):
        lines.append(f"{draw(st.sampled_from(['surface_emissivity', 'colour', 'name']))} = {_toml_value(draw(_VALUES))}")
    for _ in range(draw(st.integers(0, 3))):
        lines.append("[[change]]")
        keys = draw(st.lists(st.sampled_from(["gas", "scale", "set", "from", "to", "warming", "surface_warming",
                                              "fixed_rh", "factor"]), max_size=4, unique=True))
        for k in keys:
            if k == "gas":
                v = draw(st.sampled_from([*GASES, "co2", "XYZ", ""]))
            else:
                v = draw(_VALUES)
            lines.append(f"{k} = {_toml_value(v)}")
    if not draw(st.integers(0, 19)):
        lines.append(draw(st.text(printable, max_size=20)))  # stray text
    return "\n".join(lines) + "\n"


def _scenario_files(tmp_path, text):
    path = tmp_path / "s.toml"
    path.write_text(text)
    ctx = _strict()
    try:
        scen = load_scenario(path)
        base, pert = apply_perturbations(scen.profile, scen.perturbations)
    except SpecforceError as exc:
        event("domain error")
        assert str(path) in str(exc) or "profile" in str(exc), exc
    else:
        event("valid")
        _check_profile(base)
        _check_profile(pert)
        assert scen.tropopause_pressure is None or 0 < scen.tropopause_pressure
    finally:
        ctx.__exit__(None, None, None)
    _clean(tmp_path)


test_scenario_files, test_scenario_files_2000_cases = _quick_and_full(_scenario_files, text=scenario_text())


# ------------------------------------------------------------------ command options

class _Reached(Exception):
    """Raised by the probe in place of the engine: the inputs got through to the computation."""


def _probe(*args, **kwargs):
    from specforce.radiation.longwave import Settings

    profiles = args[0] if isinstance(args[0], (list, tuple)) else [args[0]]
    for p in profiles:
        _check_profile(p)
    sett = next((a for a in (*args, *kwargs.values()) if isinstance(a, Settings)), None)
    if sett is not None:
        lo, hi = sett.wavenumber_range
        assert 0 <= lo < hi <= 50000 and sett.nodes >= 1 and sett.refine >= 1
        assert sett.cutoff is None or sett.cutoff >= 0
    raise _Reached


@pytest.fixture(scope="module")
def engine_probe():
    import specforce.forcing.adjustment
    import specforce.forcing.instantaneous
    import specforce.radiation.longwave
    import specforce.forcing.responses
    import specforce.forcing.sweep

    with pytest.MonkeyPatch.context() as mp:
        for mod in (specforce.radiation.longwave, specforce.forcing.instantaneous, specforce.forcing.responses, specforce.forcing.adjustment, specforce.forcing.sweep):
            for name in ("compute_longwave", "compute_longwave_states"):
                if hasattr(mod, name):
                    mp.setattr(mod, name, _probe)
        yield


# plausible values three times as often as odd ones, so that valid combinations are common too
_GOOD_NUM = st.sampled_from(["1", "2", "4", "10", "25", "0.01", "200", "500", "700"])
_NUM = st.one_of(st.sampled_from(["nan", "inf", "-inf", "-5", "0", "1e9", "abc", "", "1e-9", "3", "0.1", "1013"]),
                 _GOOD_NUM, _GOOD_NUM, _GOOD_NUM, st.floats(-1e5, 1e5, allow_nan=False).map(lambda x: f"{x:g}"))
_GOOD_CHANGE = st.sampled_from(["2x", "0x", "560ppm", "280ppm:560ppm", "722ppb:1866ppb", "1.2x"])
_CHANGE = st.one_of(st.sampled_from(["-2x", "2 apples", "1e9x", "nanx", "1.5vmr", ":", "2x:3x", ""]),
                    _GOOD_CHANGE, _GOOD_CHANGE, _GOOD_CHANGE)
_PATH = st.sampled_from(["{d}/out.nc", "{d}/out.png", "{d}/out.xyz", "{d}/missing/out.nc", "{d}", "/proc/out.nc",
                         "{d}/out.pdf", "{d}/out.svg"])


_SPECTRAL = {
    "--range": st.tuples(_NUM, _NUM), "--cutoff": _NUM, "--angles": _NUM, "--spacing": _NUM, "--refine": _NUM,
    "--gases": st.sampled_from(["H2O,CO2", "none", "XYZ", "co2", "", "H2O,,CO2", "O2", "H2O,CO2,O3,CH4,N2O"]),
    "--grid": st.sampled_from(["graded", "uniform", "fine"]), "--method": st.sampled_from(["fast", "direct", "slow"]),
    "--lines": st.sampled_from(["{d}/missing.h5", "{d}/p.csv"]),
    "--continuum": st.sampled_from(["{d}/c.txt", "{d}/p.csv", "{d}/missing.txt"]),
    "--netcdf": _PATH, "--plot": _PATH, "--json": None, "--no-continuum": None, "--diffusivity": None,
    "--co2-chi": None, "--accept-unusual-profile": None,
}
_PROFILE = st.sampled_from(["mls", "tropical", "saw", "nowhere", "{d}/p.csv", "{d}/s.toml", "", "mls:0.5"])
_OPTIONS = {
    "olr": {**_SPECTRAL, "--profile": _PROFILE, "--convergence": None},
    "forcing": {**_SPECTRAL, "--profile": _PROFILE, "--tropopause": _NUM, "--co2": _CHANGE, "--ch4": _CHANGE,
                "--n2o": _CHANGE, "--h2o": _CHANGE, "--scenario": st.sampled_from(["{d}/s.toml", "{d}/missing.toml"]),
                "--adjusted": None, "--responses": None, "--per-gas": None, "--convergence": None},
    "sweep": {**_SPECTRAL, "--profile": _PROFILE, "--gas": st.sampled_from(["co2", "ch4", "n2o", "h2o"]),
              "--from": _CHANGE, "--to": _CHANGE, "--steps": _NUM, "--reference": _CHANGE, "--tropopause": _NUM,
              "--area-mean": None, "--adjusted": None, "--quadratic": None},
    "compare": {**_SPECTRAL, "--smooth": _NUM, "--bands": st.sampled_from(["10,550,800", "800,550", "a,b", "5", ""]),
                "--lines-b": st.sampled_from(["builtin", "{d}/missing.h5"])},
}


@st.composite
def command_line(draw):
    cmd = draw(st.sampled_from(sorted(_OPTIONS)))
    args = [cmd]
    if cmd == "compare":
        args += [draw(st.sampled_from(["mls", "tropical", "nowhere.csv", "{d}/s.toml", "{d}/p.csv"]))
                 for _ in range(draw(st.integers(1, 2)))]
    options = _OPTIONS[cmd]
    names = draw(st.lists(st.sampled_from(sorted(options)), max_size=5, unique=True))
    if cmd == "forcing" and draw(st.integers(0, 3)):
        names = [n for n in names if n not in ("--co2", "--scenario")] + ["--co2"]  # usually a change
    if cmd == "sweep" and draw(st.integers(0, 3)):
        names = [n for n in names if n not in ("--gas", "--from", "--to")] + ["--gas", "--from", "--to"]
    for name in names:
        strategy = options[name]
        if strategy is None:
            args.append(name)
        else:
            value = draw(strategy)
            args += [name, *value] if isinstance(value, tuple) else [name, value]
    if not draw(st.integers(0, 19)):
        args.append(draw(st.sampled_from(["--no-such-option", "extra", "--help"])))
    return args


def _command_options(tmp_path, engine_probe, args):
    from specforce.cli import main

    folder = tmp_path / "cli"
    folder.mkdir(exist_ok=True)
    (folder / "s.toml").write_text('profile = "mls"\n[[change]]\ngas = "CO2"\nscale = 2\n')
    (folder / "p.csv").write_text("pressure_hPa,temperature_K\n1000,290\n500,250\n100,210\n")
    shutil.copy(EXAMPLE_TABLE, folder / "c.txt")  # a valid continuum table (invented numbers)
    args = [a.replace("{d}", str(folder)) for a in args]
    ctx = _strict()
    try:
        res = CliRunner().invoke(main, args)
    finally:
        ctx.__exit__(None, None, None)
    if isinstance(res.exception, _Reached):
        event("valid: reached the engine")  # with a valid profile and settings
    elif "--help" in args and res.exit_code == 0:
        event("help")
        assert res.output.startswith("Usage:")
    else:
        event("domain error")
        assert isinstance(res.exception, SystemExit) or res.exception is None, (args, repr(res.exception))
        assert res.exit_code != 0 and "Error" in res.output and "Traceback" not in res.output, (args, res.output)
    assert sorted(os.listdir(folder)) == ["c.txt", "p.csv", "s.toml"], (args, os.listdir(folder))



test_command_options, test_command_options_2000_cases = _quick_and_full(
    _command_options, args=command_line())

"""Commands that compute radiation for one profile or state: olr, forcing, compare, sweep."""

from __future__ import annotations

import math

import click

from .common import (_CONVERGENCE_HELP, _PROFILE_HELP, _Number, _calculation, _check_outputs, _finish, change_options,
                     _progress, _spectral_inputs, _state_inputs, _user_errors, _write_outputs, main, spectral_options)
from ..molecular.gases import all_gases

# ------------------------------------------------------------------ olr


@main.command("olr")
@click.option("--profile", "profile_name", default="mls", show_default=True, help=_PROFILE_HELP)
@spectral_options
@click.option("--convergence", is_flag=True, help=_CONVERGENCE_HELP)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
@click.option("--netcdf", "netcdf_path", type=click.Path(dir_okay=False), help="Write spectra and fluxes to netCDF.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), help="Plot the OLR spectrum (PNG, PDF or SVG).")
def olr_cmd(profile_name, convergence, as_json, netcdf_path, plot_path, **kw):
    """Clear-sky OLR, surface downward flux and heating rates of a profile."""
    from ..api import olr

    def plot(result):
        from ..io.plots import plot_olr_spectrum

        return plot_olr_spectrum(result, f"OLR spectrum, profile {result.provenance['profile']}")

    with _user_errors():
        _check_outputs(netcdf_path, plot_path, _state_inputs("--profile", profile_name) + _spectral_inputs(kw))
        accept = kw.pop("accept_unusual")
        sett, spec = _calculation(kw)
        with _progress("computing", hidden=as_json) as progress:
            result = olr(profile_name, spec, sett, convergence=convergence, progress=progress, accept_unusual=accept)
        _write_outputs(result, netcdf_path, plot_path, plot)
    _finish(result, as_json)


# ------------------------------------------------------------------ forcing


@main.command("forcing")
@click.option("--profile", "profile_name", help=_PROFILE_HELP + " [default: mls]")
@spectral_options
@click.option("--scenario", "scenario_path", type=click.Path(exists=True, dir_okay=False),
              help="Scenario file (TOML): a profile and its changes; not with --profile or the gas switches.")
@change_options
@click.option("--tropopause", "tropopause_hpa", type=_Number(min=0.0, min_open=True),
              help="Tropopause pressure [hPa] (default WMO lapse rate); must lie within the profile.")
@click.option("--adjusted", is_flag=True, help="Also compute stratosphere-adjusted forcing (fixed dynamical heating).")
@click.option("--responses", is_flag=True, help="Also compute the Planck and fixed-RH water-vapour responses, the "
              "no-feedback warming and the emission temperature and altitude (needs the whole longwave range).")
@click.option("--per-gas", is_flag=True, help="Also compute each changed gas's forcing alone, and the overlap.")
@click.option("--convergence", is_flag=True, help=_CONVERGENCE_HELP)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
@click.option("--netcdf", "netcdf_path", type=click.Path(dir_okay=False), help="Write spectral and level fields to netCDF.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="Plot spectra, spectral forcing, heating rates and adjustment (PNG, PDF or SVG).")
def forcing_cmd(profile_name, scenario_path, changes, tropopause_hpa, adjusted, responses, per_gas,
                convergence, as_json, netcdf_path, plot_path, **kw):
    """Radiative forcing of a change in CO2, CH4, N2O or water vapour for one profile."""
    from ..api import radiative_forcing
    from ..errors import ScenarioError

    def plot(result):
        from ..io.plots import plot_forcing

        return plot_forcing(result)  # its default title

    with _user_errors():
        if scenario_path and (changes or profile_name):
            raise ScenarioError(f"--scenario {scenario_path} holds its own profile and changes; give it without "
                                f"--profile and the gas switches ({', '.join('--' + g.lower() for g in changes)})"
                                if changes else f"--scenario {scenario_path} holds its own profile; drop --profile")
        if not scenario_path and not changes:
            raise click.UsageError("give a change (--co2 2x, --ch4 722ppb:1866ppb, --h2o 1.2x) or --scenario FILE")
        _check_outputs(netcdf_path, plot_path, _state_inputs("--profile", profile_name)
                       + _state_inputs("--scenario", scenario_path) + _spectral_inputs(kw))
        accept = kw.pop("accept_unusual")
        sett, spec = _calculation(kw)
        with _progress("forcing", hidden=as_json) as progress:
            result = radiative_forcing(None if scenario_path else (profile_name or "mls"), changes or None, spec,
                                       sett, scenario=scenario_path, adjusted=adjusted, responses=responses,
                                       per_gas=per_gas, convergence=convergence, progress=progress,
                                       accept_unusual=accept,
                                       tropopause=None if tropopause_hpa is None else tropopause_hpa * 100.0)
        _write_outputs(result, netcdf_path, plot_path, plot)
    _finish(result, as_json)


# ------------------------------------------------------------------ compare


@main.command("compare")
@click.argument("state_a")
@click.argument("state_b", required=False)
@click.option("--lines-b", "lines_b", help="Line store for state B ('builtin' for the built-in set); default as A. "
              "Compare two line-data sources for one atmosphere by giving one state and --lines-b.")
@click.option("--bands", "band_edges", help="Band edges [cm-1], comma-separated (e.g. 10,550,800,1250,3000); "
              "default the named bands listed in the README.")
@click.option("--smooth", "resolution", type=_Number(min=0.0), default=10.0, show_default=True,
              help="Resolution [cm-1] of the smoothed brightness-temperature difference; 0 for none.")
@spectral_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
@click.option("--netcdf", "netcdf_path", type=click.Path(dir_okay=False), help="Write the comparison to netCDF.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="Plot both brightness-temperature spectra and their difference with band sums (PNG, PDF or SVG).")
def compare_cmd(state_a, state_b, lines_b, band_edges, resolution, as_json, netcdf_path, plot_path, **kw):
    """Compare the OLR of STATE_A and STATE_B (B minus A): broadband, by band, and as brightness temperature.

    Each state is a profile (bundled name or file), a scenario file (.toml, its
    perturbed state) or a result file written by 'specforce olr --netcdf'
    (or 'forcing --netcdf'; add #base for its base state). With one state and
    --lines-b, the same atmosphere is compared under two line-data sources.
    """
    from ..api import compare_olr, spectroscopy
    from ..forcing.compare import DEFAULT_BANDS

    def plot(result):
        from ..io.plots import plot_comparison

        return plot_comparison(result)  # its default title

    with _user_errors():
        if state_b is None:
            if not lines_b:
                raise click.UsageError("give two states, or one state and --lines-b to compare line-data sources")
            state_b = state_a
        _check_outputs(netcdf_path, plot_path, _state_inputs("STATE_A", state_a) + _state_inputs("STATE_B", state_b)
                       + [("--lines-b", lines_b)] + _spectral_inputs(kw))
        lines_a, continuum, lines_only = kw["lines_store"], kw["continuum_table"], kw["lines_only"]
        accept = kw.pop("accept_unusual")
        sett, spec_a = _calculation(kw)
        spec_b = spectroscopy(lines=None if lines_b == "builtin" else lines_b, continuum_table=continuum,
                              builtin=lines_b == "builtin" or not lines_only) if lines_b else None
        bands = _bands_option(band_edges) if band_edges else DEFAULT_BANDS
        result = compare_olr(state_a, state_b, bands=bands, resolution=resolution or None, spectroscopy=spec_a,
                             spectroscopy_b=spec_b, settings=sett, accept_unusual=accept)
        if lines_b:
            from dataclasses import replace

            result = replace(result, label_a=f"{result.label_a} [{lines_a or 'built-in lines'}]",
                             label_b=f"{result.label_b} [{'built-in lines' if lines_b == 'builtin' else lines_b}]")
        _write_outputs(result, netcdf_path, plot_path, plot)
    _finish(result, as_json)


def _bands_option(text):
    """The bands of ``--bands EDGES``: every edge a finite number, rising; otherwise an error naming --bands."""
    from ..forcing.compare import bands_from_edges
    from ..errors import ComparisonError

    example = "e.g. --bands 10,550,800,1250,3000"
    edges = []
    for item in text.split(","):
        try:
            value = float(item)
        except ValueError:
            value = math.nan
        if not math.isfinite(value):
            raise click.BadParameter(f"{item.strip()!r} in {text!r} is not a wavenumber; give band edges [cm-1] "
                                     f"as numbers separated by commas ({example})", param_hint="--bands")
        edges.append(value)
    try:
        return bands_from_edges(edges)
    except ComparisonError as exc:
        raise click.BadParameter(f"{text!r}: {exc} ({example})", param_hint="--bands") from None


# ------------------------------------------------------------------ sweep


def _weighted_profiles(specs):
    """Profile names and weights from ``NAME[:WEIGHT]`` strings."""
    names, weights = [], []
    for spec in specs or ("mls",):
        name, weight = spec, 1.0
        if ":" in spec:
            head, tail = spec.rsplit(":", 1)
            try:
                name, weight = head, float(tail)
            except ValueError:
                pass  # a path containing ':'
        names.append(name)
        weights.append(weight)
    return names, weights


_SWEPT = [g for g in all_gases() if g.sweepable]


@main.command("sweep")
@click.option("--gas", required=True, type=click.Choice([g.formula for g in _SWEPT], case_sensitive=False),
              help="The gas to sweep; the other two stay at their background values.")
@click.option("--from", "start", required=True, help="First concentration: a factor of the reference (0.125x) or an "
              "amount (35ppm, 300ppb).")
@click.option("--to", "stop", required=True, help="Last concentration, as --from.")
@click.option("--steps", type=click.IntRange(2, 1000), default=20, show_default=True,
              help="Number of concentrations (geometric spacing for CO2, linear for CH4 and N2O).")
@click.option("--profile", "profile_specs", multiple=True,
              help=_PROFILE_HELP + " Repeat for several, with a weight as NAME:WEIGHT (default mls).")
@click.option("--area-mean", is_flag=True, help="The five seasonal AFGL models with area weights (tropical 0.5, "
              "mls/mlw 0.183, sas/saw 0.067) for an approximate global mean.")
@click.option("--reference", help="Reference concentration of the swept gas (default pre-industrial: "
              + ", ".join(f"{g.preindustrial:g}{g.unit}" for g in _SWEPT) + ").")
@click.option("--adjusted", is_flag=True, help="Compare stratosphere-adjusted forcing (about ten times slower).")
@click.option("--quadratic", is_flag=True, help="CO2 refit with the Etminan et al. (2016) quadratic correction.")
@click.option("--tropopause", "tropopause_hpa", type=_Number(min=0.0, min_open=True),
              help="Tropopause pressure [hPa] (default WMO lapse rate).")
@spectral_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
@click.option("--netcdf", "netcdf_path", type=click.Path(dir_okay=False), help="Write the sweep to netCDF.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="Plot forcing against concentration with the formulas and residuals (PNG, PDF or SVG).")
def sweep_cmd(gas, start, stop, steps, profile_specs, area_mean, reference, adjusted, quadratic, tropopause_hpa,
              as_json, netcdf_path, plot_path, **kw):
    """Forcing of one gas across a range of concentrations, next to the published formulas, with refits."""
    from ..api import sweep_concentrations
    from ..forcing.formulas import PREINDUSTRIAL
    from ..forcing.sweep import parse_sweep_bound, sweep_values

    gas = gas.upper()

    def plot(result):
        from ..io.plots import plot_sweep

        return plot_sweep(result)  # its default title

    with _user_errors():
        if area_mean and profile_specs:
            raise click.UsageError("give either --area-mean or --profile, not both")
        names, weights = _weighted_profiles(profile_specs)
        _check_outputs(netcdf_path, plot_path,
                       [i for n in names for i in _state_inputs("--profile", n)] + _spectral_inputs(kw))
        ref = PREINDUSTRIAL[gas] if reference is None else parse_sweep_bound(gas, reference, PREINDUSTRIAL[gas])
        values = sweep_values(gas, parse_sweep_bound(gas, start, ref), parse_sweep_bound(gas, stop, ref), steps)
        accept = kw.pop("accept_unusual")
        sett, spec = _calculation(kw)
        with _progress(f"sweeping {gas}", hidden=as_json) as progress:
            result = sweep_concentrations(gas, values, names, spec, sett, weights=None if area_mean else weights,
                                          area_mean=area_mean, reference=ref, adjusted=adjusted, quadratic=quadratic,
                                          tropopause=None if tropopause_hpa is None else tropopause_hpa * 100.0,
                                          progress=progress, accept_unusual=accept)
        _write_outputs(result, netcdf_path, plot_path, plot)
    _finish(result, as_json)


if __name__ == "__main__":  # pragma: no cover
    main()

"""The ``specforce`` command line. It parses arguments and calls the public API only."""

from __future__ import annotations

import contextlib
import json
import os
import sys

import click

from . import __version__
from .errors import SpecforceError


def _fail(exc):
    raise click.ClickException(str(exc))


def _json_default(obj):
    if hasattr(obj, "item"):
        return obj.item()
    if hasattr(obj, "tolist"):
        return obj.tolist()
    raise TypeError(f"not JSON-serialisable: {type(obj)}")


def _echo_json(payload):
    click.echo(json.dumps(payload, indent=2, default=_json_default, allow_nan=False))


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="specforce")
def main():
    """specforce: line-by-line clear-sky longwave forcing from first principles."""


# ------------------------------------------------------------------ molecules


@main.command("molecules")
@click.option("--temperature", "temperatures", multiple=True, type=float, default=(200.0, 250.0, 296.0),
              show_default=True, help="Temperatures for Q(T) [K]; repeat for several.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
def molecules_cmd(temperatures, as_json):
    """List the isotopologues specforce knows, with partition functions Q(T)."""
    from .molecules import DETAILED_MOLECULES, isotopologues, partition_function

    rows = []
    for mol in DETAILED_MOLECULES:
        for iso in isotopologues(mol):
            q = [float(partition_function(mol, iso.local_id, t)) for t in temperatures]
            rows.append({
                "molecule": mol, "molecule_id": iso.molecule_id, "isotopologue": iso.local_id,
                "code": iso.code, "abundance": iso.abundance, "molar_mass_kg_mol": iso.molar_mass,
                "q296_tabulated": iso.q296_reference,
                "partition_function": dict(zip([f"{t:g}" for t in temperatures], q)),
            })
    if as_json:
        _echo_json({"temperatures_K": list(temperatures), "isotopologues": rows})
        return
    head = "".join(f"{'Q(' + format(t, 'g') + ' K)':>12}" for t in temperatures)
    click.echo(f"{'mol':>5} {'iso':>3} {'code':>5} {'abundance':>11} {'M [g/mol]':>10}{head} {'Q296 tab.':>10}")
    for r in rows:
        qs = "".join(f"{q:12.2f}" for q in r["partition_function"].values())
        click.echo(f"{r['molecule']:>5} {r['isotopologue']:>3} {r['code']:>5} {r['abundance']:11.4e} "
                   f"{r['molar_mass_kg_mol'] * 1e3:10.5f}{qs} {r['q296_tabulated']:10.2f}")


# ------------------------------------------------------------------ lines


@main.group()
def lines():
    """Import, inspect and select line data (HDF5 line stores)."""


@lines.command("import")
@click.argument("files", nargs=-1, required=True, type=click.Path(exists=True, dir_okay=False))
@click.option("-o", "--output", "store", required=True, type=click.Path(dir_okay=False), help="Line store to write (HDF5).")
@click.option("--skip-bad", is_flag=True, help="Skip malformed records and report how many, instead of stopping.")
@click.option("--compression", type=click.Choice(["lzf", "gzip", "none"]), default="lzf", show_default=True)
def lines_import(files, store, skip_bad, compression):
    """Import FILES (160-character line records, plain or .gz/.bz2/.xz/.zip, or
    existing stores) into one line store, sorted by wavenumber."""
    from .linestore import import_lines

    total = sum(os.path.getsize(f) for f in files)
    show = sys.stderr.isatty() and total > 20e6
    try:
        with click.progressbar(length=total, label="importing", file=sys.stderr, hidden=not show) as bar:
            prov = import_lines(
                list(files),
                store,
                on_error="skip" if skip_bad else "raise",
                compression=None if compression == "none" else compression,
                progress=lambda n: bar.update(n),
            )
    except (SpecforceError, OSError) as exc:
        _fail(exc)
    for src in prov:
        skipped = src.get("skipped") or {}
        text = f"{src['path']}: {src['records']} records"
        if skipped:
            text += f", {sum(skipped.values())} skipped (" + ", ".join(f"{n} {k}" for k, n in skipped.items()) + ")"
        click.echo(text)
    click.echo(f"wrote {store}")


@lines.command("info")
@click.argument("store", type=click.Path(exists=True, dir_okay=False))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
def lines_info(store, as_json):
    """Summarise a line store: lines per molecule, wavenumber span, sources."""
    from .linestore import open_store

    try:
        with open_store(store) as st:
            info = st.info()
    except (SpecforceError, OSError) as exc:
        _fail(exc)
    if as_json:
        _echo_json(info)
        return
    click.echo(f"{info['path']}")
    click.echo(f"  {info['total_lines']} lines, {info['size_bytes'] / 1e6:.2f} MB, created {info['created']}")
    for mol, d in info["molecules"].items():
        click.echo(f"  {mol:>6}: {d['lines']:>10} lines  {d['wavenumber_min']:.4f}-{d['wavenumber_max']:.4f} cm-1")
    for src in info["sources"]:
        click.echo(f"  source: {src.get('path')} (sha256 {str(src.get('sha256'))[:12]}...)")


@lines.command("generate")
@click.option("--molecule", "molecules", multiple=True,
              help="Molecules to generate (CO2, H2O, CH4); repeat for several; default all.")
@click.option("-o", "--output", "out", required=True, type=click.Path(dir_okay=False), help="Store to write.")
def lines_generate(molecules, out):
    """Write the built-in (generated) line set to an ordinary line store."""
    from .builtin import GENERATED_MOLECULES, generate_builtin_store

    names = [m.upper() for m in molecules] or list(GENERATED_MOLECULES)
    try:
        generate_builtin_store(out, names)
    except (SpecforceError, OSError, ValueError) as exc:
        _fail(exc)
    click.echo(f"wrote the generated {', '.join(names)} lines to {out}")


@lines.command("select")
@click.argument("store", type=click.Path(exists=True, dir_okay=False))
@click.option("--molecule", "molecules", multiple=True, help="Molecule formula or number; repeat for several.")
@click.option("--range", "wn_range", nargs=2, type=float, help="Wavenumber window MIN MAX [cm-1].")
@click.option("--min-intensity", type=float, help="Intensity threshold [cm-1/(molecule cm-2)].")
@click.option("--temperature", type=float, default=296.0, show_default=True, help="Temperature of the threshold [K].")
@click.option("-o", "--output", "out", required=True, type=click.Path(dir_okay=False), help="Store to write.")
def lines_select(store, molecules, wn_range, min_intensity, temperature, out):
    """Write the lines of STORE that pass the filters to a new, smaller store."""
    from .linestore import open_store, write_store

    try:
        with open_store(store) as st:
            sel = st.select(
                molecules=list(molecules) or None,
                wavenumber_range=wn_range,
                min_intensity=min_intensity,
                temperature=temperature,
            )
        sel.provenance["selection"] = {
            "from": os.path.abspath(store),
            "molecules": list(molecules),
            "range_cm-1": list(wn_range) if wn_range else None,
            "min_intensity": min_intensity,
            "temperature_K": temperature,
        }
        write_store(sel, out, extra_attrs={"selection": sel.provenance["selection"]})
    except (SpecforceError, OSError, ValueError) as exc:
        _fail(exc)
    click.echo(f"wrote {len(sel)} lines to {out}")


# ------------------------------------------------------------------ olr


def _settings_from_options(wn_range, method, grid, no_continuum, cutoff, gases, nodes, diffusivity, spacing, co2_chi,
                           refine=1):
    from .longwave import Settings

    gas_tuple = None
    if gases is not None:
        g = [x.strip().upper() for x in gases.split(",") if x.strip()]
        gas_tuple = () if g == ["NONE"] else tuple(g)
    return Settings(
        wavenumber_range=tuple(wn_range), method=method, grid=grid, continuum=not no_continuum,
        cutoff=None if cutoff <= 0 else cutoff,
        gases=gas_tuple, nodes=nodes, diffusivity=diffusivity, spacing=spacing, co2_chi=co2_chi, refine=refine,
    )


def _spectroscopy(lines_store):
    """The built-in set, with an imported store taking precedence for the molecules it covers."""
    from .api import spectroscopy

    return spectroscopy(lines=lines_store or None)


@contextlib.contextmanager
def _progress(label, hidden=False):
    """A progress bar on stderr (only on a terminal) fed by a fraction-done callback."""
    show = sys.stderr.isatty() and not hidden
    with click.progressbar(length=1000, label=label, file=sys.stderr, hidden=not show) as bar:
        state = {"done": 0}

        def update(frac):
            n = int(frac * 1000)
            bar.update(n - state["done"])
            state["done"] = n

        yield update


_PROFILE_HELP = "Bundled profile (tropical, mls, mlw, sas, saw, usstd, demo) or a file (.txt, .csv, .nc)."


def spectral_options(f):
    """The switches shared by every command that computes radiation (all but the profile)."""
    opts = [
        click.option("--lines", "lines_store", type=click.Path(exists=True, dir_okay=False),
                     help="Line store to use instead of the built-in spectroscopy."),
        click.option("--gases", help="Active absorbers, comma-separated (e.g. H2O,CO2); 'none' for a transparent atmosphere."),
        click.option("--range", "wn_range", nargs=2, type=float, default=(10.0, 3000.0), show_default=True,
                     help="Wavenumber range MIN MAX [cm-1]."),
        click.option("--method", type=click.Choice(["fast", "direct"]), default="fast", show_default=True),
        click.option("--grid", type=click.Choice(["graded", "uniform"]), default="graded", show_default=True,
                     help="Spectral grid: graded (fine only near significant line cores) or the uniform reference."),
        click.option("--no-continuum", is_flag=True, help="Switch the water-vapour continuum off."),
        click.option("--cutoff", type=float, default=25.0, show_default=True, help="Line cut-off [cm-1]; 0 for none."),
        click.option("--angles", "nodes", type=int, default=3, show_default=True, help="Gauss-Legendre nodes in mu."),
        click.option("--diffusivity", is_flag=True, help="One-stream diffusivity approximation (1.66)."),
        click.option("--spacing", type=float, help="Fixed grid spacing [cm-1] instead of the adaptive rule."),
        click.option("--co2-chi", is_flag=True, help="Sub-Lorentzian chi factor on CO2 lines (Perrin & Hartmann 1989)."),
        click.option("--refine", type=int, default=1, show_default=True, help="Split each layer into N for convergence."),
    ]
    for o in reversed(opts):
        f = o(f)
    return f


def radiation_options(f):
    """The switches shared by olr and forcing: one profile and the spectral options."""
    return click.option("--profile", "profile_name", default="mls", show_default=True, help=_PROFILE_HELP)(
        spectral_options(f))


_CONVERGENCE_HELP = ("Rerun with the grid rule tightened, the layers doubled and two more angles, and report how "
                     "the headline numbers change (about four times the run time).")


def _echo_convergence(report):
    keys = list(report["baseline"])
    click.echo("  convergence: change when the numerics are made finer [W m-2]")
    click.echo("    " + " " * 8 + "".join(f"{k.replace('_W_m2', ''):>20s}" for k in keys))
    for name, v in report["variants"].items():
        click.echo(f"    {name:8s}" + "".join(f"{v['changes'][k]:+20.4f}" for k in keys))
    for name, v in report["variants"].items():
        click.echo(f"    {name}: {v['description']}")


@main.command("olr")
@radiation_options
@click.option("--convergence", is_flag=True, help=_CONVERGENCE_HELP)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
@click.option("--netcdf", "netcdf_path", type=click.Path(dir_okay=False), help="Write spectra and fluxes to netCDF.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), help="Plot the OLR spectrum (PNG or PDF).")
def olr_cmd(profile_name, lines_store, gases, wn_range, method, grid, no_continuum, cutoff, nodes, diffusivity, spacing,
            co2_chi, refine, convergence, as_json, netcdf_path, plot_path):
    """Clear-sky OLR, surface downward flux and heating rates of a profile."""
    from .io.profiles import load_profile
    from .io.results import longwave_dataset, longwave_summary, write_netcdf
    from .longwave import compute_longwave

    try:
        profile = load_profile(profile_name)
        settings = _settings_from_options(wn_range, method, grid, no_continuum, cutoff, gases, nodes, diffusivity, spacing,
                                          co2_chi, refine)
        spec = _spectroscopy(lines_store)
        with _progress("computing", hidden=as_json) as progress:
            result = compute_longwave(profile, spec, settings, progress=progress)
        if convergence:
            from .convergence import longwave_convergence

            result.convergence = longwave_convergence(profile, spec, settings, result)
        if netcdf_path:
            write_netcdf(longwave_dataset(result), netcdf_path)
        if plot_path:
            from .plots import plot_olr_spectrum

            plot_olr_spectrum({profile.name: (result.wavenumber, result.olr_spectrum)}, plot_path,
                              f"OLR spectrum, profile {profile.name}")
    except (SpecforceError, OSError, ValueError) as exc:
        _fail(exc)
    summary = longwave_summary(result)
    if as_json:
        _echo_json(summary)
        return
    click.echo(f"profile {profile.name}: {profile.source}")
    click.echo(f"  spectroscopy: {summary['spectroscopy'].get('kind')} {summary['spectroscopy'].get('store', '')}")
    click.echo(f"  gases: {', '.join(summary['gases']) or 'none'}; range {wn_range[0]:g}-{wn_range[1]:g} cm-1; "
               f"continuum {'on' if settings.continuum else 'off'}; method {method}")
    click.echo(f"  OLR                   {result.olr:10.3f} W m-2")
    click.echo(f"  surface downward LW   {result.surface_down:10.3f} W m-2")
    click.echo(f"  surface upward LW     {result.flux_up[0]:10.3f} W m-2")
    click.echo(f"  ({summary['grid_points']} spectral points, {summary['run_seconds']:.1f} s)")
    if result.convergence:
        _echo_convergence(result.convergence)


# ------------------------------------------------------------------ forcing


@main.command("forcing")
@radiation_options
@click.option("--scenario", "scenario_path", type=click.Path(exists=True, dir_okay=False),
              help="Scenario file (TOML); replaces --profile and the gas switches.")
@click.option("--co2", help="CO2 change: 2x, 560ppm or 280ppm:560ppm.")
@click.option("--ch4", help="CH4 change: 2x, 1900ppb or 722ppb:1866ppb.")
@click.option("--n2o", help="N2O change: 1.2x, 330ppb or 270ppb:332ppb.")
@click.option("--h2o", help="Water-vapour change: a factor such as 1.2x.")
@click.option("--tropopause", "tropopause_hpa", type=float, help="Tropopause pressure [hPa] (default WMO lapse rate).")
@click.option("--adjusted", is_flag=True, help="Also compute stratosphere-adjusted forcing (fixed dynamical heating).")
@click.option("--responses", is_flag=True, help="Also compute the Planck and fixed-RH water-vapour responses, the "
              "no-feedback warming and the emission temperature and altitude.")
@click.option("--convergence", is_flag=True, help=_CONVERGENCE_HELP)
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
@click.option("--netcdf", "netcdf_path", type=click.Path(dir_okay=False), help="Write spectral and level fields to netCDF.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="Plot spectra, spectral forcing, heating rates and adjustment (PNG or PDF).")
def forcing_cmd(profile_name, lines_store, gases, wn_range, method, grid, no_continuum, cutoff, nodes, diffusivity, spacing,
                co2_chi, refine, scenario_path, co2, ch4, n2o, h2o, tropopause_hpa, adjusted, responses, convergence,
                as_json, netcdf_path, plot_path):
    """Radiative forcing of a change in CO2, CH4, N2O or water vapour for one profile."""
    from .io.profiles import load_profile
    from .forcing import apply_perturbations, forcing_with_options, load_scenario, parse_change
    from .io.results import forcing_dataset, forcing_summary, write_netcdf

    try:
        if scenario_path:
            scen = load_scenario(scenario_path)
            profile, perts, name = scen.profile, scen.perturbations, scen.name
            trop_pa = scen.tropopause_pressure
        else:
            profile = load_profile(profile_name)
            perts = [parse_change(g, v) for g, v in (("CO2", co2), ("CH4", ch4), ("N2O", n2o), ("H2O", h2o)) if v]
            name = f"{profile.name}: " + ", ".join(f"{p.gas} {v}" for p, v in zip(perts, [x for x in (co2, ch4, n2o, h2o) if x]))
            trop_pa = None
        if tropopause_hpa is not None:
            trop_pa = tropopause_hpa * 100.0
        if not perts:
            raise click.UsageError("give a change (--co2 2x, --ch4 722ppb:1866ppb, --h2o 1.2x) or --scenario FILE")
        settings = _settings_from_options(wn_range, method, grid, no_continuum, cutoff, gases, nodes, diffusivity, spacing,
                                          co2_chi, refine)
        spec = _spectroscopy(lines_store)
        base, pert = apply_perturbations(profile, perts)
        with _progress("forcing", hidden=as_json) as progress:
            result, resp = forcing_with_options(base, pert, spec, settings, tropopause=trop_pa, adjusted=adjusted,
                                                responses=responses, convergence=convergence, progress=progress)
        adj = result.adjusted
        if netcdf_path:
            write_netcdf(forcing_dataset(result, name), netcdf_path)
        if plot_path:
            from .plots import plot_forcing

            plot_forcing(result, plot_path, f"Clear-sky longwave forcing, {name}")
    except (SpecforceError, OSError, ValueError) as exc:
        _fail(exc)
    summary = forcing_summary(result, name, resp)
    if as_json:
        _echo_json(summary)
        return
    click.echo(f"scenario: {name}")
    click.echo(f"  spectroscopy: {summary['spectroscopy'].get('kind')}")
    click.echo(f"  clear-sky longwave forcing, range {wn_range[0]:g}-{wn_range[1]:g} cm-1 [W m-2]")
    click.echo(f"    instantaneous, top of atmosphere  {result.toa:9.3f}")
    click.echo(f"    instantaneous, tropopause         {result.tropopause:9.3f}   ({result.tropopause_pressure / 100:.0f} hPa)")
    click.echo(f"    instantaneous, surface            {result.surface:9.3f}")
    if adj:
        click.echo(f"    adjusted, tropopause              {adj['forcing_tropopause']:9.3f}   "
                   f"({adj['iterations']} iterations; shortwave heating held unchanged)")
    click.echo(f"  OLR base {result.base.olr:.3f}, perturbed {result.perturbed.olr:.3f} W m-2")
    if resp:
        click.echo(f"  Planck response {resp['planck_response_W_m2_K']:.3f} W m-2 K-1; fixed-RH water-vapour "
                   f"response {resp['water_vapour_response_W_m2_K']:+.3f} W m-2 K-1")
        click.echo(f"  no-feedback warming {resp['no_feedback_warming_K']:.3f} K (from the "
                   f"{resp['no_feedback_warming_from']} tropopause forcing); emission temperature "
                   f"{resp['emission_temperature_K']:.2f} K, reached at {resp['emission_altitude_m'] / 1000:.2f} km")
    if result.convergence:
        _echo_convergence(result.convergence)
    click.echo("  research estimate for one clear-sky profile, not an assessment (global, all-sky) value")


# ------------------------------------------------------------------ compare


@main.command("compare")
@click.argument("state_a")
@click.argument("state_b", required=False)
@click.option("--lines-b", "lines_b", help="Line store for state B ('builtin' for the built-in set); default as A. "
              "Compare two line-data sources for one atmosphere by giving one state and --lines-b.")
@click.option("--bands", "band_edges", help="Band edges [cm-1], comma-separated (e.g. 10,550,800,1250,3000); "
              "default the named bands listed in the README.")
@click.option("--smooth", "resolution", type=float, default=10.0, show_default=True,
              help="Resolution [cm-1] of the smoothed brightness-temperature difference; 0 for none.")
@spectral_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
@click.option("--netcdf", "netcdf_path", type=click.Path(dir_okay=False), help="Write the comparison to netCDF.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="Plot both brightness-temperature spectra and their difference with band sums (PNG or PDF).")
def compare_cmd(state_a, state_b, lines_b, band_edges, resolution, lines_store, gases, wn_range, method, grid,
                no_continuum, cutoff, nodes, diffusivity, spacing, co2_chi, refine, as_json, netcdf_path, plot_path):
    """Compare the OLR of STATE_A and STATE_B (B minus A): broadband, by band, and as brightness temperature.

    Each state is a profile (bundled name or file), a scenario file (.toml, its
    perturbed state) or a result file written by 'specforce olr --netcdf'
    (or 'forcing --netcdf'; add #base for its base state). With one state and
    --lines-b, the same atmosphere is compared under two line-data sources.
    """
    from .api import compare_olr
    from .compare import DEFAULT_BANDS, bands_from_edges, comparison_summary
    from .io.results import write_netcdf

    try:
        if state_b is None:
            if not lines_b:
                raise click.UsageError("give two states, or one state and --lines-b to compare line-data sources")
            state_b = state_a
        settings = _settings_from_options(wn_range, method, grid, no_continuum, cutoff, gases, nodes, diffusivity, spacing,
                                          co2_chi, refine)
        spec_a = _spectroscopy(lines_store)
        spec_b = None
        if lines_b:
            spec_b = _spectroscopy(None if lines_b == "builtin" else lines_b)
        bands = bands_from_edges(band_edges.split(",")) if band_edges else DEFAULT_BANDS
        ds = compare_olr(state_a, state_b, bands=bands, resolution=resolution or None, spectroscopy=spec_a,
                         spectroscopy_b=spec_b, settings=settings)
        if lines_b:
            ds.attrs["label_a"] += f" [{lines_store or 'built-in lines'}]"
            ds.attrs["label_b"] += f" [{'built-in lines' if lines_b == 'builtin' else lines_b}]"
        if netcdf_path:
            write_netcdf(ds, netcdf_path)
        if plot_path:
            from .plots import plot_comparison

            plot_comparison(ds, plot_path, f"OLR: {ds.attrs['label_b']} minus {ds.attrs['label_a']}")
    except (SpecforceError, OSError, ValueError) as exc:
        _fail(exc)
    summary = comparison_summary(ds)
    if as_json:
        _echo_json(summary)
        return
    click.echo(f"A: {summary['label_a']}")
    click.echo(f"B: {summary['label_b']}")
    click.echo(f"  OLR A {summary['olr_a_W_m2']:.3f}, B {summary['olr_b_W_m2']:.3f}, "
               f"B - A {summary['olr_difference_W_m2']:+.3f} W m-2")
    click.echo(f"  {'band':<18} {'cm-1':>11} {'A':>9} {'B':>9} {'B - A':>8}  [W m-2]")
    for b in summary["bands"]:
        click.echo(f"  {b['band']:<18} {b['lower_cm-1']:5.0f}-{b['upper_cm-1']:<5.0f} {b['olr_a_W_m2']:9.3f} "
                   f"{b['olr_b_W_m2']:9.3f} {b['difference_W_m2']:+8.3f}")
    click.echo(f"  {'sum of bands':<30} {sum(b['difference_W_m2'] for b in summary['bands']):+8.3f}")


# ------------------------------------------------------------------ sweep


def _weighted_profiles(specs, area_mean):
    """Profiles and weights from ``NAME[:WEIGHT]`` strings, or the five AFGL models with area weights."""
    from .io.profiles import load_profile
    from .sweep import AREA_WEIGHTS

    if area_mean:
        if specs:
            raise click.UsageError("give either --area-mean or --profile, not both")
        return [load_profile(n) for n in AREA_WEIGHTS], list(AREA_WEIGHTS.values())
    profiles, weights = [], []
    for spec in specs or ("mls",):
        name, weight = spec, 1.0
        if ":" in spec:
            head, tail = spec.rsplit(":", 1)
            try:
                name, weight = head, float(tail)
            except ValueError:
                pass  # a path containing ':'
        profiles.append(load_profile(name))
        weights.append(weight)
    return profiles, weights


@main.command("sweep")
@click.option("--gas", required=True, type=click.Choice(["CO2", "CH4", "N2O"], case_sensitive=False),
              help="The gas to sweep; the other two stay at their background values.")
@click.option("--from", "start", required=True, help="First concentration: a factor of the reference (0.125x) or an "
              "amount (35ppm, 300ppb).")
@click.option("--to", "stop", required=True, help="Last concentration, as --from.")
@click.option("--steps", type=int, default=20, show_default=True,
              help="Number of concentrations (geometric spacing for CO2, linear for CH4 and N2O).")
@click.option("--profile", "profile_specs", multiple=True,
              help=_PROFILE_HELP + " Repeat for several, with a weight as NAME:WEIGHT (default mls).")
@click.option("--area-mean", is_flag=True, help="The five seasonal AFGL models with area weights (tropical 0.5, "
              "mls/mlw 0.183, sas/saw 0.067) for an approximate global mean.")
@click.option("--reference", help="Reference concentration of the swept gas (default pre-industrial: 278ppm, "
              "722ppb, 270ppb).")
@click.option("--adjusted", is_flag=True, help="Compare stratosphere-adjusted forcing (about ten times slower).")
@click.option("--quadratic", is_flag=True, help="CO2 refit with the Etminan et al. (2016) quadratic correction.")
@click.option("--tropopause", "tropopause_hpa", type=float, help="Tropopause pressure [hPa] (default WMO lapse rate).")
@spectral_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
@click.option("--netcdf", "netcdf_path", type=click.Path(dir_okay=False), help="Write the sweep to netCDF.")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="Plot forcing against concentration with the formulas and residuals (PNG or PDF).")
def sweep_cmd(gas, start, stop, steps, profile_specs, area_mean, reference, adjusted, quadratic, tropopause_hpa,
              lines_store, gases, wn_range, method, grid, no_continuum, cutoff, nodes, diffusivity, spacing, co2_chi, refine,
              as_json, netcdf_path, plot_path):
    """Forcing of one gas across a range of concentrations, next to the published formulas, with refits."""
    import warnings

    from .formulas import COMPARISON_NOTE, FORMULAS, PREINDUSTRIAL, FormulaRangeWarning, forcing_per_doubling
    from .io.results import to_jsonable, write_netcdf
    from .sweep import concentration_sweep, parse_sweep_bound, refit_sweep, sweep_values

    gas = gas.upper()
    caught = []
    try:
        ref = PREINDUSTRIAL[gas] if reference is None else parse_sweep_bound(gas, reference, PREINDUSTRIAL[gas])
        values = sweep_values(gas, parse_sweep_bound(gas, start, ref), parse_sweep_bound(gas, stop, ref), steps)
        profiles, weights = _weighted_profiles(profile_specs, area_mean)
        settings = _settings_from_options(wn_range, method, grid, no_continuum, cutoff, gases, nodes, diffusivity, spacing,
                                          co2_chi, refine)
        spec = _spectroscopy(lines_store)
        with _progress(f"sweeping {gas}", hidden=as_json) as progress:
            result = concentration_sweep(gas, values, profiles, spec, settings, weights=weights, reference=ref,
                                         adjusted=adjusted,
                                         tropopause=None if tropopause_hpa is None else tropopause_hpa * 100.0,
                                         progress=progress)
        fits = refit_sweep(result, quadratic=quadratic)
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", FormulaRangeWarning)
            published = result.formulas()
        if netcdf_path:
            write_netcdf(result.to_dataset(fits), netcdf_path)
        if plot_path:
            from .plots import plot_sweep

            plot_sweep(result, plot_path, f"{gas} sweep, " + ", ".join(result.profiles), fits)
    except (SpecforceError, OSError, ValueError) as exc:
        _fail(exc)
    per_doubling = forcing_per_doubling(result.concentration, result.weighted) if gas == "CO2" else None
    range_notes = sorted({str(w.message) for w in caught})
    if as_json:
        _echo_json(to_jsonable({
            "gas": gas, "unit": result.unit, "reference": result.reference, "background": result.background,
            "concentration": result.concentration, "profiles": result.profiles, "weights": result.weights,
            "forcing_kind": result.kind, "forcing": dict(zip(result.profiles, result.forcing)),
            "forcing_toa": dict(zip(result.profiles, result.forcing_toa)),
            "weighted_forcing": result.weighted, "formulas": published,
            "refits": {k: {"form": f.form, "coefficients": f.coefficients, "standard_errors": f.standard_errors,
                           "rms_residual_W_m2": f.rms_residual, "max_residual_W_m2": f.max_residual,
                           "warning": f.warning} for k, f in fits.items()},
            "forcing_per_doubling_W_m2": per_doubling, "formula_range_warnings": range_notes,
            "comparison_note": COMPARISON_NOTE, "spectroscopy": result.settings["spectroscopy"],
            "settings": result.settings["settings"], "run_seconds": result.settings["seconds"],
        }))
        return
    u = result.unit
    click.echo(f"{gas} sweep, reference {result.reference:g} {u}; profiles "
               + ", ".join(f"{n} ({w:.3g})" for n, w in zip(result.profiles, result.weights)))
    click.echo(f"  forcing: {result.kind} [W m-2]; spectroscopy: {result.settings['spectroscopy'].get('kind')}")
    names = list(FORMULAS)
    head = f"{gas + ' [' + u + ']':>14} {'specforce':>10}" + "".join(f"{n:>16}" for n in names)
    if gas == "CO2":
        head += f"{'per 2x':>8}"
    click.echo(head)
    for j, c in enumerate(result.concentration):
        row = f"{c:14.5g} {result.weighted[j] + 0.0:10.3f}" + "".join(
            f"{published[n][j] + 0.0:8.3f} ({result.weighted[j] - published[n][j] + 0.0:+6.2f})" for n in names)
        if per_doubling is not None:
            row += f"{per_doubling[j]:8.3f}"
        click.echo(row)
    click.echo("  (formula value, with specforce minus formula in brackets)")
    for key, f in fits.items():
        coef = ", ".join(f"{k} = {v:.5g} +- {f.standard_errors[k]:.2g}" for k, v in f.coefficients.items())
        click.echo(f"  refit {key}: {f.form}: {coef}; rms residual {f.rms_residual:.3g} W m-2")
        if f.warning:
            click.echo(f"    warning: {f.warning}")
    for note in range_notes:
        click.echo(f"  note: {note}")
    click.echo(f"  {COMPARISON_NOTE}")
    click.echo(f"  ({result.settings['seconds']:.1f} s)")


if __name__ == "__main__":  # pragma: no cover
    main()

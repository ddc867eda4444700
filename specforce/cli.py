"""The ``specforce`` command line: it parses arguments, calls :mod:`specforce.api` and prints.

User mistakes (domain errors, :class:`specforce.errors.SpecforceError`, and file
errors, :class:`OSError`) end in a one-line message; anything else is a bug and
shows its traceback. Output paths are checked before any computation.
"""

from __future__ import annotations

import contextlib
import json
import math
import sys
import time
import warnings

import click

from . import __version__
from .errors import SpecforceError, SpecforceWarning


class _Number(click.FloatRange):
    """A float in a range that is also finite (click's own range lets nan and inf through)."""

    def convert(self, value, param, ctx):
        value = super().convert(value, param, ctx)
        if not math.isfinite(value):
            self.fail(f"{value} is not a finite number", param, ctx)
        return value


def _echo_json(payload):
    click.echo(json.dumps(payload, indent=2, allow_nan=False))


@contextlib.contextmanager
def _user_errors():
    """Turn a user's mistake into a one-line message; let bugs raise."""
    try:
        yield
    except (SpecforceError, OSError) as exc:
        raise click.ClickException(str(exc)) from None


def _show_warning(message, category, filename, lineno, file=None, line=None):
    """specforce's own warnings as one line on stderr; others as Python prints them."""
    if issubclass(category, SpecforceWarning):
        click.echo(f"warning: {message}", err=True)
    else:
        _python_showwarning(message, category, filename, lineno, file, line)


_python_showwarning = warnings.showwarning


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="specforce")
def main():
    """specforce: line-by-line clear-sky longwave forcing from first principles."""
    warnings.showwarning = _show_warning


# ------------------------------------------------------------------ molecules


@main.command("molecules")
@click.option("--temperature", "temperatures", multiple=True, type=_Number(min=1.0, max=5000.0),
              default=(200.0, 250.0, 296.0), show_default=True, help="Temperatures for Q(T) [K]; repeat for several.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
def molecules_cmd(temperatures, as_json):
    """List the isotopologues specforce knows, with partition functions Q(T)."""
    from .molecules import DETAILED_MOLECULES, isotopologues, partition_function

    rows = []
    with _user_errors():
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
@click.option("--drop-duplicates", is_flag=True, help="Drop records that repeat another exactly.")
@click.option("--compression", type=click.Choice(["lzf", "gzip", "none"]), default="lzf", show_default=True)
def lines_import(files, store, skip_bad, drop_duplicates, compression):
    """Import FILES (160-character line records, plain or .gz/.bz2/.xz/.zip, or
    existing stores) into one line store, sorted by wavenumber."""
    import os

    from .api import import_lines
    from .io.files import check_output_path

    total = sum(os.path.getsize(f) for f in files)
    with _user_errors():
        check_output_path(store, what="line store")
        with _progress("importing", hidden=total < 20e6, length=total) as bar:
            prov = import_lines(list(files), store, skip_bad=skip_bad, drop_duplicates=drop_duplicates,
                                compression=None if compression == "none" else compression, progress=bar.add)
    for src in prov["sources"]:
        skipped = src.get("skipped") or {}
        text = f"{src['path']}: {src['records']} records"
        if skipped:
            text += f", {sum(skipped.values())} skipped (" + ", ".join(f"{n} {k}" for k, n in skipped.items()) + ")"
        click.echo(text)
    for warning in prov["warnings"]:
        click.echo(f"warning: {warning}", err=True)
    click.echo(f"wrote {prov['lines']} lines to {store}")


@lines.command("info")
@click.argument("store", type=click.Path(exists=True, dir_okay=False))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
def lines_info_cmd(store, as_json):
    """Summarise a line store: lines per molecule, wavenumber span, sources, leftovers of interrupted writes."""
    from .api import lines_info

    with _user_errors():
        info = lines_info(store)
    if as_json:
        _echo_json(info)
        return
    click.echo(f"{info['path']}")
    click.echo(f"  {info['total_lines']} lines, {info['size_bytes'] / 1e6:.2f} MB, created {info['created']}")
    for mol, d in info["molecules"].items():
        click.echo(f"  {mol:>6}: {d['lines']:>10} lines  {d['wavenumber_min']:.4f}-{d['wavenumber_max']:.4f} cm-1")
    for src in info["sources"]:
        click.echo(f"  source: {src.get('path')} (sha256 {str(src.get('sha256'))[:12]}...)")
    for p in info["leftover_files"]:
        click.echo(f"  leftover of an interrupted write: {p} (removed by the next write to this store)")


@lines.command("generate")
@click.option("--molecule", "molecules", multiple=True,
              help="Molecules to generate (CO2, H2O, CH4, N2O, O3); repeat for several; default all.")
@click.option("-o", "--output", "out", required=True, type=click.Path(dir_okay=False), help="Store to write.")
def lines_generate(molecules, out):
    """Write the built-in (generated) line set to an ordinary line store."""
    from .api import generate_lines
    from .io.files import check_output_path

    names = [m.upper() for m in molecules] or None
    with _user_errors():
        check_output_path(out, what="line store")
        generate_lines(out, names)
    click.echo(f"wrote the generated {', '.join(names or ['built-in'])} lines to {out}")


@lines.command("select")
@click.argument("store", type=click.Path(exists=True, dir_okay=False))
@click.option("--molecule", "molecules", multiple=True, help="Molecule formula or number; repeat for several.")
@click.option("--range", "wn_range", nargs=2, type=float, help="Wavenumber window MIN MAX [cm-1].")
@click.option("--min-intensity", type=_Number(min=0.0), help="Intensity threshold [cm-1/(molecule cm-2)].")
@click.option("--temperature", type=_Number(min=1.0), default=296.0, show_default=True,
              help="Temperature of the threshold [K].")
@click.option("-o", "--output", "out", required=True, type=click.Path(dir_okay=False), help="Store to write.")
def lines_select(store, molecules, wn_range, min_intensity, temperature, out):
    """Write the lines of STORE that pass the filters to a new, smaller store."""
    from .api import select_lines
    from .io.files import check_output_path

    with _user_errors():
        check_output_path(out, what="line store")
        n = select_lines(store, out, molecules, wn_range, min_intensity, temperature)
    click.echo(f"wrote {n} lines to {out}")


@main.command("leftovers")
@click.argument("folder", type=click.Path(exists=True, file_okay=False), default=".")
@click.option("--remove", is_flag=True, help="Remove them.")
def leftovers_cmd(folder, remove):
    """List (or remove) temporary files left in FOLDER by writes that were killed."""
    from .io.files import leftover_files, remove_leftovers

    found = remove_leftovers(folder) if remove else leftover_files(folder)
    for p in found:
        click.echo(("removed " if remove else "") + p)
    if not found:
        click.echo(f"no leftovers of interrupted writes in {folder}")


# ------------------------------------------------------------------ shared options


class _Progress:
    """A progress bar on stderr (terminals only): percentage, and a time estimate once it means something."""

    def __init__(self, bar, length):
        self.bar, self.length, self.done, self.start = bar, length, 0, time.monotonic()

    def __call__(self, fraction):
        self.to(int(fraction * self.length))

    def add(self, n):
        self.to(self.done + n)

    def to(self, n):
        n = min(n, self.length)
        self.bar.update(n - self.done)
        self.done = n

    def label(self, _item=None):
        frac = self.done / self.length if self.length else 0.0
        elapsed = time.monotonic() - self.start
        if frac < 0.1 or elapsed < 3.0:
            return ""
        return f"{elapsed * (1.0 - frac) / frac:.0f} s left"


@contextlib.contextmanager
def _progress(label, hidden=False, length=1000):
    show = sys.stderr.isatty() and not hidden
    holder = {}
    with click.progressbar(length=length, label=label, file=sys.stderr, hidden=not show, show_eta=False,
                           item_show_func=lambda item: holder["p"].label(item)) as bar:
        holder["p"] = _Progress(bar, length)
        yield holder["p"]


_PROFILE_HELP = "Bundled profile (tropical, mls, mlw, sas, saw, usstd, demo) or a file (.txt, .csv, .nc)."


def spectral_options(f):
    """The switches shared by every command that computes radiation (all but the profile)."""
    opts = [
        click.option("--lines", "lines_store", type=click.Path(exists=True, dir_okay=False),
                     help="Line store to use instead of the built-in spectroscopy where it has lines."),
        click.option("--gases", help="Active absorbers, comma-separated (e.g. H2O,CO2); 'none' for a transparent atmosphere."),
        click.option("--range", "wn_range", nargs=2, type=_Number(min=0.0, min_open=True, max=50000.0),
                     default=(10.0, 3000.0), show_default=True, help="Wavenumber range MIN MAX [cm-1]."),
        click.option("--method", type=click.Choice(["fast", "direct"]), default="fast", show_default=True),
        click.option("--grid", type=click.Choice(["graded", "uniform"]), default="graded", show_default=True,
                     help="Spectral grid: graded (fine only near significant line cores) or the uniform reference."),
        click.option("--no-continuum", is_flag=True, help="Switch the water-vapour continuum off."),
        click.option("--cutoff", type=_Number(min=0.0), default=25.0, show_default=True,
                     help="Line cut-off [cm-1]; 0 for none."),
        click.option("--angles", "nodes", type=click.IntRange(1, 32), default=3, show_default=True,
                     help="Gauss-Legendre nodes in mu."),
        click.option("--diffusivity", is_flag=True, help="One-stream diffusivity approximation (1.66)."),
        click.option("--spacing", type=_Number(min=0.0, min_open=True),
                     help="Fixed grid spacing [cm-1] instead of the rule (at most the 0.1 cm-1 output bins)."),
        click.option("--co2-chi", is_flag=True, help="Sub-Lorentzian chi factor on CO2 lines (Perrin & Hartmann 1989)."),
        click.option("--refine", type=click.IntRange(1, 16), default=1, show_default=True,
                     help="Split each layer into N for convergence."),
    ]
    for o in reversed(opts):
        f = o(f)
    return f


def _calculation(kw):
    """Settings and spectroscopy from the shared options (removed from ``kw``)."""
    from .api import settings, spectroscopy

    gases = kw.pop("gases")
    if gases is not None:
        g = [x.strip() for x in gases.split(",") if x.strip()]
        gases = () if [x.upper() for x in g] == ["NONE"] else g
    cutoff = kw.pop("cutoff")
    sett = settings(wavenumber_range=kw.pop("wn_range"), method=kw.pop("method"), grid=kw.pop("grid"),
                    continuum=not kw.pop("no_continuum"), cutoff=None if cutoff == 0 else cutoff, gases=gases,
                    nodes=kw.pop("nodes"), diffusivity=kw.pop("diffusivity"), spacing=kw.pop("spacing"),
                    co2_chi=kw.pop("co2_chi"), refine=kw.pop("refine"))
    return sett, spectroscopy(lines=kw.pop("lines_store") or None)


def _check_outputs(netcdf_path=None, plot_path=None):
    from .io.files import check_output_path
    from .plots import FIGURE_SUFFIXES

    if netcdf_path:
        check_output_path(netcdf_path, (".nc", ".nc4"), "netCDF output")
    if plot_path:
        check_output_path(plot_path, FIGURE_SUFFIXES, "plot")


def _write_outputs(result, netcdf_path, plot_path, plot):
    from .io.results import write_netcdf

    if netcdf_path:
        write_netcdf(result.to_dataset(), netcdf_path)
    if plot_path:
        plot(result, plot_path)


def _finish(result, as_json):
    if as_json:
        _echo_json(result.to_dict())
    else:
        click.echo(result.summary())


_CONVERGENCE_HELP = ("Rerun with the grid rule tightened, the layers doubled and two more angles, and report how "
                     "the headline numbers change (about four times the run time).")


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
    from .api import olr

    def plot(result, path):
        from .plots import plot_olr_spectrum

        name = result.provenance["profile"]
        plot_olr_spectrum({name: (result.wavenumber, result.olr_spectrum)}, path, f"OLR spectrum, profile {name}")

    with _user_errors():
        _check_outputs(netcdf_path, plot_path)
        sett, spec = _calculation(kw)
        with _progress("computing", hidden=as_json) as progress:
            result = olr(profile_name, spec, sett, convergence=convergence, progress=progress)
        _write_outputs(result, netcdf_path, plot_path, plot)
    _finish(result, as_json)


# ------------------------------------------------------------------ forcing


@main.command("forcing")
@click.option("--profile", "profile_name", help=_PROFILE_HELP + " [default: mls]")
@spectral_options
@click.option("--scenario", "scenario_path", type=click.Path(exists=True, dir_okay=False),
              help="Scenario file (TOML): a profile and its changes; not with --profile or the gas switches.")
@click.option("--co2", help="CO2 change: 2x, 560ppm or 280ppm:560ppm.")
@click.option("--ch4", help="CH4 change: 2x, 1900ppb or 722ppb:1866ppb.")
@click.option("--n2o", help="N2O change: 1.2x, 330ppb or 270ppb:332ppb.")
@click.option("--h2o", help="Water-vapour change: a factor such as 1.2x.")
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
def forcing_cmd(profile_name, scenario_path, co2, ch4, n2o, h2o, tropopause_hpa, adjusted, responses, per_gas,
                convergence, as_json, netcdf_path, plot_path, **kw):
    """Radiative forcing of a change in CO2, CH4, N2O or water vapour for one profile."""
    from .api import radiative_forcing
    from .errors import ScenarioError

    changes = {g: v for g, v in (("CO2", co2), ("CH4", ch4), ("N2O", n2o), ("H2O", h2o)) if v}

    def plot(result, path):
        from .plots import plot_forcing

        plot_forcing(result, path, f"Clear-sky longwave forcing, {result.name}")

    with _user_errors():
        if scenario_path and (changes or profile_name):
            raise ScenarioError(f"--scenario {scenario_path} holds its own profile and changes; give it without "
                                f"--profile and the gas switches ({', '.join('--' + g.lower() for g in changes)})"
                                if changes else f"--scenario {scenario_path} holds its own profile; drop --profile")
        if not scenario_path and not changes:
            raise click.UsageError("give a change (--co2 2x, --ch4 722ppb:1866ppb, --h2o 1.2x) or --scenario FILE")
        _check_outputs(netcdf_path, plot_path)
        sett, spec = _calculation(kw)
        with _progress("forcing", hidden=as_json) as progress:
            result = radiative_forcing(None if scenario_path else (profile_name or "mls"), changes or None, spec,
                                       sett, scenario=scenario_path, adjusted=adjusted, responses=responses,
                                       per_gas=per_gas, convergence=convergence, progress=progress,
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
    from .api import compare_olr, spectroscopy
    from .compare import DEFAULT_BANDS, bands_from_edges

    def plot(result, path):
        from .plots import plot_comparison

        plot_comparison(result.to_dataset(), path, f"OLR: {result.label_b} minus {result.label_a}")

    with _user_errors():
        if state_b is None:
            if not lines_b:
                raise click.UsageError("give two states, or one state and --lines-b to compare line-data sources")
            state_b = state_a
        _check_outputs(netcdf_path, plot_path)
        lines_a = kw["lines_store"]
        sett, spec_a = _calculation(kw)
        spec_b = spectroscopy(lines=None if lines_b == "builtin" else lines_b) if lines_b else None
        bands = bands_from_edges(band_edges.split(",")) if band_edges else DEFAULT_BANDS
        result = compare_olr(state_a, state_b, bands=bands, resolution=resolution or None, spectroscopy=spec_a,
                             spectroscopy_b=spec_b, settings=sett)
        if lines_b:
            from dataclasses import replace

            result = replace(result, label_a=f"{result.label_a} [{lines_a or 'built-in lines'}]",
                             label_b=f"{result.label_b} [{'built-in lines' if lines_b == 'builtin' else lines_b}]")
        _write_outputs(result, netcdf_path, plot_path, plot)
    _finish(result, as_json)


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


@main.command("sweep")
@click.option("--gas", required=True, type=click.Choice(["CO2", "CH4", "N2O"], case_sensitive=False),
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
@click.option("--reference", help="Reference concentration of the swept gas (default pre-industrial: 278ppm, "
              "722ppb, 270ppb).")
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
    from .api import sweep_concentrations
    from .formulas import PREINDUSTRIAL
    from .sweep import parse_sweep_bound, sweep_values

    gas = gas.upper()

    def plot(result, path):
        from .plots import plot_sweep

        plot_sweep(result, path, f"{gas} sweep, " + ", ".join(result.profiles), result.refits)

    with _user_errors():
        if area_mean and profile_specs:
            raise click.UsageError("give either --area-mean or --profile, not both")
        _check_outputs(netcdf_path, plot_path)
        ref = PREINDUSTRIAL[gas] if reference is None else parse_sweep_bound(gas, reference, PREINDUSTRIAL[gas])
        values = sweep_values(gas, parse_sweep_bound(gas, start, ref), parse_sweep_bound(gas, stop, ref), steps)
        names, weights = _weighted_profiles(profile_specs)
        sett, spec = _calculation(kw)
        with _progress(f"sweeping {gas}", hidden=as_json) as progress:
            result = sweep_concentrations(gas, values, names, spec, sett, weights=None if area_mean else weights,
                                          area_mean=area_mean, reference=ref, adjusted=adjusted, quadratic=quadratic,
                                          tropopause=None if tropopause_hpa is None else tropopause_hpa * 100.0,
                                          progress=progress)
        _write_outputs(result, netcdf_path, plot_path, plot)
    _finish(result, as_json)


if __name__ == "__main__":  # pragma: no cover
    main()

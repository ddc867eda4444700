"""What the commands share: the group, user-error handling, progress, and the shared options."""

from __future__ import annotations

import contextlib
import functools
import json
import math
import sys
import time
import warnings

import click

from .._version import __version__
from ..errors import SpecforceError, SpecforceWarning


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
        if self.bar is not None:
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
    # The label must work before the bar exists: click draws the bar, label included, on entering it.
    progress = _Progress(None, length)
    with click.progressbar(length=length, label=label, file=sys.stderr, hidden=not show, show_eta=False,
                           item_show_func=progress.label) as bar:
        progress.bar = bar
        yield progress


_PROFILE_HELP = "Bundled profile (tropical, mls, mlw, sas, saw, usstd, demo) or a file (.txt, .csv, .nc)."


def accept_unusual_option(f):
    """--accept-unusual-profile, on every command that reads profiles (pop it with ``kw.pop("accept_unusual")``)."""
    return click.option(
        "--accept-unusual-profile", "accept_unusual", is_flag=True,
        help="Let a profile through that fails the plausibility checks (surface pressure, altitude scale, "
             "temperatures, water and gases against Earth's range; profiles/README.md), e.g. a high plateau or a "
             "very dry column. The outputs record that the checks were waived.")(f)


def spectral_options(f):
    """The switches shared by every command that computes radiation (all but the profile)."""
    opts = [
        click.option("--lines", "lines_store", type=click.Path(exists=True, dir_okay=False),
                     help="Line store to use instead of the built-in spectroscopy where it has lines."),
        click.option("--lines-only", is_flag=True,
                     help="Use the --lines store alone: no built-in lines fill in where it has none (an "
                          "independent check against your own list)."),
        click.option("--continuum", "continuum_table", type=click.Path(exists=True, dir_okay=False),
                     help="Water-vapour continuum table of your own (format: README, 'Your own water continuum'); "
                          "it replaces or adds to the built-in window continuum as the table says."),
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
        click.option("--co2-chi/--no-co2-chi", default=True, show_default=True,
                     help="CO2 lines with the sub-Lorentzian chi factor (Perrin & Hartmann 1989) and their own "
                          "cut-off (--co2-cutoff); off, they are cut at --cutoff like the other gases'."),
        click.option("--co2-cutoff", type=_Number(min=0.0), default=250.0, show_default=True,
                     help="Cut-off of the CO2 lines with the chi factor [cm-1]; 0 for none."),
        click.option("--h2o-wings", "h2o_far_wing", type=click.Choice(["lorentz", "sub-lorentzian"]),
                     default="lorentz", show_default=True,
                     help="Far wings of the water lines: plain Voigt, or an exponential sub-Lorentzian factor "
                          "(parameters from memory, low confidence; a sensitivity switch)."),
        click.option("--refine", type=click.IntRange(1, 16), default=1, show_default=True,
                     help="Split each layer into N for convergence."),
        click.option("--spectral-model", type=click.Choice(["lbl", "kdist"]), default="lbl", show_default=True,
                     help="lbl: line-by-line. kdist: the calibrated fast model, built once from line-by-line "
                          "('specforce ktables build'); band spectra, and its calibration error on every output."),
        click.option("--threads", type=click.IntRange(1, 4096),
                     help="Threads of the calculation [default: every core]; the results do not depend on it."),
        accept_unusual_option,
    ]
    for o in reversed(opts):
        f = o(f)
    return f


def change_options(f):
    """The gas switches shared by the forcing commands (--co2, --ch4, --n2o, --h2o, ...).

    One option per gas of the registry that has a switch (:mod:`specforce.molecular.gases`),
    in table order. The command receives them as one ``changes`` argument, ``{formula: text}``
    for the switches given, in the same order.
    """
    from ..molecular.gases import all_gases

    switched = [g for g in all_gases() if g.switch]

    @functools.wraps(f)
    def command(*args, **kw):
        given = {g.formula: kw.pop(g.switch_parameter) for g in switched}
        return f(*args, changes={gas: v for gas, v in given.items() if v}, **kw)

    for g in reversed(switched):
        command = click.option(g.switch, g.switch_parameter, help=g.switch_help)(command)
    return command


def _calculation(kw):
    """Settings and spectroscopy from the shared options (removed from ``kw``)."""
    from ..api import spectroscopy

    sett = _settings(kw)
    lines, builtin = _line_source(kw)
    return sett, spectroscopy(lines=lines, builtin=builtin, continuum_table=kw.pop("continuum_table") or None)


def _line_source(kw):
    """(line store or None, whether built-in lines fill in) from --lines and --lines-only (removed from ``kw``)."""
    from ..errors import SettingsError

    lines, only = kw.pop("lines_store") or None, kw.pop("lines_only")
    if only and lines is None:
        raise SettingsError("--lines-only uses an imported line list alone, but no --lines STORE was given; add "
                            "--lines STORE (a store from 'specforce lines import'), or drop --lines-only to use the "
                            "built-in lines")
    return lines, not only


def _settings(kw):
    """Settings from the shared options but --lines and --continuum (removed from ``kw``)."""
    from ..api import settings

    gases = kw.pop("gases")
    if gases is not None:
        g = [x.strip() for x in gases.split(",") if x.strip()]
        gases = () if [x.upper() for x in g] == ["NONE"] else g
    cutoff = kw.pop("cutoff")
    sett = settings(wavenumber_range=kw.pop("wn_range"), method=kw.pop("method"), grid=kw.pop("grid"),
                    continuum=not kw.pop("no_continuum"), cutoff=None if cutoff == 0 else cutoff, gases=gases,
                    nodes=kw.pop("nodes"), diffusivity=kw.pop("diffusivity"), spacing=kw.pop("spacing"),
                    co2_chi=kw.pop("co2_chi"), co2_cutoff=kw.pop("co2_cutoff") or None, refine=kw.pop("refine"),
                    h2o_far_wing=kw.pop("h2o_far_wing"), threads=kw.pop("threads"),
                    spectral_model=kw.pop("spectral_model"))
    return sett


def _check_outputs(netcdf_path=None, plot_path=None, inputs=()):
    """Check the output paths before computing; ``inputs`` [(option, path)] must not be among them."""
    from ..io.files import check_output_path, check_outputs_not_inputs
    from ..io.plots import FIGURE_SUFFIXES

    if netcdf_path:
        check_output_path(netcdf_path, (".nc", ".nc4"), "netCDF output")
    if plot_path:
        check_output_path(plot_path, FIGURE_SUFFIXES, "plot")
    check_outputs_not_inputs([("--netcdf", netcdf_path), ("--plot", plot_path)], inputs)


def _spectral_inputs(kw):
    """The input files among the shared options: [(option, path)]."""
    return [("--lines", kw.get("lines_store")), ("--continuum", kw.get("continuum_table"))]


def _state_inputs(what, state):
    """The files a profile, scenario or result argument reads: [(what, path)] (none for a bundled name).

    A result file may carry ``#base``; a scenario's own profile file is an input too.
    """
    import os
    import tomllib

    if not state:
        return []
    path = state[:-len("#base")] if state.endswith("#base") and not os.path.exists(state) else state
    found = [(what, path)]
    if path.lower().endswith(".toml") and os.path.isfile(path):
        try:
            with open(path, "rb") as fh:
                ref = str(tomllib.load(fh).get("profile", ""))
        except (OSError, ValueError):
            return found  # the scenario loader reports what is wrong with it
        if ref and not os.path.isabs(ref) and os.path.exists(os.path.join(os.path.dirname(path), ref)):
            ref = os.path.join(os.path.dirname(path), ref)
        found.append((f"{what} {path}'s profile", ref))
    return found


def _write_outputs(result, netcdf_path, plot_path, plot):
    """Write the netCDF file and the figure asked for; ``plot(result)`` makes the figure, saved here atomically."""
    from ..io.results import write_netcdf

    if netcdf_path:
        write_netcdf(result.to_dataset(), netcdf_path)
    if plot_path:
        from ..io.plots import save_figure

        save_figure(plot(result), plot_path)


def _finish(result, as_json):
    if as_json:
        _echo_json(result.to_dict())
    else:
        click.echo(result.summary())


_CONVERGENCE_HELP = ("Rerun with the grid rule tightened, the layers doubled and two more angles, and report how "
                     "the headline numbers change (about four times the run time).")

"""Commands for many profiles: batch run (on Dask, resumable) and batch pack (a profile collection)."""

from __future__ import annotations

import sys
import time

import click

from .common import (_Number, _line_source, _settings, _user_errors, _echo_json, accept_unusual_option,
                     change_options, main, spectral_options)


@main.group("batch")
def batch_group():
    """Many profiles at once: OLR or forcing on Dask, resumable, with weighted means."""


@batch_group.command("run")
@click.argument("inputs", nargs=-1, required=True)
@click.option("-o", "--output", type=click.Path(dir_okay=False), required=True,
              help="Result file (netCDF); OUTPUT.parts/ and OUTPUT.log sit beside it.")
@spectral_options
@change_options
@click.option("--tropopause", "tropopause_hpa", type=_Number(min=0.0, min_open=True),
              help="Tropopause pressure [hPa] for every profile (default each one's WMO lapse-rate tropopause).")
@click.option("--adjusted", is_flag=True, help="Also the stratosphere-adjusted forcing.")
@click.option("--responses", is_flag=True, help="Also the Planck and water-vapour responses (whole longwave range).")
@click.option("--weights", help="Comma-separated weight per profile for the means (default the collection's).")
@click.option("--spectra", "spectral_resolution", type=_Number(min=0.0), default=10.0, show_default=True,
              help="Bin width [cm-1] of the stored spectra; 0 for none.")
@click.option("--scheduler", help="Address of a running Dask scheduler (tcp://HOST:PORT), or 'serial' to run in "
              "this process without Dask. Default: a local cluster.")
@click.option("--workers", type=click.IntRange(1, 1024), help="Workers of the local cluster [default: one per core].")
@click.option("--chunk", "chunk_size", type=click.IntRange(1, 100000),
              help="Profiles per task and part file [default: about four chunks per worker, at most 50].")
@click.option("--fresh", is_flag=True, help="Discard the parts of an earlier run of this output instead of resuming.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON summary for scripts.")
def batch_run(inputs, output, changes, tropopause_hpa, adjusted, responses, weights, spectral_resolution,
              scheduler, workers, chunk_size, fresh, as_json, **kw):
    """OLR, or forcing of the given changes (--co2, ...; without changes the job is OLR), for every
    profile of INPUTS.

    INPUTS is a profile collection (netCDF with a site dimension; see profiles/README.md),
    a folder of profile files, 'afgl' (the five seasonal AFGL models with area weights),
    or several bundled names and profile files. Run the same command again after an
    interruption: only the missing chunks are computed.
    """
    from ..batch import run_batch
    from ..batch_runner import check_scheduler_address
    from ..errors import SettingsError
    from ..io.files import check_output_path, check_outputs_not_inputs

    with _user_errors():
        w = None
        if weights:
            try:
                w = [float(x) for x in weights.split(",")]
            except ValueError:
                raise click.BadParameter(f"{weights!r}: give numbers separated by commas", param_hint="--weights")
        (lines, builtin), continuum = _line_source(kw), kw.pop("continuum_table")
        accept = kw.pop("accept_unusual")
        try:
            check_scheduler_address(scheduler)
        except SettingsError as exc:
            raise click.BadParameter(str(exc).replace("scheduler (--scheduler) ", ""), param_hint="--scheduler")
        check_output_path(output, (".nc",), "batch output")
        check_outputs_not_inputs([("-o", output), ("the parts folder of -o", f"{output}.parts"),
                                  ("the log of -o", f"{output}.log")],
                                 [("INPUTS", i) for i in inputs] + [("--lines", lines), ("--continuum", continuum)])
        sett = _settings(kw)
        source = inputs[0] if len(inputs) == 1 else list(inputs)
        try:
            with _BatchProgress(hidden=as_json) as progress:
                result = run_batch(source, output, changes or None, lines=lines, builtin=builtin,
                                   continuum_table=continuum, settings=sett, adjusted=adjusted, responses=responses,
                                   weights=w, spectral_resolution=spectral_resolution,
                                   tropopause=None if tropopause_hpa is None else tropopause_hpa * 100.0,
                                   scheduler=scheduler, workers=workers, chunk_size=chunk_size, fresh=fresh,
                                   progress=progress, accept_unusual=accept)
        except KeyboardInterrupt:
            click.echo(f"interrupted: the chunks finished so far are kept in {output}.parts; run the same command "
                       f"again to compute the rest", err=True)
            sys.exit(130)
    if as_json:
        _echo_json(result.to_dict())
    else:
        click.echo(result.summary())
    if not result.complete:
        sys.exit(3)
    if result.ok == 0 and result.failed:
        reasons = "; ".join(f"{label}: {msg}" for label, msg in list(result.errors.items())[:3])
        raise click.ClickException(f"every profile failed ({result.failed} of {result.sites}); the first: {reasons} "
                                   f"(all in {output}.log)")


@batch_group.command("pack")
@click.argument("inputs", nargs=-1, required=True)
@click.option("-o", "--output", type=click.Path(dir_okay=False), required=True, help="Profile collection to write.")
@click.option("--weights", help="Comma-separated weight per profile ('afgl' brings its area weights).")
@accept_unusual_option
def batch_pack(inputs, output, weights, accept_unusual):
    """Write profiles (bundled names, files, folders, or 'afgl') into one profile collection (netCDF)."""
    from ..batch import pack_profiles
    from ..io.files import check_output_path, check_outputs_not_inputs

    with _user_errors():
        check_output_path(output, (".nc",), "profile collection")
        check_outputs_not_inputs([("-o", output)], [("INPUTS", i) for i in inputs])
        w = [float(x) for x in weights.split(",")] if weights else None
        source = "afgl" if [i.lower() for i in inputs] == ["afgl"] else list(inputs)
        coll = pack_profiles(source, output, weights=w, accept_unusual=accept_unusual)
    click.echo(f"wrote {output}: {len(coll)} profiles along '{coll.dimension}'"
               + (", with weights" if coll.weights is not None else ""))


class _BatchProgress:
    """Profiles done, rate and time left, on stderr (terminals only)."""

    def __init__(self, hidden=False):
        self.show = sys.stderr.isatty() and not hidden
        self.start = time.monotonic()
        self.first = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        if self.show:
            click.echo("", err=True)

    def __call__(self, done, total):
        if self.first is None:
            self.first = (done, time.monotonic())  # profiles done before (resumed) do not count for the rate
            return
        if not self.show:
            return
        d0, t0 = self.first
        elapsed = time.monotonic() - t0
        rate = (done - d0) / elapsed if elapsed > 0 else 0.0
        left = f", {(total - done) / rate:.0f} s left" if rate > 0 and done > d0 else ""
        click.echo(f"\r{done}/{total} profiles, {rate * 60:.1f} per minute{left}   ", err=True, nl=False)

"""``specforce ktables``: build, calibrate and describe the fast model's tables."""

from __future__ import annotations

import click

from .common import _calculation, _echo_json, _progress, _user_errors, main, spectral_options


@main.group()
def ktables():
    """The fast mode's k-distribution tables (spectral_model 'kdist'): built once from specforce's own
    line-by-line absorption for a spectroscopy and line-shape settings, calibrated against line-by-line,
    and cached."""


@ktables.command("build")
@spectral_options
@click.option("--calibration", type=click.Choice(["full", "quick", "none"]), default="full", show_default=True,
              help="Calibration set: full (the six AFGL profiles as given, warmed and cooled by 5 K, water halved "
                   "and doubled, 7 changes each), quick (as given only: the fit's own states, about a fifth of the "
                   "time), none (results then say they are uncalibrated).")
@click.option("--rebuild", is_flag=True, help="Build again even where cached tables exist.")
@click.option("--json", "as_json", is_flag=True, help="Print the tables' description as JSON.")
def build(calibration, rebuild, as_json, **kw):
    """Build (and calibrate) the tables for the spectroscopy and line-shape options given."""
    from ..api_kdist import build_fast_tables
    from ..io.ktables import tables_record, tables_text

    kw.pop("accept_unusual")
    with _user_errors():
        sett, spec = _calculation(kw)
        with _progress("ktables") as bar:
            stages = {"building tables": (0.0, 0.6), "calibrating": (0.6, 0.4)}

            def report(stage, f):
                a, w = stages.get(stage, (0.0, 1.0))
                bar(a + w * f)
            tables = build_fast_tables(spec, sett, calibration=calibration, rebuild=rebuild, progress=report)
        if as_json:
            _echo_json(tables_record(tables))
        else:
            click.echo(tables_text(tables))


@ktables.command("info")
@click.argument("source", required=False)
@spectral_options
@click.option("--json", "as_json", is_flag=True, help="Print the description as JSON.")
def info(source, as_json, **kw):
    """Describe tables: SOURCE a table file or key, or (without it) the cached tables for the options given."""
    from ..api_kdist import fast_tables, fast_tables_path
    from ..io.ktables import tables_record, tables_text

    kw.pop("accept_unusual")
    with _user_errors():
        if source:
            tables = fast_tables_path(source)
        else:
            sett, spec = _calculation(kw)
            tables = fast_tables(spec, sett)
        if as_json:
            _echo_json(tables_record(tables))
        else:
            click.echo(tables_text(tables))

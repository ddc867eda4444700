"""The ``specforce`` command line. It parses arguments and calls the public API only."""

from __future__ import annotations

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


if __name__ == "__main__":  # pragma: no cover
    main()

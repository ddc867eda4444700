"""Commands on line data and molecules: lines import/info/select/generate, molecules, leftovers."""

from __future__ import annotations

import click

from .common import _Number, _echo_json, _progress, _user_errors, main

# ------------------------------------------------------------------ molecules


@main.command("molecules")
@click.option("--temperature", "temperatures", multiple=True, type=_Number(min=1.0, max=5000.0),
              default=(200.0, 250.0, 296.0), show_default=True, help="Temperatures for Q(T) [K]; repeat for several.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object for scripts.")
def molecules_cmd(temperatures, as_json):
    """List the isotopologues specforce knows, with partition functions Q(T)."""
    from ..molecular.molecules import DETAILED_MOLECULES, isotopologues, partition_function

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

    from ..api_lines import import_lines
    from ..io.files import check_output_path, check_outputs_not_inputs

    total = sum(os.path.getsize(f) for f in files)
    with _user_errors():
        check_output_path(store, what="line store")
        check_outputs_not_inputs([("-o", store)], [("FILES", f) for f in files])
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
    from ..api_lines import lines_info

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
    from ..api_lines import generate_lines
    from ..io.files import check_output_path, check_outputs_not_inputs

    names = [m.upper() for m in molecules] or None
    with _user_errors():
        check_output_path(out, what="line store")
        check_outputs_not_inputs([("-o", out)], [("table", t) for t in _linedata_tables()])
        generate_lines(out, names)
    click.echo(f"wrote the generated {', '.join(names or ['built-in'])} lines to {out}")


def _linedata_tables():
    """The bundled molecular-constant tables the line generator reads."""
    import glob
    import os

    from .. import linedata

    return sorted(glob.glob(os.path.join(os.path.dirname(linedata.__file__), "*.toml")))


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
    from ..api_lines import select_lines
    from ..io.files import check_output_path, check_outputs_not_inputs

    with _user_errors():
        check_output_path(out, what="line store")
        check_outputs_not_inputs([("-o", out)], [("STORE", store)])
        n = select_lines(store, out, molecules, wn_range, min_intensity, temperature)
    click.echo(f"wrote {n} lines to {out}")


@main.command("leftovers")
@click.argument("folder", type=click.Path(exists=True, file_okay=False), default=".")
@click.option("--remove", is_flag=True, help="Remove them.")
def leftovers_cmd(folder, remove):
    """List (or remove) temporary files left in FOLDER by writes that were killed."""
    from ..io.files import leftover_files, remove_leftovers

    found = remove_leftovers(folder) if remove else leftover_files(folder)
    for p in found:
        click.echo(("removed " if remove else "") + p)
    if not found:
        click.echo(f"no leftovers of interrupted writes in {folder}")

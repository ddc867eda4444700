"""Continuum tables from the user: format, errors, and their use in a calculation.

The tables here are invented (numbers chosen to exercise the code, not measured continua).
"""

import numpy as np
import pytest

import specforce
from specforce.absorption.continuum import ContinuumTable, continuum_optical_depth, roberts_self_coefficient
from specforce.errors import ContinuumTableError
from specforce.io.continuum_tables import read_continuum_table, write_continuum_table

HEADER = """# invented table for tests
format = specforce-continuum 1
name = invented test continuum
source = invented for specforce's tests
molecule = H2O
reference_temperature_K = 296
line_cutoff_cm-1 = 25
line_pedestal = kept
window_continuum = add
data:
# wavenumber self self_exponent foreign foreign_exponent
"""


def _write(tmp_path, rows, header=HEADER, name="t.txt"):
    path = tmp_path / name
    path.write_text(header + "\n".join(rows) + "\n")
    return path


def _table(wn, c_self, n_self=0.0, c_foreign=0.0, n_foreign=0.0, **kw):
    wn = np.asarray(wn, float)
    full = lambda v: np.broadcast_to(np.asarray(v, float), wn.shape).copy()  # noqa: E731
    return ContinuumTable(wn, full(c_self), full(n_self), full(c_foreign), full(n_foreign), **kw)


def test_round_trip(tmp_path):
    t = _table([10.0, 20.0, 35.5], [1e-21, 2e-21, 3e-22], 4.5, [1e-24, 2e-24, 3e-25], 0.5,
               line_cutoff=25.0, pedestal_subtracted=True, replaces_window=False)
    write_continuum_table(tmp_path / "t.txt", t, "invented", "invented for a test")
    r = read_continuum_table(tmp_path / "t.txt")
    for f in ("wavenumber", "self_coefficient", "self_exponent", "foreign_coefficient", "foreign_exponent"):
        assert np.array_equal(getattr(r, f), getattr(t, f)), f
    assert (r.line_cutoff, r.pedestal_subtracted, r.replaces_window) == (25.0, True, False)
    assert len(r.provenance["sha256"]) == 64 and r.record()["coverage_cm1"] == [10.0, 35.5]


def test_the_shipped_example_reads(tmp_path):
    from pathlib import Path

    t = read_continuum_table(Path(__file__).parent.parent / "examples" / "invented_continuum_table.txt")
    assert "invented" in t.provenance["name"].lower() and t.wavenumber.size > 10


@pytest.mark.parametrize("rows, header_change, expected", [
    (["10 1e-21 0 0 0"], None, "line 10: a table needs at least two rows"),
    (["10 1e-21 0 0 0", "10 1e-21 0 0 0"], None, "line 13: field wavenumber_cm-1: 10 does not increase"),
    (["10 1e-21 0 0", "20 1e-21 0 0 0"], None, "line 12: expected 5 numbers"),
    (["10 abc 0 0 0", "20 1e-21 0 0 0"], None, "line 12: field self: 'abc' is not a number"),
    (["10 nan 0 0 0", "20 1e-21 0 0 0"], None, "field self: 'nan' is not a finite number"),
    (["10 -1e-21 0 0 0", "20 1e-21 0 0 0"], None, "field self: -1e-21 is negative"),
    (["10 1e-21 0 0.5 0", "20 1e-21 0 0 0"], None, "field foreign: 0.5 cm2 molecule-1 atm-1 is far above"),
    (["10 1e-21 45 0 0", "20 1e-21 0 0 0"], None, "field self_exponent: 45 is not a plausible"),
    (["10 1e-21 0 0 0", "20 1e-21 0 0 0"], ("molecule = H2O", "molecule = CO2"), "line 5: molecule: 'CO2'"),
    (["10 1e-21 0 0 0", "20 1e-21 0 0 0"], ("line_pedestal = kept", "line_pedestal = maybe"),
     "line 8: line_pedestal: 'maybe' is not 'subtracted' or 'kept'"),
    (["10 1e-21 0 0 0", "20 1e-21 0 0 0"], ("reference_temperature_K = 296", "reference_temperature_K = 29.6"),
     "line 6: reference_temperature_K: 29.6 is not a temperature in K between 100 and 400"),
    (["10 1e-21 0 0 0", "20 1e-21 0 0 0"], ("line_cutoff_cm-1 = 25\n", ""), "missing header key(s) line_cutoff_cm-1"),
    (["10 1e-21 0 0 0", "20 1e-21 0 0 0"], ("molecule = H2O", "molecule = H2O\nmolecule = H2O"),
     "line 6: key 'molecule' given twice (first on line 5)"),
    (["10 1e-21 0 0 0", "20 1e-21 0 0 0"], ("molecule = H2O", "colour = blue"), "line 5: unknown key 'colour'"),
    (["10 1e-21 0 0 0", "20 1e-21 0 0 0"], ("data:\n", ""), "expected 'key = value' or 'data:'"),
])
def test_errors_name_the_file_line_and_field(tmp_path, rows, header_change, expected):
    header = HEADER if header_change is None else HEADER.replace(*header_change)
    path = _write(tmp_path, rows, header)
    with pytest.raises(ContinuumTableError) as err:
        read_continuum_table(path)
    assert str(path) in str(err.value) and expected in str(err.value), str(err.value)


def test_binary_and_missing_files_are_errors(tmp_path):
    (tmp_path / "b.txt").write_bytes(b"\xff\xfe\x00binary")
    with pytest.raises(ContinuumTableError, match="not a text file"):
        read_continuum_table(tmp_path / "b.txt")
    with pytest.raises(ContinuumTableError, match="cannot be read"):
        read_continuum_table(tmp_path / "none.txt")


def test_table_of_the_window_formula_reproduces_it():
    # Roberts et al. (1976), Eqs. 4-6 (the built-in window continuum), tabulated at 296 K every 1 cm-1 with the
    # foreign coefficient as the paper's 0.002 x self: at 296 K the table reproduces the formula to the
    # interpolation error (linear between 1 cm-1 rows of a smooth exponential: below 1e-5 relative).
    wn = np.arange(800.0, 1251.0)
    cs = roberts_self_coefficient(wn, 296.0)
    t = _table(wn, cs, 0.0, 0.002 * cs, 0.0)
    x = np.linspace(800.0, 1250.0, 1777)
    p, vmr, u = 80000.0, 0.01, 3e22
    ref = continuum_optical_depth(x, p, 296.0, vmr, u)
    assert np.allclose(t.optical_depth(x, p, 296.0, vmr, u), ref, rtol=1e-5, atol=0)


def test_temperature_scaling_and_coverage():
    t = _table([100.0, 200.0], [1e-21, 3e-21], 2.0, [1e-23, 1e-23], 0.0, reference_temperature=296.0)
    cs, cf = t.coefficients([50.0, 150.0, 250.0], 148.0)
    assert cs[0] == 0 and cs[2] == 0  # zero outside the table
    assert cs[1] == pytest.approx(2e-21 * 4.0, rel=1e-12)  # (296/148)^2
    assert cf[1] == pytest.approx(1e-23, rel=1e-12)


@pytest.fixture(scope="module")
def mls_water_window():
    return dict(wavenumber_range=(300.0, 360.0), gases=["H2O"])


def test_zero_table_replacing_the_window_equals_no_continuum(tmp_path, mls_water_window):
    # Consistency: a table of zeros that replaces the window continuum, with the default line treatment
    # (cut-off 25 cm-1, pedestal kept), gives the same OLR as the continuum switched off.
    spec = specforce.spectroscopy(continuum_table=_table([10.0, 3000.0], 0.0, replaces_window=True))
    a = specforce.olr("mls", spectroscopy=spec, **mls_water_window)
    b = specforce.olr("mls", spectroscopy=specforce.spectroscopy(), continuum=False, **mls_water_window)
    assert a.olr == pytest.approx(b.olr, abs=1e-9) and a.surface_down == pytest.approx(b.surface_down, abs=1e-9)
    assert a.provenance["spectroscopy"]["continuum_table"]["window_continuum"] == "replaced"


def test_far_infrared_table_lowers_olr_and_raises_back_radiation(tmp_path, mls_water_window):
    # Direction (a fact of the trade): a far-infrared continuum absorbs and emits, so OLR falls and the surface
    # downward flux rises. Invented coefficients of the right order for the far infrared.
    path = _write(tmp_path, ["300 2e-21 4.5 5e-23 0", "700 1e-21 4.5 2e-23 0"])
    spec = specforce.spectroscopy(continuum_table=str(path))
    window = dict(wavenumber_range=(400.0, 600.0), gases=["H2O"])
    a = specforce.olr("mls", spectroscopy=spec, **window)
    b = specforce.olr("mls", spectroscopy=specforce.spectroscopy(), **window)
    assert a.olr < b.olr - 1.0 and a.surface_down > b.surface_down + 1.0  # measured -2.95 and +3.51 W m-2
    assert a.provenance["spectroscopy"]["continuum_table"]["sha256"] == read_continuum_table(path).provenance["sha256"]


def test_pedestal_treatment_applies_to_water_lines_only(mls_water_window):
    # The table's line treatment is applied to the water lines: subtracting the pedestal removes absorption
    # (OLR rises); CO2 alone is untouched by it.
    base = dict(replaces_window=True)
    kept = specforce.spectroscopy(continuum_table=_table([10.0, 3000.0], 0.0, pedestal_subtracted=False, **base))
    sub = specforce.spectroscopy(continuum_table=_table([10.0, 3000.0], 0.0, pedestal_subtracted=True, **base))
    a = specforce.olr("mls", spectroscopy=kept, **mls_water_window)
    b = specforce.olr("mls", spectroscopy=sub, **mls_water_window)
    assert b.olr > a.olr
    from specforce.radiation.column import Absorbers, Column

    settings = specforce.settings(wavenumber_range=(600.0, 640.0), gases=["H2O", "CO2"], cutoff=10.0)
    col = Column(specforce.load_profile("mls"), sub, settings)
    ab = Absorbers(col, sub, col.gases, settings, col.continuum)
    assert ab._options("CO2") == settings.line_shape() and settings.line_shape().co2_chi
    assert ab._options("H2O").subtract_cutoff and ab._options("H2O").cutoff == 25.0
    assert ab.reach == 251.0  # CO2's chi wings reach furthest
    plain = specforce.settings(wavenumber_range=(600.0, 640.0), gases=["H2O", "CO2"], cutoff=10.0, co2_chi=False)
    ab = Absorbers(col, sub, col.gases, plain, col.continuum)
    assert ab._options("CO2") == plain.line_shape() and ab.reach == 26.0

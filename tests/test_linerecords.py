"""The 160-character record reader: hand-made records, real files, compression, errors."""

import bz2
import gzip
import lzma
import os
import zipfile
import zlib

import numpy as np
import pytest

from specforce.errors import LineRecordError
from specforce.io.lineimport import import_lines
from specforce.io.linerecords import FIELDS, RECORD_LENGTH, ReadReport, format_record, iter_record_blocks, read_records

# Invented example values (they describe no real transition).
EXAMPLE = dict(
    molecule=2, isotopologue=1, wavenumber=667.123456, intensity=3.456e-19, einstein_a=1.234e-01,
    gamma_air=0.0712, gamma_self=0.089, lower_energy=123.4567, n_air=0.75, delta_air=-0.000844,
    global_upper="       0 1 1 01", global_lower="       0 0 0 01", local_upper="               ",
    local_lower="     Q 12e     ", uncertainty="366332", references="  9  9 11 11", line_mixing=" ",
    g_upper=25.0, g_lower=25.0,
)


def test_field_layout_sums_to_160():
    # Rothman et al. (2005), JQSRT 96, 139, Table 1: the widths add to 160 and tile the record.
    pos = 0
    for f in FIELDS:
        assert f.start == pos
        pos += f.width
    assert pos == RECORD_LENGTH


def _write(tmp_path, records, name="x.par", newline="\n"):
    p = tmp_path / name
    p.write_bytes(newline.join(records).encode("latin-1") + newline.encode())
    return p


def test_hand_made_record_round_trip(tmp_path):
    rec = format_record(**EXAMPLE)
    assert len(rec) == 160
    assert rec[59:67] == "-.000844"  # F8.6 without the leading zero, as records write it
    c = read_records(_write(tmp_path, [rec]))
    for k in ("wavenumber", "intensity", "einstein_a", "gamma_air", "gamma_self", "lower_energy", "n_air", "delta_air", "g_upper", "g_lower"):
        assert c[k][0] == pytest.approx(EXAMPLE[k], rel=1e-15), k
    assert c["molecule"][0] == 2 and c["isotopologue"][0] == 1
    assert c["local_lower"][0] == b"     Q 12e     "
    assert c["references"][0] == b"  9  9 11 11"


@pytest.mark.parametrize("iso,code", [(10, "0"), (11, "A"), (12, "B")])
def test_isotopologue_letter_codes(tmp_path, iso, code):
    rec = format_record(**{**EXAMPLE, "isotopologue": iso})
    assert rec[2] == code
    assert read_records(_write(tmp_path, [rec]))["isotopologue"][0] == iso


def test_fortran_number_forms(tmp_path):
    # Fortran reads D exponents, lower-case e and an exponent without its letter (1.5-3).
    base = format_record(**EXAMPLE)
    recs = [base[:15] + field + base[25:] for field in (" 3.456D-19", " 3.456e-19", "  3.456-19", "0.3456E-18")]
    c = read_records(_write(tmp_path, recs))
    assert np.allclose(c["intensity"], 3.456e-19, rtol=1e-15)


def test_lf_and_crlf_and_compressed_files_agree(tmp_path):
    recs = [format_record(**{**EXAMPLE, "wavenumber": 500.0 + i}) for i in range(50)]
    plain = _write(tmp_path, recs)
    crlf = _write(tmp_path, recs, "crlf.par", "\r\n")
    raw = plain.read_bytes()
    (tmp_path / "x.par.gz").write_bytes(gzip.compress(raw))
    (tmp_path / "x.par.bz2").write_bytes(bz2.compress(raw))
    (tmp_path / "x.par.xz").write_bytes(lzma.compress(raw))
    with zipfile.ZipFile(tmp_path / "x.zip", "w") as zf:
        zf.writestr("x.par", raw)
    ref = read_records(plain)["wavenumber"]
    for p in [crlf, tmp_path / "x.par.gz", tmp_path / "x.par.bz2", tmp_path / "x.par.xz", tmp_path / "x.zip"]:
        assert np.array_equal(read_records(p)["wavenumber"], ref), p


def test_chunk_boundaries_do_not_change_the_result(tmp_path):
    recs = [format_record(**{**EXAMPLE, "wavenumber": 500.0 + i / 7}) for i in range(300)]
    p = _write(tmp_path, recs, newline="\r\n")
    ref = read_records(p)["wavenumber"]
    for chunk in (100, 161, 999, 4096):
        got = np.concatenate([b["wavenumber"] for b in iter_record_blocks(p, chunk_bytes=chunk)])
        assert np.array_equal(got, ref)


@pytest.mark.parametrize(
    "edit,field,message",
    [
        (lambda r: r[:100], "record", "has 100 characters, expected 160"),
        (lambda r: r[:3] + "  12x.456789" + r[15:], "wavenumber", "could not be read"),
        (lambda r: "99" + r[2:], "molecule", "unknown molecule number 99"),
        (lambda r: r[:2] + "Z" + r[3:], "isotopologue", "has no isotopologue"),
        (lambda r: r[:15] + "-3.456E-19" + r[25:], "intensity", "impossible value"),
        (lambda r: r[:35] + "-.071" + r[40:], "gamma_air", "impossible value"),
        (lambda r: r[:3] + "         nan" + r[15:], "wavenumber", "could not be read"),
    ],
)
def test_malformed_record_names_file_line_field_and_text(tmp_path, edit, field, message):
    good = format_record(**EXAMPLE)
    p = _write(tmp_path, [good, good, edit(good)])
    with pytest.raises(LineRecordError, match=message) as err:
        read_records(p)
    e = err.value
    assert e.line == 3 and e.field == field and str(p) in str(e) and "line 3" in str(e)
    assert e.raw and e.raw in str(e)


# Values no real line can have, one per bounded field (columns as in Rothman et al. 2005, Table 1),
# with the words of the bound the message must give.
IMPOSSIBLE = [
    ("wavenumber", 3, 15, "   -5.000000", "not above the lower bound 0 cm-1"),
    ("intensity", 15, 25, " 1.000E+10", "above the upper bound 1e-14 cm-1/(molecule cm-2)"),
    ("intensity", 15, 25, " 0.000E+00", "not above the lower bound 0 cm-1/(molecule cm-2)"),
    ("einstein_a", 25, 35, "-1.000E+00", "below the lower bound 0 s-1"),
    ("gamma_air", 35, 40, "2.000", "above the upper bound 1 cm-1 atm-1"),
    ("gamma_self", 40, 45, "9.000", "above the upper bound 5 cm-1 atm-1"),
    ("lower_energy", 45, 55, "   -5.0000", "below the lower bound 0 cm-1"),
    ("lower_energy", 45, 55, "  1.50E+05", "above the upper bound 100000 cm-1"),
    ("n_air", 55, 59, "5.00", "above the upper bound 3"),
    ("n_air", 55, 59, "-3.0", "below the lower bound -2"),
    ("delta_air", 59, 67, "-2.00000", "below the lower bound -1 cm-1 atm-1"),
    ("g_upper", 146, 153, "   -3.0", "below the lower bound 0"),
]


@pytest.mark.parametrize("field,start,stop,text,bound", IMPOSSIBLE)
def test_impossible_line_parameters_are_rejected_with_their_bound(tmp_path, field, start, stop, text, bound):
    good = format_record(**EXAMPLE)
    p = _write(tmp_path, [good, good[:start] + text + good[stop:]])
    with pytest.raises(LineRecordError, match="impossible value") as err:
        read_records(p)
    e = err.value
    msg = str(e)
    assert e.line == 2 and e.field == field and e.raw == text
    assert str(p) in msg and "line 2" in msg and f"field '{field}'" in msg and repr(text) in msg
    assert bound in msg
    basis = msg.split(bound)[1].split("; raw text")[0]  # the bound's basis follows it
    assert basis.startswith(": ") and len(basis) > 20
    # --skip-bad drops the record and counts it
    rep = ReadReport()
    assert read_records(p, on_error="skip", report=rep)["wavenumber"].size == 1
    assert rep.skipped == {"impossible value": 1}


def test_unusual_but_real_line_parameters_pass(tmp_path):
    # Strong, broad, hot lines inside every bound, with the placeholders the records use:
    # E'' = -1 for an unknown lower-state energy and a blank Einstein A.
    hot = format_record(**{**EXAMPLE, "lower_energy": 42000.0, "n_air": 1.5})
    recs = [
        format_record(**{**EXAMPLE, "intensity": 5e-18, "gamma_self": 0.95, "n_air": -0.5, "delta_air": -0.08}),
        format_record(**{**EXAMPLE, "lower_energy": -1.0}),
        hot[:25] + " " * 10 + hot[35:],
    ]
    c = read_records(_write(tmp_path, recs))
    assert c["wavenumber"].size == 3 and np.isnan(c["einstein_a"][2]) and c["lower_energy"][1] == -1.0


def test_skip_mode_counts_and_reports(tmp_path):
    good = format_record(**EXAMPLE)
    p = _write(tmp_path, [good, good[:90], "99" + good[2:], good])
    rep = ReadReport()
    c = read_records(p, on_error="skip", report=rep)
    assert c["wavenumber"].size == 2
    assert rep.records == 2 and rep.total_skipped == 2
    assert rep.skipped == {"wrong record length": 1, "unknown molecule": 1}
    assert "2 skipped" in rep.summary()


def test_truncated_gzip_is_a_clear_error(tmp_path):
    raw = gzip.compress(("\n".join([format_record(**EXAMPLE)] * 2000) + "\n").encode())
    p = tmp_path / "cut.par.gz"
    p.write_bytes(raw[: len(raw) // 2])
    with pytest.raises(LineRecordError, match="could not be read or decompressed"):
        read_records(p)


def _damaged_gzip(tmp_path, records=4000):
    """A .par.gz whose deflate stream breaks two thirds in (flipped bytes that zlib rejects)."""
    raw = gzip.compress(("\n".join(format_record(**{**EXAMPLE, "wavenumber": 500.0 + i / 100})
                                   for i in range(records)) + "\n").encode())
    for at in range(len(raw) * 2 // 3, len(raw)):
        data = bytearray(raw)
        for i in range(at, at + 4):
            data[i] ^= 0xFF
        try:
            zlib.decompress(bytes(data), wbits=31)
        except zlib.error:
            break  # flips that some garbage decodes through would test the record checks instead
    else:
        raise AssertionError("no flip found that breaks the deflate stream")
    p = tmp_path / "flipped.par.gz"
    p.write_bytes(bytes(data))
    return p


def test_corrupt_gzip_is_a_clear_error_that_says_how_far_it_got(tmp_path):
    # Flipped bytes make zlib itself fail (zlib.error, not an OSError): still a LineRecordError
    # naming the file and how much of it was read, never a traceback. Skipping bad records
    # (the garbage decoded before the failure) does not skip a damaged file.
    p = _damaged_gzip(tmp_path)
    with pytest.raises(LineRecordError, match="could not be read or decompressed") as err:
        for _ in iter_record_blocks(p, chunk_bytes=16 * 1024, on_error="skip"):
            pass
    msg = str(err.value)
    assert str(p) in msg and "damaged or cut short" in msg and "whole lines" in msg
    got = int(msg.split("after ")[1].split(" bytes")[0])
    assert 0 < got < 4000 * 161 and err.value.line > 1
    assert f"of the {p.stat().st_size}-byte file" in msg
    # the import stops the same way and writes nothing
    with pytest.raises(LineRecordError, match="damaged or cut short"):
        import_lines([p], tmp_path / "s.h5", on_error="skip")
    assert sorted(os.listdir(tmp_path)) == ["flipped.par.gz"]


# --- real data (../shared/linedata-src, see PROVENANCE.md) --------------------------

PROVENANCE_FACTS = {
    # file: (records, first wavenumber, last wavenumber, lines with S >= 1e-27), from PROVENANCE.md
    "h2o_HITRAN.par": (19615, 0.072059, 2999.861820, 8292),
    "sample_CO2.par": (5492, 0.757206, 499.974727, 187),
    "sample_N2O.par": (5446, 0.791154, 569.997772, 2756),
}


@pytest.mark.parametrize("name", sorted(PROVENANCE_FACTS))
def test_real_files_match_their_provenance(real_lines, name):
    n, first, last, strong = PROVENANCE_FACTS[name]
    c = read_records(real_lines / name)
    assert c["wavenumber"].size == n
    assert c["wavenumber"][0] == first and c["wavenumber"][-1] == pytest.approx(last, abs=1e-9)
    assert np.all(np.diff(c["wavenumber"]) >= 0)
    assert int(np.sum(c["intensity"] >= 1e-27)) == strong


def test_real_isotopologue_counts(real_lines):
    # PROVENANCE.md: CO2 iso1..8 = 1995, 586, 1715, 861, 234, 87, 12, 2;
    # N2O iso1..5 = 1123, 248, 166, 3885, 24.
    co2 = read_records(real_lines / "sample_CO2.par")
    assert np.bincount(co2["isotopologue"])[1:].tolist() == [1995, 586, 1715, 861, 234, 87, 12, 2]
    n2o = read_records(real_lines / "sample_N2O.par")
    assert np.bincount(n2o["isotopologue"])[1:].tolist() == [1123, 248, 166, 3885, 24]


def test_real_first_water_record_fields(real_lines):
    # The first record of h2o_HITRAN.par, field by field as printed in the file:
    # " 11    0.072059 2.043E-30 5.088E-12.09190.391 1922.82910.760.003700 ... 9.0   11.0"
    c = read_records(real_lines / "h2o_HITRAN.par")
    assert (c["molecule"][0], c["isotopologue"][0]) == (1, 1)
    expected = dict(wavenumber=0.072059, intensity=2.043e-30, einstein_a=5.088e-12, gamma_air=0.0919,
                    gamma_self=0.391, lower_energy=1922.8291, n_air=0.76, delta_air=0.0037, g_upper=9.0, g_lower=11.0)
    for k, v in expected.items():
        assert c[k][0] == pytest.approx(v, rel=1e-15), k
    assert c["global_upper"][0] == b"          0 1 0"
    # a negative shift written as "-.000844" (line 7 of the file)
    assert c["delta_air"][6] == pytest.approx(-0.000844, rel=1e-15)


def test_empty_lines_between_records_are_ignored(tmp_path):
    # Found by the property test: an empty line makes row starts look evenly spaced.
    rec = format_record(**EXAMPLE)
    p = tmp_path / "gaps.par"
    p.write_text(rec + "\n\n" + rec + "\n")
    assert read_records(p)["wavenumber"].size == 2


def test_every_real_line_passes_the_physical_bounds(real_lines):
    # Every record of every real list (PROVENANCE.md) is read without a skip, and the strongest
    # line stays three decades below the intensity bound, as its basis claims.
    files = sorted(real_lines.glob("*.par"))
    assert len(files) >= 6
    for f in files:
        rep = ReadReport()
        c = read_records(f, report=rep)
        assert rep.total_skipped == 0 and c["wavenumber"].size > 0, f
        assert c["intensity"].max() < 1e-17, f

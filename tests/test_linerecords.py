"""The 160-character record reader: hand-made records, real files, compression, errors."""

import bz2
import gzip
import lzma
import zipfile

import numpy as np
import pytest

from specforce.errors import LineRecordError
from specforce.linerecords import FIELDS, RECORD_LENGTH, ReadReport, format_record, iter_record_blocks, read_records

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

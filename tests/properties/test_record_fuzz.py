"""Property tests: malformed records fail only with LineRecordError and leave no file."""

import os

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from specforce.errors import LineRecordError
from specforce.linerecords import format_record, read_records
from specforce.lineimport import import_lines

GOOD = format_record(molecule=1, isotopologue=1, wavenumber=1234.5678, intensity=1.5e-22, einstein_a=0.5,
                     gamma_air=0.08, gamma_self=0.4, lower_energy=300.0, n_air=0.7, delta_air=-0.002,
                     g_upper=3.0, g_lower=1.0)  # an invented line

printable = st.characters(min_codepoint=32, max_codepoint=126)


@st.composite
def mangled_record(draw):
    rec = list(GOOD)
    for _ in range(draw(st.integers(1, 6))):
        i = draw(st.integers(0, 159))
        rec[i] = draw(printable)
    text = "".join(rec)
    cut = draw(st.integers(0, 3))
    if cut == 1:
        text = text[: draw(st.integers(0, 159))]
    elif cut == 2:
        text = text + draw(st.text(printable, min_size=1, max_size=5))
    return text


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(recs=st.lists(mangled_record(), min_size=1, max_size=4))
def test_reader_raises_only_the_documented_error(tmp_path, recs):
    p = tmp_path / "fuzz.par"
    p.write_text("\n".join([GOOD] + recs) + "\n", encoding="latin-1")
    try:
        cols = read_records(p)
    except LineRecordError as exc:
        assert exc.line >= 2 and str(p) in str(exc)
    else:
        # whatever was accepted must be physically possible
        assert np.all(cols["wavenumber"] > 0) and np.all(cols["intensity"] >= 0)
    store = tmp_path / "fuzz.h5"
    try:
        import_lines([p], store)
    except LineRecordError:
        assert not store.exists()
    else:
        store.unlink()
    assert [n for n in os.listdir(tmp_path) if "partial" in n] == []

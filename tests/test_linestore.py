"""The HDF5 line store: round trips, merging, selection, provenance and atomic writes."""

import errno
import hashlib
import json
import os
import signal
import stat
import subprocess
import sys
import time

import h5py
import numpy as np
import pytest

from specforce.errors import LineRecordError, LineStoreError, OutputPathError
from specforce.io import files
from specforce.io.linerecords import format_record, read_records
from specforce.molecular.lineparams import intensity_at
from specforce.io.lineimport import import_lines
from specforce.io.linestore import INDEX_STEP, open_store, write_store
from specforce.molecular.molecules import partition_ratio

# Invented lines for the tests (no real transitions).
BASE = dict(molecule=2, isotopologue=1, intensity=1e-21, einstein_a=1.0, gamma_air=0.07, gamma_self=0.09,
            lower_energy=100.0, n_air=0.75, delta_air=-0.001, g_upper=3.0, g_lower=1.0)


def _file(path, wavenumbers, **over):
    recs = [format_record(**{**BASE, **over, "wavenumber": w}) for w in wavenumbers]
    path.write_text("\n".join(recs) + "\n")
    return path


def test_round_trip_preserves_every_column(tmp_path):
    rng = np.random.default_rng(1)
    wn = np.sort(rng.uniform(10, 3000, 500)).round(6)
    src = _file(tmp_path / "a.par", wn)
    import_lines([src], tmp_path / "s.h5")
    ref = read_records(src)
    with open_store(tmp_path / "s.h5") as st:
        got = st.select().columns
    for k, v in ref.items():
        if v.dtype.kind == "f" and got[k].dtype == np.float32:
            assert np.allclose(got[k], v, rtol=1e-6), k  # float32 columns: 4-5 digit fields
        else:
            assert np.array_equal(got[k], v), k


def test_store_records_units_and_provenance(tmp_path):
    src = _file(tmp_path / "a.par", [500.0, 600.0])
    import_lines([src], tmp_path / "s.h5")
    with h5py.File(tmp_path / "s.h5") as h5:
        assert h5["lines/wavenumber"].attrs["units"] == "cm-1"
        assert h5["lines/intensity"].attrs["units"] == "cm-1/(molecule cm-2)"
        assert h5["lines/wavenumber"].compression == "lzf"
        sources = json.loads(h5.attrs["sources"])
    assert sources[0]["sha256"] == hashlib.sha256(src.read_bytes()).hexdigest()
    assert sources[0]["records"] == 2
    with open_store(tmp_path / "s.h5") as st:
        prov = st.provenance
    assert prov["format"] == "specforce-linestore" and prov["specforce_version"]


def test_merge_of_unsorted_sources_is_sorted(tmp_path):
    a = _file(tmp_path / "a.par", [100.0, 300.0, 500.0])
    b = _file(tmp_path / "b.par", [200.0, 400.0], molecule=1)
    import_lines([a, b], tmp_path / "m.h5")
    with open_store(tmp_path / "m.h5") as st:
        ll = st.select()
        info = st.info()
    assert ll.wavenumber.tolist() == [100.0, 200.0, 300.0, 400.0, 500.0]
    assert ll.molecule.tolist() == [2, 1, 2, 1, 2]
    assert info["molecules"]["H2O"] == {"lines": 2, "wavenumber_min": 200.0, "wavenumber_max": 400.0}
    # a store can itself be a source: merging again keeps all lines and sources
    c = _file(tmp_path / "c.par", [250.0])
    import_lines([tmp_path / "m.h5", c], tmp_path / "m2.h5")
    with open_store(tmp_path / "m2.h5") as st:
        assert st.select().wavenumber.tolist() == [100.0, 200.0, 250.0, 300.0, 400.0, 500.0]
        assert len(st.provenance["sources"]) == 3


def test_window_selection_matches_full_scan_and_reads_little(tmp_path):
    rng = np.random.default_rng(2)
    n = 6 * INDEX_STEP + 123
    wn = np.sort(rng.uniform(10, 3000, n)).round(6)
    import_lines([_file(tmp_path / "a.par", wn)], tmp_path / "s.h5")
    with open_store(tmp_path / "s.h5") as st:
        full = st.select().wavenumber
        for lo, hi in [(10.0, 10.0), (500.0, 550.0), (1234.5, 2345.6), (2990.0, 4000.0), (0.0, 5.0)]:
            got = st.select(wavenumber_range=(lo, hi)).wavenumber
            assert np.array_equal(got, full[(full >= lo) & (full <= hi)])
        # the window's row bounds are exactly the lines inside it
        a, b = st._window(500.0, 550.0)
        assert b - a == int(np.sum((full >= 500.0) & (full <= 550.0)))


def test_selection_by_molecule_isotopologue_and_intensity_at_temperature(tmp_path):
    a = _file(tmp_path / "a.par", [100.0, 200.0], intensity=1e-22, lower_energy=1000.0)
    b = _file(tmp_path / "b.par", [150.0], molecule=1, intensity=1e-22, lower_energy=0.0)
    c = _file(tmp_path / "c.par", [175.0], isotopologue=2, intensity=1e-20)
    import_lines([a, b, c], tmp_path / "s.h5")
    with open_store(tmp_path / "s.h5") as st:
        assert st.select(molecules=["CO2"]).wavenumber.tolist() == [100.0, 175.0, 200.0]
        assert st.select(molecules=["co2"], isotopologues=[2]).wavenumber.tolist() == [175.0]
        # Rothman et al. (1998), Eq. A11, worked by hand for the E''=1000 cm-1 CO2 line at 100 cm-1
        # and 200 K: Boltzmann exp(-2.33316) = 0.09698, stimulated emission 0.51294/0.38494 = 1.33252,
        # times Q(296)/Q(200) of CO2 -> about 0.204 of its 296 K value, so a 5e-23 threshold
        # drops both CO2 lines at E''=1000 and keeps the others.
        keep = st.select(min_intensity=5e-23, temperature=200.0)
        assert keep.wavenumber.tolist() == [150.0, 175.0]
        cols = st.select(columns=["wavenumber", "molecule", "isotopologue", "intensity", "lower_energy"]).columns
        s200 = intensity_at(cols, 200.0)
        q_ratio = partition_ratio("CO2", 1, 200.0)
        assert s200[0] / 1e-22 == pytest.approx(q_ratio * 0.09698 * 1.33252, rel=2e-4)


def test_write_store_from_line_list(tmp_path):
    import_lines([_file(tmp_path / "a.par", [300.0, 100.0, 200.0])], tmp_path / "s.h5")
    with open_store(tmp_path / "s.h5") as st:
        ll = st.select(wavenumber_range=(150, 400))
    write_store(ll, tmp_path / "t.h5", extra_attrs={"selection": {"range": [150, 400]}})
    with open_store(tmp_path / "t.h5") as st:
        assert st.select().wavenumber.tolist() == [200.0, 300.0]
        assert json.loads(st.provenance["selection"]) == {"range": [150, 400]}


def test_a_store_source_with_impossible_lines_is_checked_like_records(tmp_path):
    # A store written without the bounds (here by write_store, by hand) holds an intensity of 1e10:
    # importing it stops, naming the store, the line, the column and the bound, or drops it on request.
    import_lines([_file(tmp_path / "a.par", [100.0, 200.0, 300.0])], tmp_path / "s.h5")
    with open_store(tmp_path / "s.h5") as st:
        ll = st.select()
    ll.columns["intensity"][1] = 1e10
    write_store(ll, tmp_path / "bad.h5")
    with pytest.raises(LineStoreError, match=r"bad\.h5: line 2 of the store, column 'intensity': impossible value: "
                                             r"the value 1e\+10 is above the upper bound 1e-14") as err:
        import_lines([tmp_path / "bad.h5"], tmp_path / "t.h5")
    assert "--skip-bad" in str(err.value) and not (tmp_path / "t.h5").exists()
    rep = import_lines([tmp_path / "bad.h5"], tmp_path / "t.h5", on_error="skip")
    assert rep.lines == 2 and any("1 lines of the store" in w and "dropped" in w for w in rep.warnings)
    with open_store(tmp_path / "t.h5") as st:
        assert st.select().wavenumber.tolist() == [100.0, 300.0]


def test_errors_leave_no_file_and_keep_the_old_store(tmp_path):
    good = _file(tmp_path / "good.par", [100.0, 200.0])
    import_lines([good], tmp_path / "s.h5")
    before = (tmp_path / "s.h5").read_bytes()
    bad = tmp_path / "bad.par"
    bad.write_text(format_record(**{**BASE, "wavenumber": 1.0}) + "\n" + "x" * 160 + "\n")
    with pytest.raises(LineRecordError, match="line 2"):
        import_lines([good, bad], tmp_path / "s.h5")
    assert (tmp_path / "s.h5").read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == ["bad.par", "good.par", "s.h5"]


def test_store_of_unsorted_records_gets_ordinary_permissions(tmp_path):
    # The sort writes a scratch file (mkstemp, 0600) that takes the place of the unsorted one; the
    # store must still be an ordinary file, 0666 less the umask, like every other output.
    src = _file(tmp_path / "a.par", [300.0, 100.0, 200.0])
    for umask, mode in ((0o022, 0o644), (0o077, 0o600)):
        old = os.umask(umask)
        try:
            import_lines([src], tmp_path / "s.h5")
        finally:
            os.umask(old)
        assert stat.S_IMODE(os.stat(tmp_path / "s.h5").st_mode) == mode


@pytest.fixture
def small_disk(tmp_path):
    """A 256 KiB file system (tmpfs) to run out of space on; skipped where none can be mounted."""
    where = tmp_path / "small"
    where.mkdir()
    try:
        proc = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", str(where)],
                              capture_output=True, text=True)
    except OSError as exc:
        pytest.skip(f"cannot mount a small tmpfs here: {exc}")
    if proc.returncode != 0:
        pytest.skip(f"cannot mount a small tmpfs here (it needs root): {proc.stderr.strip()}")
    yield where
    subprocess.run(["umount", str(where)], check=False)


def _many_lines(path, n=20000, seed=3):
    """n invented lines of random positions and strengths: a store of about 1 MB."""
    rng = np.random.default_rng(seed)
    return _file(path, rng.uniform(10, 3000, n).round(6), intensity=1e-21)


def test_import_onto_a_full_disk_is_one_clear_error(tmp_path, small_disk):
    # It crashed (segmentation fault, exit 139) after dozens of HDF5 tracebacks: now one message,
    # exit status 1, and nothing on the small disk, not even a hidden temporary file.
    src = _many_lines(tmp_path / "many.par")
    proc = subprocess.run([sys.executable, "-m", "specforce.cli", "lines", "import", str(src), "-o",
                           str(small_disk / "s.h5")], capture_output=True, text=True, timeout=300)
    assert proc.returncode == 1, proc.stderr[-2000:]
    assert proc.stderr.startswith(f"Error: no space left on device while writing {small_disk / 's.h5'}:")
    assert "Traceback" not in proc.stderr and "Exception ignored" not in proc.stderr
    assert os.listdir(small_disk) == []


@pytest.mark.parametrize("failing", [0, 1])
def test_import_that_runs_out_of_space_keeps_the_old_store(tmp_path, monkeypatch, failing):
    # The disk fills up in the first write (failing=0) or in the sorted copy (failing=1): the old
    # store stays as it was and no temporary file is left. The error is injected at the one place
    # that writes HDF5 bytes, so this runs on any machine.
    import_lines([_file(tmp_path / "old.par", [1.0])], tmp_path / "s.h5")
    old = (tmp_path / "s.h5").read_bytes()
    files_made = []
    write = files._WriteLatch._raw_write

    def write_until_full(self, view):
        if self.path not in files_made:
            files_made.append(self.path)
        if files_made.index(self.path) == failing and self._raw.tell() + len(view) > 100_000:
            raise OSError(errno.ENOSPC, "No space left on device")
        write(self, view)

    monkeypatch.setattr(files._WriteLatch, "_raw_write", write_until_full)
    with pytest.raises(OutputPathError, match=r"^no space left on device while writing .*s\.h5: .*nothing was "
                                              r"written"):
        import_lines([_many_lines(tmp_path / "many.par")], tmp_path / "s.h5")
    assert len(files_made) == failing + 1
    assert (tmp_path / "s.h5").read_bytes() == old
    assert sorted(os.listdir(tmp_path)) == ["many.par", "old.par", "s.h5"]


def test_not_a_store(tmp_path):
    p = tmp_path / "x.h5"
    with h5py.File(p, "w") as h5:
        h5.attrs["format"] = "something-else"
    with pytest.raises(LineStoreError, match="not a specforce line store"):
        open_store(p)
    with pytest.raises(FileNotFoundError, match="specforce lines import"):
        open_store(tmp_path / "missing.h5")


_KILL_SCRIPT = """
import sys, time
from specforce.io import linestore
from specforce.io.lineimport import import_lines
# A pause point on the test's side: once the first columns are written into the temporary store,
# leave a marker file and wait, so that the signal always lands mid-write (waiting a fixed time
# instead let the import finish first on an idle machine).
write = linestore._ColumnWriter._flush
def write_then_wait(self, n):
    write(self, n)
    open(sys.argv[3], "w").close()
    time.sleep(60)
linestore._ColumnWriter._flush = write_then_wait
import_lines([sys.argv[1]], sys.argv[2])
"""


@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGINT])
def test_killed_import_leaves_no_store_or_the_old_one(tmp_path, sig):
    src = _file(tmp_path / "src.par", 100.0 + np.arange(2000) * 1e-4)
    target = tmp_path / "s.h5"
    old = None
    if sig == signal.SIGINT:
        import_lines([_file(tmp_path / "small.par", [1.0])], target)
        old = target.read_bytes()
    marker = tmp_path / "writing"
    proc = subprocess.Popen([sys.executable, "-c", _KILL_SCRIPT, str(src), str(target), str(marker)],
                            stderr=subprocess.PIPE)
    deadline = time.time() + 60
    while time.time() < deadline and not marker.exists() and proc.poll() is None:
        time.sleep(0.01)
    assert marker.exists(), proc.communicate()[1].decode()
    assert any(n.startswith(".s.h5.partial-") for n in os.listdir(tmp_path))  # it is mid-write
    proc.send_signal(sig)
    proc.communicate(timeout=60)
    assert proc.returncode != 0, "the import finished before it could be interrupted"
    if old is None:
        assert not target.exists()
    else:
        assert target.read_bytes() == old
    leftovers = [n for n in os.listdir(tmp_path) if n.startswith(".s.h5.partial-")]
    if sig == signal.SIGINT:
        assert leftovers == []  # a clean interrupt removes its temporary file
    # after SIGKILL a hidden .partial file may remain; it is never at the store's name


def test_real_lists_round_trip_through_store(real_lines, tmp_path):
    files = [real_lines / n for n in ("h2o_HITRAN.par", "sample_CO2.par", "sample_N2O.par")]
    prov = import_lines(files, tmp_path / "real.h5").sources
    # sha256 values from PROVENANCE.md
    assert [p["sha256"][:16] for p in prov] == ["f3496dfb2ea999b1", "65cf1409bc89a072", "8d0f7196c8a85cbd"]
    with open_store(tmp_path / "real.h5") as st:
        info = st.info()
        assert info["total_lines"] == 19615 + 5492 + 5446
        co2 = st.select(molecules=["CO2"])
    assert np.array_equal(co2.wavenumber, read_records(files[1])["wavenumber"])

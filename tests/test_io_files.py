"""The one atomic writer: temporary names, permissions, leftovers of killed writes, path checks."""

import errno
import os
import stat
import subprocess
import sys
import tempfile
import textwrap

import pytest

from specforce.errors import OutputPathError
from specforce.io.files import atomic_path, check_output_path, leftover_files, remove_leftovers


def test_atomic_write_replaces_only_on_success(tmp_path):
    target = tmp_path / "out.txt"
    target.write_text("old")
    with pytest.raises(RuntimeError):
        with atomic_path(target) as tmp:
            with open(tmp, "w") as fh:
                fh.write("half")
            raise RuntimeError("interrupted")
    assert target.read_text() == "old" and os.listdir(tmp_path) == ["out.txt"]
    with atomic_path(target) as tmp:
        with open(tmp, "w") as fh:
            fh.write("new")
    assert target.read_text() == "new" and os.listdir(tmp_path) == ["out.txt"]


def test_outputs_get_ordinary_permissions(tmp_path):
    # Required: netCDF results, figures and profiles get the umask's ordinary permissions, not the
    # temporary file's 0600.
    old = os.umask(0o022)
    try:
        with atomic_path(tmp_path / "f.nc") as tmp:
            open(tmp, "w").close()
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(tmp_path / "f.nc").st_mode) == 0o644


def test_leftovers_of_a_killed_writer_are_listed_and_cleaned(tmp_path):
    # A writer killed with SIGKILL leaves its temporary file; it is listed, and the next write to the
    # same target removes it. A live writer's temporary file is left alone.
    target = tmp_path / "store.h5"
    code = textwrap.dedent(f"""
        import os, signal
        from specforce.io.files import atomic_path
        with atomic_path({str(target)!r}) as tmp:
            open(tmp, "w").write("partial")
            os.kill(os.getpid(), signal.SIGKILL)
    """)
    proc = subprocess.run([sys.executable, "-c", code])
    assert proc.returncode == -9
    assert not target.exists()
    left = leftover_files(target)
    assert len(left) == 1 and os.path.basename(left[0]).startswith(".store.h5.partial-")
    assert leftover_files(tmp_path) == left
    mine = tmp_path / f".store.h5.partial-{os.getpid()}-live"
    mine.write_text("in progress")
    assert str(mine) not in leftover_files(tmp_path)
    with atomic_path(target) as tmp:
        open(tmp, "w").write("complete")
    assert target.read_text() == "complete"
    assert leftover_files(tmp_path) == [] and mine.exists()
    assert remove_leftovers(tmp_path) == []


def test_output_paths_are_checked_before_computing(tmp_path):
    with pytest.raises(OutputPathError, match="the folder .* does not exist"):
        check_output_path(tmp_path / "no" / "x.nc")
    with pytest.raises(OutputPathError, match="suffix must be one of .png"):
        check_output_path(tmp_path / "x.jpg", (".png", ".pdf"), "plot")
    with pytest.raises(OutputPathError, match="is a folder"):
        check_output_path(tmp_path)
    assert check_output_path(tmp_path / "x.png", (".png",)) == str(tmp_path / "x.png")


def test_an_output_put_in_place_of_the_temporary_file_gets_ordinary_permissions(tmp_path):
    # A writer may replace the temporary file (the import's sort writes a scratch file, made 0600 by
    # mkstemp, and renames it over): the output still gets 0666 less the umask, like every output.
    for umask, mode in ((0o022, 0o644), (0o027, 0o640)):
        old = os.umask(umask)
        try:
            with atomic_path(tmp_path / "s.h5") as tmp:
                fd, other = tempfile.mkstemp(dir=tmp_path)
                os.close(fd)
                os.replace(other, tmp)
        finally:
            os.umask(old)
        assert stat.S_IMODE(os.stat(tmp_path / "s.h5").st_mode) == mode


def test_a_failed_write_names_the_users_file(tmp_path):
    # A full disk, or any failed write, reports the user's file, not the hidden temporary one,
    # says what to do, and leaves nothing behind.
    target = tmp_path / "out.nc"
    with pytest.raises(OutputPathError, match=r"^no space left on device while writing .*out\.nc: .*nothing was "
                                              r"written .*Free space or choose another folder"):
        with atomic_path(target) as tmp:
            raise OSError(errno.ENOSPC, "No space left on device", tmp)
    assert os.listdir(tmp_path) == []
    with pytest.raises(OutputPathError, match=r"out\.nc: writing failed, nothing written \(Input/output") as err:
        with atomic_path(target) as tmp:
            raise OSError(errno.EIO, "Input/output error", tmp)
    assert ".partial-" not in str(err.value) and os.listdir(tmp_path) == []


_FULL_DISK_SCRIPT = """
import errno, sys
import h5py, numpy as np
from specforce.io import files
write = files._WriteLatch._raw_write
def write_until_full(self, view):  # the disk fills up 200 kB into the file
    if self._raw.tell() + len(view) > 200_000:
        raise OSError(errno.ENOSPC, "No space left on device")
    write(self, view)
files._WriteLatch._raw_write = write_until_full
try:
    with files.atomic_path(sys.argv[1]) as tmp, files._hdf5_output(tmp) as fh, h5py.File(fh, "w") as h5:
        for i in range(8):
            data = np.random.default_rng(i).random(100_000)
            h5.create_dataset(f"x{i}", data=data, chunks=(16384,), compression="gzip")
except Exception as exc:
    print(type(exc).__name__, exc)
"""


def test_an_hdf5_write_that_runs_out_of_space_ends_cleanly(tmp_path):
    # HDF5 does not survive a failed write: closing the file afterwards crashed the process
    # (segmentation fault, exit 139, after a traceback per dataset). Through _hdf5_output the
    # write error is kept and raised once HDF5 has closed the file normally. Run in a child
    # process, since the failure this guards against is a crash.
    target = tmp_path / "s.h5"
    proc = subprocess.run([sys.executable, "-c", _FULL_DISK_SCRIPT, str(target)], capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert proc.stdout.startswith(f"OutputPathError no space left on device while writing {target}:")
    assert "Traceback" not in proc.stderr and "Exception ignored" not in proc.stderr, proc.stderr[-2000:]
    assert os.listdir(tmp_path) == []

"""Writing files safely: one atomic writer for every file specforce writes, and its leftovers.

Every output (line stores, netCDF results, figures, profiles, scenario records) is
written to a hidden temporary file beside its target, named
``.NAME.partial-PID-XXXX``, flushed to disk, and renamed over the target only when
complete, with the permissions of an ordinary file under the user's umask. An
interrupted write leaves the old target (or none) untouched. A process killed
outright (SIGKILL) can leave its temporary file behind: the next write to the same
target removes such leftovers of dead writers, and :func:`leftover_files` lists
them (``specforce lines info`` and ``specforce doctor`` show them).

A write that fails (a full disk, say) removes its temporary file and ends in one
:class:`~specforce.errors.OutputPathError` naming the user's file. HDF5 writers
(line stores, netCDF) write through :func:`_hdf5_output`, since HDF5 itself
crashes on closing a file after a failed write.
"""

from __future__ import annotations

import contextlib
import errno
import os
import re
import tempfile

from ..errors import OutputPathError

__all__ = ["atomic_path", "scratch_path", "check_output_path", "check_outputs_not_inputs", "leftover_files",
           "remove_leftovers"]

_PARTIAL = re.compile(r"^\.(?P<name>.+)\.partial-(?:(?P<pid>\d+)-)?[^/]*$")


def check_output_path(path, suffixes=None, what="output"):
    """Check, before any computation, that ``path`` can be written.

    Parameters
    ----------
    path : str or os.PathLike
        The file the user asked for.
    suffixes : sequence of str, optional
        Accepted suffixes (e.g. ``(".png", ".pdf")``), lower case with the dot.
    what : str
        What the file is, for the message.

    Raises
    ------
    OutputPathError
        Naming the user's path: a folder that does not exist or cannot be written,
        a path that is a folder, or an unsupported suffix.
    """
    text = os.fspath(path)
    full = os.path.abspath(text)
    folder = os.path.dirname(full)
    if suffixes is not None and os.path.splitext(text)[1].lower() not in suffixes:
        raise OutputPathError(f"{what} {text}: the suffix must be one of {', '.join(suffixes)}")
    if os.path.isdir(full):
        raise OutputPathError(f"{what} {text}: is a folder; give a file name")
    if not os.path.isdir(folder):
        raise OutputPathError(f"{what} {text}: the folder {folder} does not exist; create it first")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise OutputPathError(f"{what} {text}: the folder {folder} is not writable")
    if os.path.exists(full) and not os.access(full, os.W_OK):
        raise OutputPathError(f"{what} {text}: the file exists and is not writable")
    try:  # permissions are not the whole story (read-only mounts, /proc, quotas): try it
        fd, probe = tempfile.mkstemp(prefix=f".{os.path.basename(full)}.probe-", dir=folder)
    except OSError as exc:
        raise OutputPathError(f"{what} {text}: cannot create files in {folder} ({exc.strerror})") from None
    os.close(fd)
    os.remove(probe)
    return full


def check_outputs_not_inputs(outputs, inputs):
    """Check, before any computation, that no output would be written over an input.

    Parameters
    ----------
    outputs : iterable of (str, str or os.PathLike or None)
        (what the output is, e.g. "--netcdf"; its path). A path that is None or empty
        is skipped. An output folder (a batch's parts folder) covers everything in it.
    inputs : iterable of (str, str or os.PathLike or None)
        (what the input is, e.g. "--profile"; its path). Anything that is not an
        existing file or folder (a bundled profile name, None) is skipped.

    Raises
    ------
    OutputPathError
        Naming the output and the input it is (or holds): writing it would replace the
        input, so nothing is computed. An output that does not exist yet is no input.
    """
    inputs = [(what, os.fspath(src)) for what, src in inputs if src and os.path.exists(os.fspath(src))]
    for out_what, out in outputs:
        if not out or not os.path.exists(os.fspath(out)):
            continue
        out = os.fspath(out)
        folder = os.path.realpath(out) + os.sep if os.path.isdir(out) else None
        for in_what, src in inputs:
            if os.path.samefile(out, src):
                how = "is the same file as"
            elif folder is not None and os.path.realpath(src).startswith(folder):
                how = "is the folder that holds"
            else:
                continue
            raise OutputPathError(f"{out_what} {out} {how} the input {in_what} {src}: writing it would destroy "
                                  f"that input; give the output another path")


def _alive(pid):
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def leftover_files(where):
    """Temporary files left by interrupted writes whose writer is gone.

    Parameters
    ----------
    where : str or os.PathLike
        A folder (every leftover in it) or a target file (its own leftovers).

    Returns
    -------
    list of str
        Absolute paths.
    """
    where = os.path.abspath(os.fspath(where))
    folder, target = (where, None) if os.path.isdir(where) else os.path.split(where)
    out = []
    try:
        names = os.listdir(folder)
    except OSError:
        return out
    for n in names:
        m = _PARTIAL.match(n)
        if not m or (target is not None and m.group("name") != target):
            continue
        pid = m.group("pid")
        if pid is not None and _alive(int(pid)):
            continue
        out.append(os.path.join(folder, n))
    return sorted(out)


def remove_leftovers(where):
    """Remove :func:`leftover_files` of ``where``; returns the paths removed."""
    gone = []
    for p in leftover_files(where):
        with contextlib.suppress(FileNotFoundError):
            os.remove(p)
            gone.append(p)
    return gone


@contextlib.contextmanager
def atomic_path(target, suffix=""):
    """A temporary path beside ``target`` that becomes ``target`` when the block succeeds.

    Parameters
    ----------
    target : str or os.PathLike
        The file to write.
    suffix : str
        Suffix of the temporary name (some writers choose the format by suffix).

    Yields
    ------
    str
        The temporary path to write to. On success it is flushed to disk and renamed
        over ``target``; on any error (or interruption) it is removed.
    """
    full = check_output_path(target)
    folder, name = os.path.split(full)
    remove_leftovers(full)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{name}.partial-{os.getpid()}-", suffix=suffix, dir=folder)
    except OSError as exc:
        raise _create_error(exc, target, folder) from None
    os.close(fd)
    try:
        yield tmp
        # mkstemp makes 0600; an output is an ordinary file. Set at the end, since a writer may
        # have put another file (a sorted copy, say) in the temporary file's place.
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.replace(tmp, full)
        with contextlib.suppress(OSError):
            dfd = os.open(folder, os.O_RDONLY)
            try:
                os.fsync(dfd)
            finally:
                os.close(dfd)
    except BaseException as exc:
        with contextlib.suppress(OSError):
            os.remove(tmp)
        if isinstance(exc, OSError) and (exc.errno in _NO_SPACE or os.path.basename(tmp) in str(exc)):
            # a failed write (disk full, say) is reported under the user's name, not the hidden one
            raise _write_error(exc, full, folder, tmp) from exc
        raise


# errno values of a full disk or an exhausted quota
_NO_SPACE = {errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC)}


def _write_error(exc, full, folder, tmp=None):
    """The OutputPathError for an OSError met while writing ``full`` (through ``tmp``)."""
    if exc.errno in _NO_SPACE:
        free = ""
        with contextlib.suppress(OSError):
            st = os.statvfs(folder)
            free = f" ({st.f_bavail * st.f_frsize / 1e6:.1f} MB free there now)"
        return OutputPathError(f"no space left on device while writing {full}: the disk holding {folder} filled "
                               f"up; nothing was written and the partial file is removed{free}. Free space or "
                               f"choose another folder.")
    text = exc.strerror or str(exc)
    if tmp is not None:
        text = text.replace(tmp, full)
    return OutputPathError(f"{full}: writing failed, nothing written ({text})")


def _create_error(exc, target, folder):
    """The OutputPathError for an OSError met while creating the temporary file of ``target``."""
    if exc.errno in _NO_SPACE:
        return _write_error(exc, os.path.abspath(os.fspath(target)), folder)
    return OutputPathError(f"{target}: cannot create files in {folder} ({exc.strerror})")


class _WriteLatch:
    """A binary file for HDF5 writers (h5py, h5netcdf) that never reports a failed write to them.

    HDF5 does not recover from a failed write: a dataset whose chunks cannot be
    written stays half-closed, and closing the file afterwards crashes the process
    (a segmentation fault with HDF5 2.0 and h5py 3.16, after a "Can't decrement id
    ref count" traceback for each dataset). So an HDF5 writer is given this object
    instead of a path: the first failed write (a full disk, say) is kept and every
    later write is dropped, so that HDF5 finishes and closes the file normally;
    :meth:`check` then raises the kept error and the caller discards the file.
    """

    def __init__(self, path):
        self.path = os.fspath(path)
        self.error = None
        self._raw = open(self.path, "r+b", buffering=0)

    def _raw_write(self, view):
        """Write all of ``view`` at the current position (the one place that writes)."""
        done = 0
        while done < len(view):
            done += self._raw.write(view[done:])

    def write(self, data):
        view = memoryview(data).cast("B")
        if self.error is None:
            try:
                self._raw_write(view)
            except OSError as exc:
                self.error = exc
        return len(view)  # a dropped write is reported as done: the file is discarded anyway

    def truncate(self, size=None):
        if self.error is None:
            try:
                return self._raw.truncate(size)
            except OSError as exc:
                self.error = exc
        return size

    def read(self, n=-1):
        return self._raw.read(n)

    def readinto(self, buf):
        return self._raw.readinto(buf)

    def seek(self, offset, whence=os.SEEK_SET):
        return self._raw.seek(offset, whence)

    def tell(self):
        return self._raw.tell()

    def flush(self):
        pass

    def check(self):
        """Raise the first write error, if any, as an OSError naming the file."""
        if self.error is not None:
            exc = self.error
            raise OSError(exc.errno, exc.strerror or str(exc), self.path) from exc

    def close(self):
        self._raw.close()


@contextlib.contextmanager
def _hdf5_output(tmp):
    """A :class:`_WriteLatch` on the (temporary) file ``tmp``, for ``h5py.File(fh, "w")`` or
    ``Dataset.to_netcdf(fh, engine="h5netcdf")``. Close the HDF5 file inside the block; a
    write that failed is raised when the block ends (or, if the block itself failed, in place
    of that failure, which it caused)."""
    fh = _WriteLatch(tmp)
    try:
        yield fh
    except BaseException as exc:
        fh.close()
        if fh.error is not None and isinstance(exc, Exception):
            fh.check()
        raise
    fh.close()
    fh.check()


def write_netcdf(dataset, path):
    """Write a Dataset to netCDF-4 (h5netcdf), atomically (:func:`atomic_path`).

    HDF5 writes through :func:`_hdf5_output`, so that a full disk
    ends in one :class:`~specforce.errors.OutputPathError` and nothing written.
    The write runs in this process even when a Dask client is active here (a
    batch's client writing its chunks): the file object cannot travel to workers.
    """
    import dask

    with atomic_path(path) as tmp, _hdf5_output(tmp) as fh, dask.config.set(scheduler="synchronous"):
        dataset.to_netcdf(fh, engine="h5netcdf")


@contextlib.contextmanager
def scratch_path(target):
    """A temporary path beside ``target`` (named like :func:`atomic_path`'s) that is always
    removed when the block ends: for intermediate files of a write."""
    full = os.path.abspath(os.fspath(target))
    folder, name = os.path.split(full)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{name}.partial-{os.getpid()}-", dir=folder)
    except OSError as exc:
        raise _create_error(exc, target, folder) from None
    os.close(fd)
    try:
        yield tmp
    finally:
        with contextlib.suppress(OSError):
            os.remove(tmp)

"""Writing files safely: one atomic writer for every file specforce writes, and its leftovers.

Every output (line stores, netCDF results, figures, profiles, scenario records) is
written to a hidden temporary file beside its target, named
``.NAME.partial-PID-XXXX``, flushed to disk, and renamed over the target only when
complete, with the permissions of an ordinary file under the user's umask. An
interrupted write leaves the old target (or none) untouched. A process killed
outright (SIGKILL) can leave its temporary file behind: the next write to the same
target removes such leftovers of dead writers, and :func:`leftover_files` lists
them (``specforce lines info`` and ``specforce doctor`` show them).
"""

from __future__ import annotations

import contextlib
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
        raise OutputPathError(f"{target}: cannot create files in {folder} ({exc.strerror})") from None
    os.close(fd)
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(tmp, 0o666 & ~mask)  # mkstemp makes 0600; an output is an ordinary file
    try:
        yield tmp
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
        if isinstance(exc, OSError) and os.path.basename(tmp) in str(exc):
            # a failed write (disk full, say) is reported under the user's name, not the hidden one
            raise OutputPathError(f"{full}: writing failed, nothing written "
                                  f"({exc.strerror or str(exc).replace(tmp, full)})") from exc
        raise


@contextlib.contextmanager
def scratch_path(target):
    """A temporary path beside ``target`` (named like :func:`atomic_path`'s) that is always
    removed when the block ends: for intermediate files of a write."""
    full = os.path.abspath(os.fspath(target))
    folder, name = os.path.split(full)
    fd, tmp = tempfile.mkstemp(prefix=f".{name}.partial-{os.getpid()}-", dir=folder)
    os.close(fd)
    try:
        yield tmp
    finally:
        with contextlib.suppress(OSError):
            os.remove(tmp)

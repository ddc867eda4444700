"""The long commands run in a terminal, as people type them.

Progress bars are drawn only when stderr is a terminal, so CliRunner (and a pipe) never
exercise them; here each command runs as ``python -m specforce.cli`` on a pseudo-terminal
(the standard library's :mod:`pty`), with the environment inherited. Each check: the exit
status, the result text on the screen, a progress bar drawn, and no traceback. Tiny
spectral ranges keep each command to seconds.
"""

import fcntl
import os
import pty
import select
import signal
import struct
import sys
import termios
import time

import pytest

from specforce.io.linerecords import format_record

RANGE = ["--range", "600", "620"]


def _in_terminal(args, timeout=300, interrupt_on=None):
    """Run the command line on a new pseudo-terminal (its controlling terminal, 40 x 120).

    Returns (exit status, screen text). With ``interrupt_on``, Ctrl-C is typed once that text
    is on the screen, as a user would.
    """
    pid, fd = pty.fork()
    if pid == 0:  # the child: a session of its own, the terminal on stdin, stdout and stderr
        try:
            os.execv(sys.executable, [sys.executable, "-m", "specforce.cli", *args])
        finally:
            os._exit(127)
    fcntl.ioctl(fd, termios.TIOCSWINSZ, struct.pack("HHHH", 40, 120, 0, 0))
    screen, typed, deadline = b"", False, time.monotonic() + timeout
    try:
        while time.monotonic() < deadline:
            ready, _, _ = select.select([fd], [], [], 0.2)
            if ready:
                try:
                    chunk = os.read(fd, 65536)
                except OSError:  # the terminal is closed: every process on it has exited
                    break
                if not chunk:
                    break
                screen += chunk
            if interrupt_on and not typed and interrupt_on.encode() in screen:
                os.write(fd, b"\x03")  # Ctrl-C
                typed = True
        else:
            pytest.fail(f"{args} did not finish in {timeout} s; screen so far:\n{screen.decode(errors='replace')}")
    finally:
        if time.monotonic() >= deadline:  # a hung command: end its whole session
            try:
                os.killpg(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
        _, status = os.waitpid(pid, 0)
        os.close(fd)
    return os.waitstatus_to_exitcode(status), screen.decode(errors="replace").replace("\r\n", "\n")


def _ran_well(code, screen, *expected):
    assert "Traceback" not in screen, screen
    assert code == 0, screen
    for text in expected:
        assert text in screen, screen


def test_forcing_in_a_terminal():
    # The quick start: it ended in KeyError: 'p' as soon as the progress bar was drawn.
    code, screen = _in_terminal(["forcing", "--profile", "mls", "--co2", "2x", *RANGE])
    _ran_well(code, screen, "forcing  [", "100%", "clear-sky longwave forcing, range 600-620 cm-1",
              "instantaneous, top of atmosphere")


def test_olr_in_a_terminal(tmp_path):
    code, screen = _in_terminal(["olr", "--profile", "mls", *RANGE, "--plot", str(tmp_path / "o.png")])
    _ran_well(code, screen, "computing  [", "100%", "surface upward LW")
    assert (tmp_path / "o.png").stat().st_size > 10_000


def test_sweep_in_a_terminal():
    code, screen = _in_terminal(["sweep", "--gas", "CO2", "--from", "1x", "--to", "2x", "--steps", "2", *RANGE])
    _ran_well(code, screen, "sweeping CO2  [", "100%", "published formulas")


def test_compare_in_a_terminal():
    # compare draws no progress bar (it is two OLR runs); it must still run on a terminal.
    code, screen = _in_terminal(["compare", "mls", "tropical", *RANGE])
    _ran_well(code, screen, "A: mls", "B: tropical", "sum of bands")


def test_lines_import_in_a_terminal(tmp_path):
    # The bar is drawn for inputs over 20 MB: 130,000 records of 161 bytes.
    record = format_record(molecule=2, isotopologue=1, wavenumber=650.0, intensity=1e-21, gamma_air=0.07,
                           gamma_self=0.09, lower_energy=100.0, n_air=0.75, g_upper=3.0, g_lower=1.0)
    par = tmp_path / "big.par"
    par.write_text((record + "\n") * 130_000)
    assert par.stat().st_size > 20e6
    code, screen = _in_terminal(["lines", "import", str(par), "-o", str(tmp_path / "s.h5")])
    _ran_well(code, screen, "importing  [", "100%", "130000 records", "wrote 130000 lines")


@pytest.mark.slow  # a two-profile batch in a subprocess under a pseudo-terminal
def test_batch_run_in_a_terminal(tmp_path):
    out = tmp_path / "b.nc"
    code, screen = _in_terminal(["batch", "run", "mls", "tropical", "-o", str(out), *RANGE, "--gases", "CO2",
                                 "--no-continuum", "--scheduler", "serial", "--chunk", "1"])
    _ran_well(code, screen, "2/2 profiles", f"wrote {out}: 2 ok, 0 failed")


@pytest.mark.slow  # a batch with a local cluster in a subprocess under a pseudo-terminal
def test_ctrl_c_on_a_batch_in_a_terminal(tmp_path):
    # Ctrl-C typed on the terminal reaches the client and the local cluster's workers (one process
    # group): one line, no worker's traceback, exit status 130 (interrupted).
    out = tmp_path / "c.nc"
    code, screen = _in_terminal(["batch", "run", "afgl", "-o", str(out), "--range", "640", "700", "--gases", "CO2",
                                 "--no-continuum", "--workers", "1", "--chunk", "1"], interrupt_on="/5 profiles")
    assert code == 130, screen
    assert "Traceback" not in screen and "KeyboardInterrupt" not in screen and "Aborted!" not in screen, screen
    assert screen.count("interrupted: the chunks finished so far are kept") == 1, screen
    assert not out.exists() and os.path.isdir(f"{out}.parts")

"""Batch runs: equal to single-profile runs bit for bit, resumable after SIGKILL of the client or a
worker, bad profiles recorded, weighted means, and a run on a dask.distributed cluster given by address.

A reduced range (640-700 cm-1, CO2 only) keeps each profile well under a second; what is tested is
the bookkeeping around the single-profile computation, which is tested elsewhere.
"""

import json
import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest
from click.testing import CliRunner

import specforce
from specforce.cli import main
from specforce.errors import ResultFileError
from specforce.io.batchfiles import read_batch

OPTS = {"wavenumber_range": (640.0, 700.0), "gases": ("CO2",), "continuum": False}
CLI_OPTS = ["--range", "640", "700", "--gases", "CO2", "--no-continuum"]


@pytest.fixture(scope="module")
def spec():
    return specforce.spectroscopy()


@pytest.fixture(scope="module")
def reference(spec):
    """Single-profile forcing of doubled CO2 for the five AFGL seasonal profiles."""
    return {name: specforce.radiative_forcing(name, {"CO2": "2x"}, spec, **OPTS)
            for name in ("tropical", "mls", "mlw", "sas", "saw")}


def _equal_to_reference(ds, reference):
    for name, one in reference.items():
        site = ds.sel(site=name)
        assert float(site["forcing_toa"]) == one.toa and float(site["forcing_tropopause"]) == one.tropopause
        assert float(site["forcing_surface"]) == one.surface and float(site["olr_base"]) == one.base.olr
        assert float(site["olr_perturbed"]) == one.perturbed.olr
        assert float(site["tropopause_pressure"]) == one.tropopause_pressure
        n = one.forcing.size
        assert np.array_equal(site["forcing"].values[:n], one.forcing)  # bit for bit, level by level


@pytest.mark.slow  # ten doubled-CO2 forcings (five single runs and a five-profile batch)
def test_batch_equals_single_profile_runs_bit_for_bit(tmp_path, reference):
    r = specforce.run_batch("afgl", tmp_path / "b.nc", {"CO2": "2x"}, scheduler="serial", chunk_size=2, **OPTS)
    assert r.complete and (r.sites, r.ok, r.failed, r.chunks, r.computed) == (5, 5, 0, 3, 3)
    ds = read_batch(tmp_path / "b.nc")
    _equal_to_reference(ds, reference)
    assert list(ds["site"].values) == ["tropical", "mls", "mlw", "sas", "saw"]
    assert ds["forcing_toa"].attrs["units"] == "W m-2" and ds.attrs["Conventions"] == "CF-1.10"
    assert "not all-sky" in ds.attrs["comment"] and ds.attrs["changes"] == "CO2 2x"
    assert not os.path.exists(f"{tmp_path / 'b.nc'}.parts")  # removed once assembled


def test_a_forcing_batch_states_the_accuracy_of_the_built_in_lines(tmp_path):
    # Every forcing output states the measured accuracy of the built-in lines for the gases changed
    # (BUILTIN_ACCURACY), batches included: text, JSON and the netCDF attribute; an OLR batch has none.
    from specforce.molecular.builtin import BUILTIN_ACCURACY

    r = specforce.run_batch(["mls"], tmp_path / "f.nc", {"CH4": "2x"}, scheduler="serial",
                            **{**OPTS, "wavenumber_range": (1250.0, 1350.0), "gases": ("CH4",)})
    expected = BUILTIN_ACCURACY["CH4"]["forcing"]
    assert list(r.accuracy) == [expected] and r.to_dict()["spectroscopy_accuracy"] == [expected]
    assert f"accuracy: {expected}" in r.summary()
    assert read_batch(tmp_path / "f.nc").attrs["spectroscopy_accuracy"] == expected
    o = specforce.run_batch(["mls"], tmp_path / "o.nc", scheduler="serial", **OPTS)
    assert o.accuracy == () and "spectroscopy_accuracy" not in read_batch(tmp_path / "o.nc").attrs


def test_a_local_cluster_batch_compiles_the_kernels_ahead_first(tmp_path, monkeypatch):
    # on a cold cache each worker of a local cluster would compile the kernels in turn: the client
    # compiles them ahead on every core before the workers start; not for a cluster given by
    # address (another machine) or a serial run (which compiles ahead on its own threads)
    from specforce import batch_runner
    from specforce.radiation import compile_ahead

    calls = []
    monkeypatch.setattr(compile_ahead, "compile_ahead", lambda threads=None: calls.append(threads))

    def local_cluster(scheduler, workers, threads):
        calls.append("workers start")
        return batch_runner._Serial()

    monkeypatch.setattr(batch_runner, "_Dask", local_cluster)
    specforce.run_batch(["mls"], tmp_path / "a.nc", {"CO2": "2x"}, **OPTS)
    assert calls == [None, "workers start"]
    specforce.run_batch(["mls"], tmp_path / "b.nc", {"CO2": "2x"}, scheduler="serial", **OPTS)
    assert calls == [None, "workers start"]


def test_olr_batch_equals_olr_runs(tmp_path, spec):
    r = specforce.run_batch(["mls", "saw"], tmp_path / "o.nc", scheduler="serial", spectral_resolution=5.0, **OPTS)
    ds = read_batch(tmp_path / "o.nc")
    assert r.kind == "olr" and r.means == {}  # no weights, no means
    for name in ("mls", "saw"):
        one = specforce.olr(name, spec, **OPTS)
        assert float(ds["olr"].sel(site=name)) == one.olr
        assert np.array_equal(ds["heating_rate"].sel(site=name).values[: one.heating_rate.size], one.heating_rate)
        # 5 cm-1 bins hold the averages of the 0.1 cm-1 spectrum: their integral is the OLR
        assert float(ds["olr_spectrum"].sel(site=name).sum() * 5.0) == pytest.approx(one.olr, rel=1e-12)


def test_a_continuum_table_reaches_every_worker(tmp_path):
    # The user's continuum table (the invented example; see tests/test_io_continuum_tables.py) is loaded by the
    # workers: the batch equals single-profile runs with the same table, and differs from runs without it.
    table = os.path.join(os.path.dirname(__file__), os.pardir, "examples", "invented_continuum_table.txt")
    opts = {"wavenumber_range": (400.0, 440.0), "gases": ("H2O",)}
    r = specforce.run_batch(["mls"], tmp_path / "c.nc", continuum_table=table, scheduler="serial", **opts)
    assert r.complete
    one = specforce.olr("mls", specforce.spectroscopy(continuum_table=table), **opts)
    bare = specforce.olr("mls", specforce.spectroscopy(), **opts)
    olr = float(read_batch(tmp_path / "c.nc")["olr"].sel(site="mls"))
    assert olr == one.olr and olr != bare.olr


@pytest.mark.slow  # a five-profile sweep and a five-profile batch
def test_weighted_mean_equals_the_sweep_area_mean(tmp_path):
    # The five AFGL profiles with the area weights of specforce.forcing.sweep.AREA_WEIGHTS: the batch's weighted mean
    # of the tropopause forcing equals 'sweep --area-mean' at the same concentrations.
    sw = specforce.sweep_concentrations("CO2", [556.0], area_mean=True, reference=278.0, **OPTS)
    r = specforce.run_batch("afgl", tmp_path / "m.nc", {"CO2": "278ppm:556ppm"}, scheduler="serial", **OPTS)
    assert r.means["forcing_tropopause"] == pytest.approx(float(sw.weighted[0]), rel=1e-12)
    assert r.means["weight_covered"] == 1.0


@pytest.mark.slow  # a stratosphere-adjusted forcing (about 15 runs over 500-850 cm-1)
def test_a_bad_profile_is_recorded_and_the_batch_goes_on(tmp_path, monkeypatch):
    import specforce.forcing.adjustment
    import specforce.forcing.responses
    from specforce.forcing.adjustment import AdjustmentError
    from specforce.io.collection import collect_profiles

    bad = tmp_path / "bad.csv"
    bad.write_text("pressure_hPa,temperature_K\n1000,2900\n500,250\n")  # an impossible surface temperature
    real = specforce.forcing.adjustment.adjusted_forcing

    def flaky(result, *args, **kwargs):  # the adjustment of one profile does not converge
        if result.provenance["profile"] == "mlw":
            raise AdjustmentError("stratospheric adjustment did not converge in 20 iterations (test)")
        return real(result, *args, **kwargs)

    monkeypatch.setattr(specforce.forcing.adjustment, "adjusted_forcing", flaky)
    # what is tested is the bookkeeping: the short range (refused for an adjusted forcing a user asks
    # for, since its heating rates are band-limited) keeps it fast
    monkeypatch.setattr(specforce.forcing.responses, "check_whole_spectrum", lambda *a, **k: None)
    coll = collect_profiles(["mls", str(bad), "mlw"], weights=[1, 1, 2])
    r = specforce.run_batch(coll, tmp_path / "b.nc", {"CO2": "2x"}, scheduler="serial", adjusted=True,
                            wavenumber_range=(500.0, 850.0), gases=("CO2",), continuum=False)
    assert r.complete and (r.ok, r.failed) == (1, 2)
    assert "2900 K" in r.errors["bad.csv"] and "did not converge" in r.errors["mlw"]
    ds = read_batch(tmp_path / "b.nc")
    assert list(ds["status"].values) == ["ok", r.errors["bad.csv"], r.errors["mlw"]]
    assert np.isnan(float(ds["forcing_toa"].sel(site="mlw"))) and np.isfinite(float(ds["adjusted_forcing_tropopause"][0]))
    assert r.means["weight_covered"] == 0.25 and r.means["forcing_toa"] == float(ds["forcing_toa"][0])
    log = (tmp_path / "b.nc.log").read_text()
    assert "did not converge" in log and "2900 K" in log


class _Stop(Exception):
    pass


@pytest.mark.slow  # a five-profile batch, stopped and resumed
def test_interrupted_batch_resumes_and_a_different_one_is_refused(tmp_path, reference):
    out = tmp_path / "b.nc"

    def stop_after_two(done, total):
        if done >= 2:
            raise _Stop

    with pytest.raises(_Stop):
        specforce.run_batch("afgl", out, {"CO2": "2x"}, scheduler="serial", chunk_size=1, progress=stop_after_two,
                            **OPTS)
    assert sorted(os.listdir(f"{out}.parts")) == ["chunk-000000.nc", "chunk-000001.nc", "manifest.json"]
    with pytest.raises(ResultFileError, match="holds the chunks of a different batch"):
        specforce.run_batch("afgl", out, {"CO2": "4x"}, scheduler="serial", chunk_size=1, **OPTS)
    r = specforce.run_batch("afgl", out, {"CO2": "2x"}, scheduler="serial", chunk_size=1, **OPTS)
    assert (r.reused, r.computed) == (2, 3)
    _equal_to_reference(read_batch(out), reference)


def _wait_for_a_chunk(proc, parts, what, timeout=240):
    """Wait until the batch run by ``proc`` has written its first chunk into ``parts`` (and is still running)."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        done = [n for n in os.listdir(parts) if n.startswith("chunk-")] if os.path.isdir(parts) else []
        if done or proc.poll() is not None:
            break
        time.sleep(0.05)
    assert proc.poll() is None, f"the batch ended before it could be {what}: " + proc.communicate()[1][-2000:]


def _run_cli(args, **kw):
    return subprocess.Popen([sys.executable, "-m", "specforce.cli", *args], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, start_new_session=True, **kw)


@pytest.mark.slow  # two command-line processes and a local cluster, five profiles
def test_sigkill_of_the_client_midway_then_the_same_command_resumes(tmp_path, reference):
    out = tmp_path / "k.nc"
    cmd = ["batch", "run", "afgl", "-o", str(out), "--co2", "2x", *CLI_OPTS, "--workers", "1", "--chunk", "1",
           "--json"]
    proc = _run_cli(cmd)
    parts = f"{out}.parts"
    try:
        _wait_for_a_chunk(proc, parts, "killed")
        os.kill(proc.pid, signal.SIGKILL)  # the client only; its cluster's processes are orphaned
        proc.wait()
    finally:
        try:
            os.killpg(proc.pid, signal.SIGKILL)  # then clean up the orphans
        except ProcessLookupError:
            pass
    before = len([n for n in os.listdir(parts) if n.startswith("chunk-") and n.endswith(".nc")])
    assert 1 <= before < 5 and not out.exists()
    again = _run_cli(cmd)
    stdout, stderr = again.communicate(timeout=300)
    assert again.returncode == 0, stderr[-3000:]
    summary = json.loads(stdout)
    assert summary["chunks_reused"] == before and summary["chunks_computed"] == 5 - before
    ds = read_batch(out)
    assert ds.sizes["site"] == 5  # every profile exactly once
    _equal_to_reference(ds, reference)
    leftovers = [n for n in os.listdir(tmp_path) if ".partial-" in n]
    assert leftovers == [] and not os.path.exists(parts)


@pytest.fixture(scope="module")
def cluster():
    from specforce.batch_runner import local_cluster

    with local_cluster(1, host="127.0.0.1") as c:
        yield c


@pytest.mark.slow  # a five-profile batch on a local cluster
def test_run_on_a_cluster_given_by_address(tmp_path, cluster, reference):
    # A dask.distributed cluster on loopback, reached through --scheduler as a user would reach theirs.
    out = tmp_path / "d.nc"
    res = CliRunner().invoke(main, ["batch", "run", "afgl", "-o", str(out), "--co2", "2x", *CLI_OPTS,
                                    "--scheduler", cluster.scheduler_address, "--json"])
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["ok"] == 5
    _equal_to_reference(read_batch(out), reference)


@pytest.mark.slow  # a five-profile batch on a local cluster, one worker restarted
def test_sigkill_of_a_worker_midway_loses_nothing(tmp_path, cluster, reference):
    from distributed import Client

    with Client(cluster.scheduler_address) as client:  # closed before the batch opens its own
        before = set(client.run(os.getpid).values())
    killed = []

    def kill_worker(done, total):
        if done >= 1 and not killed:
            for pid in before:
                os.kill(pid, signal.SIGKILL)  # the nanny starts a new worker; its task is rescheduled
            killed.append(done)

    r = specforce.run_batch("afgl", tmp_path / "w.nc", {"CO2": "2x"}, scheduler=cluster.scheduler_address,
                            chunk_size=1, progress=kill_worker, **OPTS)
    with Client(cluster.scheduler_address) as client:
        client.wait_for_workers(1, timeout=60)
        after = set(client.run(os.getpid).values())
    assert killed and not (before & after)  # the worker did die
    assert r.complete and r.lost == 0 and r.ok == 5
    _equal_to_reference(read_batch(tmp_path / "w.nc"), reference)


def test_a_script_with_its_own_client_shares_it(tmp_path, cluster):
    # Two clients in one process do not mix (their event loops clash); a script that already holds a
    # client for the scheduler gets it used, and left open.
    from distributed import Client

    with Client(cluster.scheduler_address) as client:
        r = specforce.run_batch(["mls", "saw"], tmp_path / "s.nc", scheduler=cluster.scheduler_address, **OPTS)
        assert r.complete and r.ok == 2
        assert client.status == "running"


def test_pack_then_run_from_the_collection_and_input_errors(tmp_path):
    r = CliRunner()
    res = r.invoke(main, ["batch", "pack", "afgl", "-o", str(tmp_path / "afgl.nc")])
    assert res.exit_code == 0 and "5 profiles along 'site', with weights" in res.output, res.output
    res = r.invoke(main, ["batch", "run", str(tmp_path / "afgl.nc"), "-o", str(tmp_path / "o.nc"), *CLI_OPTS,
                          "--scheduler", "serial", "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert d["ok"] == 5 and d["means"]["weight_covered"] == 1.0 and "olr" in d["means"]
    for args, message in [
        (["--weights", "1,x"], "give numbers separated by commas"),
        (["--weights", "1,2"], "2 weights for 5 profiles"),
        (["-o", str(tmp_path / "o.txt")], "the suffix must be one of .nc"),
        (["--spectra", "0.25"], "whole multiple of the output bins"),
        (["--responses"], "belong to a forcing job"),
        (["--workers", "0"], "'--workers'"),
        (["--ch4", "2x"], "CH4 is not an active gas"),  # CLI_OPTS make CO2 the only active gas
        (["--co2", "2x", "--adjusted"], "stratosphere-adjusted forcing"),  # band-limited heating rates
    ]:
        base = ["batch", "run", "afgl", "-o", str(tmp_path / "e.nc"), *CLI_OPTS, "--scheduler", "serial"]
        res = r.invoke(main, [*base, *args])
        assert res.exit_code != 0 and message in res.output, (args, res.output)
        assert isinstance(res.exception, SystemExit)


def test_run_batch_refuses_to_write_over_its_input(tmp_path):
    # The output, its parts folder and its log must not be (or hold) an input of the batch; this is
    # checked before the input is read, so the collection file is left as it was.
    from specforce.errors import OutputPathError

    coll = tmp_path / "coll.nc"
    coll.write_bytes(b"a profile collection\n")
    with pytest.raises(OutputPathError, match="batch output .*coll.nc is the same file as the input profiles"):
        specforce.run_batch(str(coll), coll, {"CO2": "2x"}, scheduler="serial", **OPTS)
    (tmp_path / "o.nc.parts").mkdir()
    os.replace(coll, tmp_path / "o.nc.parts" / "coll.nc")
    with pytest.raises(OutputPathError, match="parts folder .* holds the input profiles"):
        specforce.run_batch([str(tmp_path / "o.nc.parts" / "coll.nc")], tmp_path / "o.nc", scheduler="serial", **OPTS)
    assert (tmp_path / "o.nc.parts" / "coll.nc").read_bytes() == b"a profile collection\n"


@pytest.mark.parametrize("address, expected", [
    ("127.0.0.1", "'127.0.0.1' is not a Dask scheduler address"),
    ("tcp://127.0.0.1", "is not a Dask scheduler address"),
    ("http://127.0.0.1:8786", "unknown protocol 'http'"),
    ("tcp://127.0.0.1:99999", "port 99999 is not 1-65535"),
])
def test_a_malformed_scheduler_address_is_refused_up_front(tmp_path, address, expected):
    # A host without a port used to wait 40 s and end in a traceback; the form is checked before anything.
    t0 = time.monotonic()
    res = CliRunner().invoke(main, ["batch", "run", "mls", "-o", str(tmp_path / "o.nc"), *CLI_OPTS,
                                    "--scheduler", address])
    assert res.exit_code == 2 and isinstance(res.exception, SystemExit), res.output
    assert "--scheduler" in res.output and expected in res.output and "tcp://HOST:PORT" in res.output
    assert time.monotonic() - t0 < 5 and list(tmp_path.iterdir()) == []


def test_a_scheduler_that_does_not_answer_is_a_short_clear_error(tmp_path):
    # Nothing listens on the port: the connection gives up after a few seconds (it took 20 s) with a
    # message naming --scheduler, not a traceback.
    import socket

    from specforce.batch_runner import CONNECT_TIMEOUT

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    t0 = time.monotonic()
    res = CliRunner().invoke(main, ["batch", "run", "mls", "-o", str(tmp_path / "o.nc"), *CLI_OPTS,
                                    "--scheduler", f"tcp://127.0.0.1:{port}"])
    assert res.exit_code == 1 and isinstance(res.exception, SystemExit), res.output
    assert f"--scheduler) tcp://127.0.0.1:{port}: no Dask scheduler answered there within 5 s" in res.output
    assert CONNECT_TIMEOUT <= 5 and time.monotonic() - t0 < 15
    assert list(tmp_path.iterdir()) == []  # neither the output nor its parts folder and log


def test_a_batch_in_which_every_profile_fails_exits_non_zero_with_the_reasons(tmp_path):
    bad = []
    for i, t in enumerate((2900, 3100)):  # impossible surface temperatures
        bad.append(tmp_path / f"bad{i}.csv")
        bad[-1].write_text(f"pressure_hPa,temperature_K\n1000,{t}\n500,250\n")
    res = CliRunner().invoke(main, ["batch", "run", *map(str, bad), "-o", str(tmp_path / "o.nc"), *CLI_OPTS,
                                    "--scheduler", "serial"])
    assert res.exit_code == 1 and isinstance(res.exception, SystemExit), res.output
    assert "every profile failed (2 of 2); the first: bad0.csv:" in res.output
    assert "2900 K" in res.output and "3100 K" in res.output and "o.nc.log" in res.output
    assert "0 ok, 2 failed" in res.output  # the summary is printed as well


@pytest.mark.slow  # a command-line process with a local cluster
def test_ctrl_c_stops_a_batch_with_one_line_and_keeps_the_finished_chunks(tmp_path):
    # Ctrl-C in a terminal sends SIGINT to the whole foreground process group, the local cluster's
    # workers included; each worker printed its own traceback. Here the group gets SIGINT as from a
    # terminal once the first chunk is on disk: one line on stderr, exit status 130, chunks kept.
    out = tmp_path / "c.nc"
    proc = _run_cli(["batch", "run", "afgl", "-o", str(out), "--co2", "2x", *CLI_OPTS, "--workers", "1",
                     "--chunk", "1"])
    parts = f"{out}.parts"
    try:
        _wait_for_a_chunk(proc, parts, "interrupted")
        os.killpg(proc.pid, signal.SIGINT)
        stdout, stderr = proc.communicate(timeout=120)
    finally:
        try:
            os.killpg(proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
    assert proc.returncode == 130, stderr[-3000:]
    assert stderr.strip().splitlines() == [f"interrupted: the chunks finished so far are kept in {out}.parts; run the "
                                           f"same command again to compute the rest"], stderr[-3000:]
    assert stdout == "" and not out.exists()
    assert any(n.startswith("chunk-") and n.endswith(".nc") for n in os.listdir(parts))
    assert "interrupted with" in (tmp_path / "c.nc.log").read_text()


def test_a_server_that_is_no_dask_scheduler_is_a_short_clear_error(tmp_path):
    # A port where something else listens and never answers (Dask's client waited there for ever).
    import socket

    with socket.socket() as server:
        server.bind(("127.0.0.1", 0))
        server.listen()  # connections are accepted by the kernel; nothing is ever said
        address = "tcp://127.0.0.1:%d" % server.getsockname()[1]
        t0 = time.monotonic()
        res = CliRunner().invoke(main, ["batch", "run", "mls", "-o", str(tmp_path / "o.nc"), *CLI_OPTS,
                                        "--scheduler", address])
    assert res.exit_code == 1 and isinstance(res.exception, SystemExit), res.output
    assert f"--scheduler) {address}: no Dask scheduler answered there within 5 s" in res.output
    assert time.monotonic() - t0 < 20 and list(tmp_path.iterdir()) == []

"""The cluster path of sweeps (``--scheduler``): data travel with the task, addresses, versions, time limits, TLS.

What is checked against what:
- a chunk run from another folder with the data files sent as contents equals the same chunk run
  where the files are (the project's in-process path), and fails without them (the old way);
- every wait on a cluster ends within ``--timeout`` plus a small slack (wall clock);
- a server that is silent or speaks another protocol is refused within the timeout, without the
  allocation its first bytes would ask for (dask's frame format: an 8-byte little-endian length
  first, distributed/comm/tcp.py, ``TCP.read``);
- TLS with certificate files against a dask cluster using ``Security.temporary()`` certificates.
"""

from __future__ import annotations

import logging
import math
import shutil
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from actsim.errors import ActsimError, ActsimInputError
from actsim.scenario import load_scenario, parse_scenario
from actsim.study import execute
from actsim.study.plan import plan_sweep
from actsim.study.sweep import sweep

from conftest import film_toml

REPO = Path(__file__).resolve().parents[1]
SLACK = 1.5  # [s] start-up of the client and the probe on a loaded two-core machine (common practice, no source)


def _cluster(**kw):
    from distributed import LocalCluster

    return LocalCluster(n_workers=kw.pop("n_workers", 1), threads_per_worker=kw.pop("threads", 1), processes=False,
                        protocol=kw.pop("protocol", "tcp"), dashboard_address=None, silence_logs=logging.CRITICAL, **kw)


def _small():
    return parse_scenario(film_toml(cells=8, substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 4},
                                    duration="2 s", output="0.5 s", step="0.1 s"))


@pytest.fixture
def valve_copy(tmp_path):
    """scenarios/microvalve_spectrum.toml and the data files it names, copied into tmp/case (names relative)."""
    case = tmp_path / "case"
    (case / "data").mkdir(parents=True)
    shutil.copy(REPO / "scenarios" / "microvalve_spectrum.toml", case / "valve.toml")
    for name in ("valve_film_absorptivity.csv", "led_405_spectrum.csv"):
        shutil.copy(REPO / "scenarios" / "data" / name, case / "data" / name)
    return case


def test_data_files_travel_with_the_task(valve_copy, tmp_path, monkeypatch):
    monkeypatch.chdir(valve_copy.parent)
    sc = load_scenario("case/valve.toml")  # a relative scenario path, its data files relative to it
    plan = plan_sweep(sc, {"layers[valve film].thickness": "20 um,30 um"})
    base_dir, files = execute.data_file_contents(plan)
    assert sorted(files) == ["data/led_405_spectrum.csv", "data/valve_film_absorptivity.csv"]
    assert files["data/led_405_spectrum.csv"] == (valve_copy / "data" / "led_405_spectrum.csv").read_bytes()
    args = (sc.text, sc.path, [plan.overrides(i) for i in range(2)], [0, 1], plan.target, False, 1)
    here = execute.run_chunk(*args)  # where the files are: read from the disk (the in-process path)
    elsewhere = tmp_path / "worker"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)  # a worker started in another folder, and the data gone from the disk
    shutil.rmtree(valve_copy)
    sent = execute.run_chunk(*args, files=files, base_dir=base_dir)
    for name in here["metrics"]:
        np.testing.assert_array_equal(sent["metrics"][name], here["metrics"][name])
    assert sent["status"].tolist() == [0, 0]
    with pytest.raises(ActsimInputError, match="does not exist"):  # the old way: paths resolved on the worker
        execute.run_chunk(*args)
    with pytest.raises(ActsimInputError, match="was not sent with the task"):  # never the worker's own disk
        execute.run_chunk(*args, files={}, base_dir=base_dir)


def test_sweep_on_a_cluster_reads_no_worker_disk(monkeypatch, tmp_path):
    """End to end: the worker runs in a folder where the scenario's relative data paths do not exist."""
    monkeypatch.chdir(REPO)
    sc = load_scenario("scenarios/microvalve_spectrum.toml")
    vary = {"layers[valve film].thickness": "20 um,30 um"}
    here = sweep(sc, vary, scheduler="inprocess", progress=False)
    real = execute.data_file_contents

    def then_move(plan):
        out = real(plan)
        monkeypatch.chdir(tmp_path)  # same process: the in-process worker now sees another folder
        return out

    monkeypatch.setattr(execute, "data_file_contents", then_move)
    with _cluster() as cl:
        there = sweep(sc, vary, scheduler=cl.scheduler_address, progress=False, connect_timeout=5)
    xr.testing.assert_identical(here, there)


@pytest.mark.parametrize("address, says", [
    ("tcp://127.0.0.1:8797/x", "nothing after it"), ("inproc://x", "scheme 'inproc://'"),
    ("ucx://127.0.0.1:8786", "scheme 'ucx://'"), ("ws://127.0.0.1:8786", "scheme 'ws://'"),
    ("junk", "is not an address"), ("tcp://127.0.0.1", "HOST:PORT"), ("tcp://127.0.0.1:0", "1 to 65535"),
    ("tcp://127.0.0.1:70000", "1 to 65535"), ("tcp://300.1.1.1:8786", "not a host name"),
    ("tcp://user@host:8786", "HOST:PORT"), ("tcp://-bad-:8786", "not a host name"),
    ("tls://127.0.0.1:8786", "needs --tls-ca"),
])
def test_address_refused(address, says):
    with pytest.raises(ActsimInputError, match=f"^--scheduler: .*{says}") as err:
        execute.check_scheduler(address)
    assert "\n" not in str(err.value)


def test_addresses_accepted():
    assert execute.check_address("tcp://127.0.0.1:8786") == ("tcp", "127.0.0.1", 8786)
    assert execute.check_address("tls://[::1]:9000") == ("tls", "::1", 9000)
    assert execute.check_address("tcp://node-3.cluster.example:8786") == ("tcp", "node-3.cluster.example", 8786)


def test_certificate_options_checked(tmp_path):
    with pytest.raises(ActsimInputError, match="^--tls-cert: missing"):
        execute.tls_security(ca=tmp_path / "ca.pem")
    with pytest.raises(ActsimInputError, match="^--tls-ca: .* does not exist"):
        execute.tls_security(ca=tmp_path / "ca.pem", cert=tmp_path / "c.pem")
    (tmp_path / "ca.pem").write_text("not a certificate\n")
    (tmp_path / "c.pem").write_text("not a certificate\n")
    with pytest.raises(ActsimInputError, match="^--tls-cert: the certificate files cannot be used"):
        execute.tls_security(ca=tmp_path / "ca.pem", cert=tmp_path / "c.pem")
    with pytest.raises(ActsimInputError, match="need a tls:// scheduler"):
        execute.check_scheduler("tcp://127.0.0.1:8786", security=object())


def test_bad_address_on_the_command_line_writes_nothing(tmp_path):
    out = tmp_path / "o"
    r = subprocess.run([sys.executable, "-m", "actsim.cli", "sweep", str(REPO / "scenarios" / "vent_flap.toml"),
                        "--vary", "protocol[0].light.uv_lamp=10 mW/cm^2,50 mW/cm^2", "--scheduler",
                        "tcp://127.0.0.1:8797/x", "-o", str(out)], capture_output=True, text=True, cwd=tmp_path)
    assert r.returncode == 2 and r.stderr.strip().count("\n") == 0 and "--scheduler" in r.stderr, r.stderr
    assert not out.exists()


def test_tls_cluster(tmp_path):
    from distributed.security import Security

    sec = Security.temporary()  # self-signed certificates of the cluster, written to files as a user has them
    for name, pem in (("ca", sec.tls_ca_file), ("cert", sec.tls_client_cert), ("key", sec.tls_client_key)):
        (tmp_path / f"{name}.pem").write_text(pem)
    other = Security.temporary()
    (tmp_path / "other_ca.pem").write_text(other.tls_ca_file)
    mine = execute.tls_security(ca=tmp_path / "ca.pem", cert=tmp_path / "cert.pem", key=tmp_path / "key.pem")
    wrong = execute.tls_security(ca=tmp_path / "other_ca.pem", cert=tmp_path / "cert.pem", key=tmp_path / "key.pem")
    base = _small()
    vary = {"layers[film].thickness": "10 um,20 um"}
    with _cluster(protocol="tls", security=sec) as cl:
        assert cl.scheduler_address.startswith("tls://")
        ds = sweep(base, vary, scheduler=cl.scheduler_address, security=mine, progress=False, connect_timeout=5)
        assert ds["status"].values.tolist() == [0, 0]
        with pytest.raises(ActsimInputError, match="TLS handshake .* failed"):
            execute.connect(cl.scheduler_address, timeout=2, security=wrong)
    xr.testing.assert_identical(ds, sweep(base, vary, scheduler="inprocess", progress=False))


def test_version_mismatch_is_one_line():
    class Cluster:  # a client whose one worker runs another actsim
        def wait_for_workers(self, n, timeout):
            pass

        def run(self, fn, **kw):
            return {"tcp://10.0.0.7:40000": "0.0.1"}

    import actsim

    with pytest.raises(ActsimInputError, match=r"^--scheduler: dask worker tcp://10.0.0.7:40000 runs actsim 0.0.1, "
                       rf"this client actsim {actsim.__version__}; install"):
        execute._wait_for_worker(Cluster(), "tcp://x:1", 1.0)
    sc = _small()
    with pytest.raises(ActsimInputError, match=rf"runs actsim {actsim.__version__}, this client actsim 9.9.9"):
        execute.run_chunk(sc.text, sc.path, [{}], [0], None, False, version="9.9.9")


def _free_port():
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    return port


def test_nothing_listening_times_out():
    t0 = time.monotonic()
    with pytest.raises(ActsimInputError, match="no dask scheduler answered .* within 1 s"):
        execute.connect(f"tcp://127.0.0.1:{_free_port()}", timeout=1.0)
    assert time.monotonic() - t0 < 1.0 + SLACK


@pytest.fixture
def server():
    """A TCP server on 127.0.0.1 that accepts and then stays silent, or sends ``reply`` and stays open."""
    srv = socket.socket()
    srv.bind(("127.0.0.1", 0))
    srv.listen(8)
    state = {"reply": b"", "conns": []}

    def serve():
        while True:
            try:
                c, _ = srv.accept()
            except OSError:
                return
            state["conns"].append(c)
            if state["reply"]:
                c.sendall(state["reply"])

    threading.Thread(target=serve, daemon=True).start()
    yield srv.getsockname()[1], state
    srv.close()
    for c in state["conns"]:
        c.close()


def test_silent_server_times_out(server):
    port, _ = server
    t0 = time.monotonic()
    with pytest.raises(ActsimInputError, match="no dask scheduler answered .* within 1 s"):
        execute.connect(f"tcp://127.0.0.1:{port}", timeout=1.0)
    assert time.monotonic() - t0 < 1.0 + SLACK


def test_junk_server_refused_without_allocating(server):
    port, state = server
    state["reply"] = b"HTTP/1.1 400 Bad Request\r\n\r\n"  # read as a length: about 3.5e18 bytes
    t0 = time.monotonic()
    with pytest.raises(ActsimInputError, match="does not speak dask's protocol"):
        execute.connect(f"tcp://127.0.0.1:{port}", timeout=5.0)
    assert time.monotonic() - t0 < 1.0 + SLACK


def test_no_worker_at_the_start():
    with _cluster(n_workers=0) as cl:
        t0 = time.monotonic()
        with pytest.raises(ActsimInputError, match=r"no dask worker is alive .* \(waited 1 s\)"):
            sweep(_small(), {"layers[film].thickness": "10 um,20 um"}, scheduler=cl.scheduler_address,
                  connect_timeout=1.0, progress=False)
        assert time.monotonic() - t0 < 1.0 + 2 * SLACK


#: Released at the end of the worker-loss test (a chunk waits on it, standing for a long chunk).
_RELEASE = threading.Event()


def _blocked_chunk(*args, **kw):
    _RELEASE.wait(20)
    return execute.run_chunk(*args, **kw)


def test_last_worker_lost_stops_within_timeout(monkeypatch):
    monkeypatch.setattr(execute, "run_chunk", _blocked_chunk)
    _RELEASE.clear()
    try:
        with _cluster() as cl:
            threading.Timer(0.5, lambda: cl.scale(0)).start()
            t0 = time.monotonic()
            with pytest.raises(ActsimError, match="no dask worker alive at .* for 1 s; 0 of 1 chunks finished"):
                sweep(_small(), {"layers[film].thickness": "10 um,20 um"}, scheduler=cl.scheduler_address,
                      connect_timeout=1.0, progress=False)
            assert time.monotonic() - t0 < 0.5 + 1.0 + 2 * SLACK
            _RELEASE.set()  # before the cluster closes: it waits for the chunk's thread
    finally:
        _RELEASE.set()


def test_numba_threads_follow_the_worker():
    assert execute.worker_threads() is None  # not on a worker
    with _cluster(threads=2) as cl, __import__("distributed").Client(cl) as client:
        assert client.submit(execute.worker_threads, pure=False).result() == 2  # one task on a 2-thread worker
    with _cluster(threads=1) as cl, __import__("distributed").Client(cl) as client:
        assert client.submit(execute.worker_threads, pure=False).result() == 1


def test_result_that_is_not_arrays_refused():
    good = {"design": np.arange(2), "status": np.zeros(2, np.int8), "metrics": {"a": np.zeros(2)}, "series": None,
            "errors": []}
    assert execute._check_result(good, 2) is good
    with pytest.raises(ActsimError, match="something other than a chunk's arrays"):
        execute._check_result(dict(good, metrics={"a": np.array([object(), object()])}), 2)
    with pytest.raises(ActsimError, match="something other than a chunk's arrays"):
        execute._check_result(math.pi, 2)

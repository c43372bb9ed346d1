"""Running the chunks of a sweep: one chunk through the batch kernel, on this process or a dask cluster.

:func:`run_chunk` builds the designs of one chunk from the base scenario's text
and their overrides and runs them through :func:`actsim.study.batch.run_batch` in
one numba call; it returns plain arrays, so it can run on a worker.
:func:`execute` runs every chunk of a plan not yet in the store and writes each
one as it finishes (:mod:`actsim.study.store`); :func:`connect` opens a client of
an existing dask scheduler.

Where the work runs
-------------------
``scheduler=None`` or ``"inprocess"`` (default): every chunk in this process,
numba parallel over the designs of the chunk on ``threads`` cores (default: all
that numba may use, ``NUMBA_NUM_THREADS``). Building a design costs about a
tenth of a millisecond (:class:`actsim.study.designs.DesignBuilder` parses the
scenario once per chunk and patches each design), against a millisecond or so of
its time loop, so worker processes do not pay for their start-up on one machine
(see ``docs/studies.md`` for the measurement).
``scheduler="local"``: a ``dask.distributed.LocalCluster`` of worker processes
(``n_workers``, default one per core; one thread each, numba single-threaded
inside); the distributed scheduler hands back each chunk as it finishes, and the
main process writes it at once.
``scheduler="tcp://host:port"`` or ``"tls://host:port"``: an existing dask
cluster (:func:`connect`; ``tls://`` with certificate files, :func:`tls_security`).

On a dask cluster (``"local"`` or an address) the scenario and every data file it
names travel with each task as contents (:func:`data_file_contents`): the worker
parses the scenario text with those bytes (:func:`actsim.sentfiles.preread_files`)
and never reads its own disk, so relative paths work whatever the worker's
folder. Each task checks that the worker runs the client's actsim version, and
numba on a worker uses the worker's threads (:func:`worker_threads`).

Waiting is bounded by ``connect_timeout`` (``--timeout``): the scheduler must
answer a first message within it (:func:`connect`, which also refuses a server
that does not speak dask's protocol), a worker must be alive within it, and
during the run the client gives up with a one-line error when no worker has
been alive, or the scheduler has not answered, for that long (:func:`execute`).
Exit status of the command: 2 when nothing ran (address, certificates, no
scheduler, no worker at the start, version mismatch), 3 when the run broke off
(workers lost, scheduler gone); finished chunks stay in the store for a resume.

Trust: a dask scheduler and its workers run code as the user, and a result is
unpickled in this process; only connect to machines you trust (``docs/studies.md``).
"""

from __future__ import annotations

import os
import re
import socket
import stat
import struct
import sys
import time
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import xarray as xr

from ..errors import ActsimError, ActsimInputError
from .store import METRIC_INFO, SERIES_INFO, chunk_dataset, chunk_path, open_store

if TYPE_CHECKING:
    from .plan import SweepPlan


def run_chunk(base_text, base_path, overrides, design_ids, target, keep_series, numba_threads=None, *, files=None,
              base_dir=None, version=None):
    """Build and run the designs of one chunk through the batch kernel; returns plain arrays.

    Parameters
    ----------
    base_text, base_path : str
        The base scenario's TOML text and file path (data files resolve beside it).
    overrides : list of dict
        Field path -> value of each design.
    design_ids : list of int
        Global design numbers.
    target : float or None
        Target bend angle [rad].
    keep_series : bool
        Keep the (design, time) series.
    numba_threads : int, optional
        Threads of numba's parallel loop over the designs (default: on a dask worker its share of the
        worker's threads, :func:`worker_threads`; elsewhere numba's current number; restored afterwards).
    files : dict of str to bytes, optional
        The data files the scenario names, name as written -> contents (:func:`data_file_contents`):
        given, they are the only data read (never this machine's disk); None reads the disk.
    base_dir : str, optional
        The client's scenario folder, against which ``files`` names resolve (default: ``base_path``'s).
    version : str, optional
        The client's actsim version; a different version here is refused.

    Returns
    -------
    dict
        ``design``, ``status``, ``metrics`` (name -> array), ``series``, ``times``, ``errors``.
    """
    if version is not None:
        from .. import __version__

        if version != __version__:
            raise ActsimInputError(f"--scheduler: a dask worker runs actsim {__version__}, this client actsim {version}; "
                                   "install the same version on every worker")
    if numba_threads is None:
        numba_threads = worker_threads()
    if files is None:
        return _run_chunk(base_text, base_path, overrides, design_ids, target, keep_series, numba_threads, None)
    from ..sentfiles import preread_files

    base = base_dir or (str(Path(base_path).parent) if base_path else ".")
    with preread_files({str(Path(base) / name): data for name, data in files.items()}):
        return _run_chunk(base_text, base_path, overrides, design_ids, target, keep_series, numba_threads, base)


def worker_threads():
    """numba threads for a task on this dask worker: its threads shared among the tasks it runs, or None.

    A worker started with ``--nthreads N`` runs up to N tasks at once; each chunk then gets
    ``N // (tasks running)`` threads (at least 1), so the worker never uses more cores than it was given.
    Outside a dask worker: None (numba's own number).
    """
    if "distributed" not in sys.modules:
        return None
    try:
        from distributed import get_worker

        worker = get_worker()
    except (ImportError, ValueError):
        return None
    state = getattr(worker, "state", worker)
    n = getattr(state, "nthreads", None) or getattr(worker, "nthreads", None)
    if not n:
        return None
    running = len(getattr(state, "executing", ()) or ())
    return max(1, int(n) // max(1, running))


def _run_chunk(base_text, base_path, overrides, design_ids, target, keep_series, numba_threads, base_dir):
    """:func:`run_chunk` after its checks: parse (data files from the disk or the sent contents) and run."""
    import numba

    from ..errors import ActsimError
    from ..scenario import parse_scenario
    from .batch import run_batch
    from .designs import DesignBuilder

    if base_dir is None:
        base_dir = Path(base_path).parent if base_path else Path.cwd()
    base = parse_scenario(base_text, path=base_path, base_dir=base_dir)
    builder = DesignBuilder(base, dict.fromkeys(p for ov in overrides for p in ov))
    n = len(design_ids)
    status = np.zeros(n, np.int8)
    errors = []
    problems, scen, ok = [], [], []
    for k, ov in enumerate(overrides):
        try:
            problem, sc = builder.build(ov)
            problems.append(problem)
            scen.append(sc)
            ok.append(k)
        except ActsimError as exc:
            status[k] = 2
            errors.append((int(design_ids[k]), str(exc)))
    res = None
    if problems:
        previous = numba.get_num_threads()
        if numba_threads:
            numba.set_num_threads(max(1, min(int(numba_threads), numba.config.NUMBA_NUM_THREADS)))
        try:
            res = run_batch(problems, free_length=[s.strip.free_length for s in scen],
                            width=[s.strip.width for s in scen], target_bend_angle=target,
                            heat=[s.heat.enabled for s in scen], keep_series=keep_series, raise_on_failure=False)
        finally:
            numba.set_num_threads(previous)
    metrics, series = {}, None
    names = list(METRIC_INFO) if target is not None else [m for m in METRIC_INFO if m not in
                                                          ("time_to_target", "reached_target", "blocked_force_at_target")]
    ok = np.asarray(ok, int)
    for name in names:
        arr = np.zeros(n, bool) if name == "reached_target" else np.full(n, np.nan)
        if res is not None:
            arr[ok] = res["metrics"][name]
        metrics[name] = arr
    times = None
    if keep_series and res is not None:
        times = res["times"]
        series = {}
        for name in SERIES_INFO:
            arr = np.full((n, times.size), np.nan)
            arr[ok] = res["series"][name]
            series[name] = arr
    if res is not None:
        status[ok] = res["status"]
    return {"design": np.asarray(design_ids, np.int64), "status": status, "metrics": metrics, "series": series,
            "times": times, "errors": errors}


def _progress(total, initial, enabled):
    from tqdm.auto import tqdm

    on = enabled and sys.stderr.isatty() and not os.environ.get("CI")
    return tqdm(total=total, initial=initial, unit="design", desc="sweep", disable=not on, smoothing=0.1,
                dynamic_ncols=True)


#: Address schemes accepted for a dask scheduler (plain TCP, or TLS with certificate files).
SCHEDULER_SCHEMES = ("tcp", "tls")

#: Largest first message accepted from a server that claims to be a dask scheduler [bytes]; dask's
#: handshake is a few hundred bytes, and a server that announces more does not speak dask's protocol.
HANDSHAKE_LIMIT = 1 << 20

#: Largest total size of the data files sent with each task [bytes].
MAX_SENT_FILES = 64 * 1024 * 1024

_HOSTNAME = re.compile(r"(?!-)[A-Za-z0-9-]{1,63}(?<!-)(\.(?!-)[A-Za-z0-9-]{1,63}(?<!-))*\.?")


def _shown(text, n=60):
    text = str(text)
    return repr(text if len(text) <= n else text[:n] + "...")


def check_address(scheduler) -> tuple:
    """Check a scheduler address ``tcp://host:port`` or ``tls://host:port``; returns (scheme, host, port).

    The host is a name, an IPv4 address or an IPv6 address in brackets; the port a whole number
    1-65535; nothing may follow the port (no path, query or user). Other dask transports
    (``inproc``, ``ucx``, ``ws``, ``wss``) are refused.
    """
    import ipaddress

    text = str(scheduler)
    allowed = "tcp://HOST:PORT or tls://HOST:PORT, e.g. tcp://127.0.0.1:8786 (or 'local', 'inprocess')"
    m = re.fullmatch(r"([A-Za-z][A-Za-z0-9+.-]*)://(.*)", text, flags=re.S)
    if not m:
        raise ActsimInputError(f"--scheduler: {_shown(text)} is not an address; use {allowed}")
    scheme, rest = m.group(1).lower(), m.group(2)
    if scheme not in SCHEDULER_SCHEMES:
        raise ActsimInputError(f"--scheduler: scheme '{_shown(scheme, 12)[1:-1]}://' is not accepted; use {allowed}")
    hp = re.fullmatch(r"\[([0-9A-Fa-f:.]+)\]:([0-9]{1,5})|([^:/\[\]@?#\s]+):([0-9]{1,5})", rest)
    if not hp:
        raise ActsimInputError(f"--scheduler: {_shown(text)} is not HOST:PORT after '{scheme}://' (a host, ':', a port, "
                               f"nothing after it); use {allowed}")
    host, port = (hp.group(1), hp.group(2)) if hp.group(1) else (hp.group(3), hp.group(4))
    try:
        if hp.group(1):
            ipaddress.IPv6Address(host)
        elif re.fullmatch(r"[0-9.]+", host):
            ipaddress.IPv4Address(host)
        elif len(host) > 253 or not _HOSTNAME.fullmatch(host):
            raise ValueError(host)
    except ValueError:
        raise ActsimInputError(f"--scheduler: host {_shown(host)} is not a host name or IP address; use {allowed}") from None
    if not 1 <= int(port) <= 65535:
        raise ActsimInputError(f"--scheduler: port {port} is outside the allowed range (1 to 65535)")
    return scheme, host, int(port)


def tls_security(*, ca=None, cert=None, key=None):
    """dask security settings for a ``tls://`` scheduler from certificate files (PEM), or None if none is given.

    Parameters
    ----------
    ca : str or path
        Certificate of the authority that signed the scheduler's and workers' certificates (``--tls-ca``).
    cert : str or path
        This client's certificate (``--tls-cert``); may hold the private key too.
    key : str or path, optional
        This client's private key (``--tls-key``), when not in ``cert``.

    Returns
    -------
    distributed.security.Security or None
        With ``require_encryption=True``.
    """
    if ca is None and cert is None and key is None:
        return None
    for option, value in (("--tls-ca", ca), ("--tls-cert", cert)):
        if value is None:
            raise ActsimInputError(f"{option}: missing; a tls:// scheduler needs --tls-ca FILE and --tls-cert FILE "
                                   "(and --tls-key FILE unless the certificate file holds the key)")
    for option, value in (("--tls-ca", ca), ("--tls-cert", cert), ("--tls-key", key)):
        if value is not None and not Path(value).is_file():
            raise ActsimInputError(f"{option}: {_shown(value)} does not exist or is not a file")
    import ssl

    from distributed.security import Security

    sec = Security(tls_ca_file=str(ca), tls_client_cert=str(cert), tls_client_key=None if key is None else str(key),
                   require_encryption=True)
    try:
        sec.get_connection_args("client")
    except (ssl.SSLError, OSError, ValueError) as exc:
        reason = (getattr(exc, "reason", None) or exc.__class__.__name__)
        raise ActsimInputError(f"--tls-cert: the certificate files cannot be used ({str(reason)[:80]}); give PEM files "
                               "of the certificate authority, this client's certificate and its key") from None
    return sec


def check_scheduler(scheduler, security=None):
    """Check ``scheduler`` (None, ``"inprocess"``, ``"local"`` or an address) against ``security``, before any work.

    A ``tls://`` address needs certificate files (:func:`tls_security`); certificates with any other
    scheduler are refused (they would not be used).
    """
    if scheduler is None or scheduler in ("inprocess", "local"):
        if security is not None:
            raise ActsimInputError("--tls-ca: only used with a tls:// scheduler address")
        return None
    scheme, _, _ = check_address(scheduler)
    if scheme == "tls" and security is None:
        raise ActsimInputError("--scheduler: a tls:// address needs --tls-ca FILE --tls-cert FILE [--tls-key FILE]")
    if scheme == "tcp" and security is not None:
        raise ActsimInputError("--tls-ca: certificate files need a tls:// scheduler address (not tcp://)")
    return scheme


def _probe(scheme, host, port, security, timeout):
    """Wait up to ``timeout`` s for a server at host:port that speaks first as a dask scheduler does.

    A dask scheduler sends its handshake as soon as a connection opens: an 8-byte length, then that
    many bytes. The length is checked against :data:`HANDSHAKE_LIMIT` before anything is read into
    memory, so a server speaking another protocol is refused instead of making dask reserve what it
    announces. Connection refused is retried until the deadline (a scheduler that is starting).
    """
    deadline = time.monotonic() + timeout
    where = f"{scheme}://{host}:{port}"
    no_answer = f"--scheduler: no dask scheduler answered at {where} within {timeout:g} s"
    reason = "timed out"
    while True:
        left = deadline - time.monotonic()
        if left <= 0:
            raise ActsimInputError(f"{no_answer} ({reason})")
        try:
            sock = socket.create_connection((host, port), timeout=left)
        except TimeoutError:
            raise ActsimInputError(f"{no_answer} (timed out)") from None
        except OSError as exc:
            reason = exc.strerror or exc.__class__.__name__
            if isinstance(exc, socket.gaierror):
                raise ActsimInputError(f"--scheduler: host '{host}' is not known ({reason})") from None
            time.sleep(min(0.1, max(0.0, deadline - time.monotonic())))
            continue
        break
    try:
        if scheme == "tls":
            import ssl

            ctx = security.get_connection_args("client")["ssl_context"]
            sock.settimeout(max(0.01, deadline - time.monotonic()))
            try:
                sock = ctx.wrap_socket(sock, server_hostname=host)
            except ssl.SSLError as exc:
                raise ActsimInputError(f"--scheduler: the TLS handshake with {where} failed "
                                       f"({str(exc.reason or exc)[:80]}); check --tls-ca, --tls-cert, --tls-key") from None

        def read(n):
            buf = b""
            while len(buf) < n:
                sock.settimeout(max(0.01, deadline - time.monotonic()))
                part = sock.recv(min(n - len(buf), 65536))
                if not part:
                    raise ActsimInputError(f"--scheduler: the server at {where} closed the connection; it is not a "
                                           "dask scheduler")
                buf += part
            return buf

        (size,) = struct.unpack("<Q", read(8))
        if size > HANDSHAKE_LIMIT:
            raise ActsimInputError(f"--scheduler: the server at {where} does not speak dask's protocol (its first "
                                   f"message announces {size} bytes, at most {HANDSHAKE_LIMIT} expected)")
        read(size)
    except (TimeoutError, socket.timeout):
        raise ActsimInputError(f"{no_answer} (connected, but no answer)") from None
    except OSError as exc:
        raise ActsimInputError(f"{no_answer} ({exc.strerror or exc.__class__.__name__})") from None
    finally:
        sock.close()


def connect(scheduler, *, timeout=10.0, security=None):
    """A dask.distributed Client of an existing scheduler, or a one-line error within about ``timeout`` seconds.

    Parameters
    ----------
    scheduler : str
        ``tcp://host:port`` or ``tls://host:port`` (:func:`check_address`).
    timeout : float
        Seconds to wait for the scheduler's first answer, and again for the client's connection [s].
    security : distributed.security.Security, optional
        TLS settings (:func:`tls_security`); required for ``tls://``.

    Raises
    ------
    ActsimInputError
        Bad address, missing certificates, nothing answering, a server that is not a dask scheduler.
    """
    import dask
    from distributed import Client

    timeout = _check_timeout(timeout)
    scheme, host, port = check_address(scheduler)
    check_scheduler(scheduler, security)
    _probe(scheme, host, port, security, timeout)
    try:
        with dask.config.set({"distributed.comm.timeouts.connect": f"{timeout}s"}):
            return Client(str(scheduler), timeout=timeout, security=security)
    except (OSError, TimeoutError) as exc:
        reason = str(exc).splitlines()[0] if str(exc) else exc.__class__.__name__
        raise ActsimInputError(f"--scheduler: no dask scheduler answered at {scheduler} within {timeout:g} s "
                               f"({reason[:120]})") from None


def _check_timeout(timeout):
    import math

    if isinstance(timeout, bool) or not isinstance(timeout, (int, float)) or not math.isfinite(timeout) \
            or not 0 < timeout <= 86400:
        raise ActsimInputError(f"--timeout: {timeout!r} s is outside the allowed range (> 0 s and <= 86400 s)")
    return float(timeout)


def data_file_contents(plan) -> tuple:
    """The data files a sweep's scenario and its swept ``.file`` values name, read here to send with each task.

    Returns
    -------
    (str, dict of str to bytes)
        The scenario folder the names resolve against, and name as written -> contents. Only regular
        files are read (no device, FIFO or folder); a name that cannot be read is left out (the
        scenario was parsed here already, so every file a design needs was read once).
    """
    import tomllib

    from .plan import file_names

    sc = plan.scenario
    base = str(sc.base_dir or (Path(sc.path).parent if sc.path else Path.cwd()))
    try:
        names = file_names(tomllib.loads(sc.text), [])
    except tomllib.TOMLDecodeError:
        names = []
    names += [v for ax in plan.axes for p, vals in zip(ax.paths, ax.values) if p.endswith(".file")
              for v in vals if isinstance(v, str)]
    files, total = {}, 0
    for name in dict.fromkeys(names):
        path = Path(base) / name
        try:
            st = os.stat(path)
            if not stat.S_ISREG(st.st_mode):
                continue
            total += st.st_size
            if total > MAX_SENT_FILES:  # checked before reading
                raise ActsimInputError(f"data files: more than {MAX_SENT_FILES // 2**20} MiB to send to the workers "
                                       f"(at {_shown(name)}); run without --scheduler")
            files[name] = path.read_bytes()
        except OSError:
            continue
    return base, files


def _check_result(res, n):
    """Refuse a chunk result that is not the plain arrays :func:`run_chunk` returns."""
    ok = (isinstance(res, dict) and isinstance(res.get("design"), np.ndarray) and res["design"].shape == (n,)
          and isinstance(res.get("status"), np.ndarray) and isinstance(res.get("metrics"), dict)
          and all(isinstance(v, np.ndarray) and v.dtype != object and v.shape == (n,) for v in res["metrics"].values())
          and (res.get("series") is None or all(isinstance(v, np.ndarray) and v.dtype != object
                                                for v in res["series"].values()))
          and isinstance(res.get("errors"), list))
    if not ok:
        raise ActsimError("--scheduler: a dask worker sent back something other than a chunk's arrays; "
                          "is every worker running actsim?")
    return res


def _local_cluster(n_workers):
    import logging

    from distributed import Client, LocalCluster

    # no dashboard; the scheduler's small HTTP server (health routes) on a free port, so a taken 8787 (another
    # cluster, a notebook) gives no "Port 8787 is already in use" warning on stderr
    cluster = LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True, dashboard_address=None,
                           scheduler_kwargs={"dashboard_address": ":0"},
                           silence_logs=logging.ERROR)
    return Client(cluster), cluster


def execute(plan: SweepPlan, *, store=None, scheduler=None, progress=True, connect_timeout=10.0, n_workers=None,
            threads=None, security=None):
    """Run the chunks of a plan not yet in ``store``; returns the chunk Datasets (all of them, in order).

    ``scheduler``: None or ``"inprocess"`` (this process, numba parallel over the designs of a chunk on
    ``threads`` cores), ``"local"`` (a local dask cluster of ``n_workers`` processes) or a scheduler address
    (``tcp://host:port``, or ``tls://host:port`` with ``security`` from :func:`tls_security`).
    ``connect_timeout`` [s] bounds every wait on a remote cluster (see the module notes).
    """
    from ..io import write_netcdf

    mode = "inprocess" if scheduler is None else scheduler
    if threads is not None and (isinstance(threads, bool) or not isinstance(threads, int) or threads < 1):
        raise ActsimInputError(f"threads: {threads!r} is outside the allowed range (a whole number >= 1)")
    remote = mode not in ("inprocess", "local")
    if remote:  # before the store is opened: a bad address or certificate writes nothing
        check_scheduler(mode, security)
        connect_timeout = _check_timeout(connect_timeout)
    elif security is not None:
        check_scheduler(mode, security)
    done: set = set()
    pending = list(range(plan.n_chunks))
    client = cluster = None
    try:
        if remote:
            client = connect(mode, timeout=connect_timeout, security=security)
            _wait_for_worker(client, mode, connect_timeout)
        if store is not None:
            store, done = open_store(store, plan)
            pending = [c for c in range(plan.n_chunks) if c not in done]
        if pending and mode == "local":
            client, cluster = _local_cluster(n_workers or os.cpu_count() or 1)
        results = _run_pending(plan, pending, done, store, client, mode, threads, progress, connect_timeout,
                               write_netcdf)
    finally:
        if client is not None:
            client.close(timeout=min(5.0, float(connect_timeout)))
        if cluster is not None:
            cluster.close()
    for c in done:
        results[c] = xr.load_dataset(chunk_path(store, c))
    return [results[c] for c in range(plan.n_chunks)]


def _wait_for_worker(client, where, timeout):
    """One-line error unless a worker is alive within ``timeout`` s and every worker runs this actsim version."""
    from .. import __version__

    try:
        client.wait_for_workers(1, timeout=timeout)
    except (TimeoutError, OSError):
        raise ActsimInputError(f"--scheduler: no dask worker is alive at {where} (waited {timeout:g} s); start "
                               "one with: dask worker ADDRESS --nthreads N") from None

    def version():
        try:
            import actsim

            return str(actsim.__version__)
        except ImportError:
            return "none (actsim is not installed)"

    try:
        found = client.run(version, on_error="return", callback_timeout=timeout)
    except (TimeoutError, OSError):
        raise ActsimInputError(f"--scheduler: the workers at {where} did not answer within {timeout:g} s") from None
    for worker, v in sorted(found.items()):
        if isinstance(v, BaseException):
            v = f"unknown ({v.__class__.__name__})"
        if v != __version__:
            raise ActsimInputError(f"--scheduler: dask worker {worker} runs actsim {str(v)[:40]}, this client actsim "
                                   f"{__version__}; install the same version on every worker")


def _run_pending(plan, pending, done, store, client, mode, threads, progress, timeout, write_netcdf):
    """Run the chunks ``pending`` here or on ``client``; write each into ``store`` as it finishes."""
    results: dict[int, xr.Dataset] = {}
    sc = plan.scenario
    n_done = sum(len(plan.chunk_designs(c)) for c in done)
    bar = _progress(plan.n_designs, n_done, progress)
    pause = float(os.environ.get("ACTSIM_SWEEP_PAUSE", "0") or 0)  # seconds after each chunk (interruption tests)

    def args_of(c):
        ids = list(plan.chunk_designs(c))
        return (sc.text, sc.path, [plan.overrides(i) for i in ids], ids, plan.target, plan.keep_series)

    def finish(c, res):
        ds = chunk_dataset(res)
        if store is not None:
            write_netcdf(ds, chunk_path(store, c))
        results[c] = ds
        bar.update(len(res["design"]))
        if pause > 0:
            time.sleep(pause)

    try:
        if not pending:
            pass
        elif client is None:
            for c in pending:
                finish(c, run_chunk(*args_of(c), threads))
        else:
            from .. import __version__

            base_dir, files = data_file_contents(plan)
            kw = {"files": files, "base_dir": base_dir, "version": __version__}
            futs = {}
            for c in pending:
                f = client.submit(run_chunk, *args_of(c), 1 if mode == "local" else None, pure=False,
                                  key=f"actsim-chunk-{plan.hash[:10]}-{c}", **kw)
                futs[f] = c
            _gather(client, futs, {c: len(plan.chunk_designs(c)) for c in pending}, finish, mode, timeout)
    finally:
        bar.close()
    return results


def _gather(client, futs, sizes, finish, where, timeout):
    """Hand each finished chunk to ``finish``; a one-line :class:`ActsimError` when the cluster breaks off.

    Waits in steps of at most a second; between steps the scheduler is asked for its workers (an answer
    within ``timeout`` s). No worker alive for ``timeout`` s, or no answer, stops the run (exit status 3);
    chunks already written stay in the store, so the same command resumes.
    """
    from distributed import wait

    left = dict(futs)
    n_total = len(futs)
    no_worker_since = None
    step = max(0.05, min(1.0, timeout / 4))

    def broke(what):
        return ActsimError(f"--scheduler: {what}; {n_total - len(left)} of {n_total} chunks finished (run the same "
                           "command again to resume)")

    while left:
        try:
            finished, _ = wait(list(left), timeout=step, return_when="FIRST_COMPLETED")
        except TimeoutError:
            finished = set()
        except OSError:
            raise broke(f"the scheduler at {where} stopped answering") from None
        for f in finished:
            c = left.pop(f)
            if f.status == "cancelled":
                raise broke(f"the connection to the scheduler at {where} was lost")
            try:
                res = f.result(timeout=timeout)
            except ActsimError as exc:
                raise exc.__class__(f"{exc} (chunk {c}, on a dask worker)") from None
            except TimeoutError:
                raise broke(f"the result of chunk {c} did not arrive within {timeout:g} s") from None
            except Exception as exc:  # noqa: BLE001 - a worker's failure, named in one line
                name = exc.__class__.__name__
                if name == "KilledWorker":
                    raise broke(f"dask workers died while running chunk {c}") from None
                if name in ("CancelledError", "FutureCancelledError"):
                    raise broke(f"the connection to the scheduler at {where} was lost") from None
                first = (str(exc).splitlines() or [""])[0][:160]
                raise broke(f"chunk {c} failed on a dask worker: {name}: {first}") from None
            finish(c, _check_result(res, sizes[c]))
        if not left:
            break
        if client.status not in ("running", "connecting"):
            raise broke(f"the connection to the scheduler at {where} was closed")
        try:
            n_workers = len(client.nthreads(callback_timeout=timeout))
        except (TimeoutError, OSError):
            raise broke(f"the scheduler at {where} did not answer within {timeout:g} s") from None
        if n_workers:
            no_worker_since = None
        elif no_worker_since is None:
            no_worker_since = time.monotonic()
        elif time.monotonic() - no_worker_since > timeout:
            raise broke(f"no dask worker alive at {where} for {timeout:g} s")


__all__ = ["SCHEDULER_SCHEMES", "HANDSHAKE_LIMIT", "MAX_SENT_FILES", "run_chunk", "worker_threads", "check_address",
           "check_scheduler", "tls_security", "connect", "data_file_contents", "execute"]

"""A line on screen when the numba kernels are compiled, so that the first run's wait is not silent.

The kernels are compiled with ``cache=True``: the first run on a machine (or after the sources
change) compiles them for 10-30 s, later runs load them from ``__pycache__`` in a fraction of a
second. A command that compiles says so on stderr; a run that loads them from the cache prints
nothing.
"""

from __future__ import annotations

import sys
from contextlib import contextmanager

#: How long the first compile of the kernels usually takes on one core of a laptop [s] (measured, not a bound).
TYPICAL_COMPILE_SECONDS = 20.0
#: What a command prints on stderr when it starts compiling the kernels.
COMPILE_NOTICE = (f"actsim: compiling the solver once for this machine (usually about {TYPICAL_COMPILE_SECONDS:.0f} s); "
                  "later runs start at once")


def _bar_wanted(stream) -> bool:
    """A moving progress line only on a terminal, and never under CI."""
    import os

    return bool(getattr(stream, "isatty", lambda: False)()) and not os.environ.get("CI")


@contextmanager
def compile_notice(stream=None, *, package="actsim"):
    """Within the block, say on stderr when numba compiles an actsim function, how long it usually takes, and when done.

    Uses numba's event API (``numba:compile`` is announced only on a cache miss, just before the
    compiler runs), so a run whose kernels load from the cache prints nothing, and a run refused
    for bad input before the kernel is called prints nothing either. When it compiles: the line
    :data:`COMPILE_NOTICE`, then (on a terminal, CI unset) a progress line on stderr with the time
    spent against the usual :data:`TYPICAL_COMPILE_SECONDS`, and at the end of the block
    ``actsim: solver compiled in N s``.

    Parameters
    ----------
    stream : file, optional
        Where to print (default: stderr).
    package : str, optional
        Only functions of this package count.
    """
    import threading
    import time

    from numba.core import event

    out = stream if stream is not None else sys.stderr

    class Notice(event.Listener):
        shown = False
        depth = 0
        spent = 0.0  # compile time of finished compiles [s]
        started = None
        bar = None

        def _ours(self, ev):
            dispatcher = (ev.data or {}).get("dispatcher")
            module = getattr(getattr(dispatcher, "py_func", None), "__module__", None) or ""
            return module.split(".")[0] == package

        def elapsed(self):
            return self.spent + (time.monotonic() - self.started if self.started is not None else 0.0)

        def on_start(self, ev):
            if not self._ours(ev):
                return
            if self.depth == 0:
                self.started = time.monotonic()
            self.depth += 1
            if not self.shown:
                self.shown = True
                print(COMPILE_NOTICE, file=out, flush=True)
                if _bar_wanted(out):
                    from tqdm import tqdm

                    self.bar = tqdm(total=TYPICAL_COMPILE_SECONDS, desc="compiling", file=out, leave=False,
                                    bar_format="{desc}: {bar} {n:.0f} s of about {total:.0f} s")
                    threading.Thread(target=self.tick, daemon=True).start()

        def on_end(self, ev):
            if not self._ours(ev) or self.depth == 0:
                return
            self.depth -= 1
            if self.depth == 0 and self.started is not None:
                self.spent += time.monotonic() - self.started
                self.started = None

        def tick(self):
            while self.bar is not None:
                bar = self.bar
                try:
                    bar.n = min(self.elapsed(), 0.99 * bar.total) if self.elapsed() < bar.total else self.elapsed()
                    if bar.n >= bar.total:
                        bar.total = bar.n + 5.0  # slower than usual: the estimate moves on
                    bar.refresh()
                except Exception:
                    return
                time.sleep(0.25)

        def done(self):
            bar, self.bar = self.bar, None
            if bar is not None:
                bar.close()
            if self.shown:
                print(f"actsim: solver compiled in {self.elapsed():.0f} s", file=out, flush=True)

    notice = Notice()
    try:
        with event.install_listener("numba:compile", notice) as listener:
            yield listener
    finally:
        notice.done()


def is_compiled(dispatcher):
    """Whether a numba function is ready without compiling.

    Parameters
    ----------
    dispatcher : numba dispatcher or callable
        A function decorated with ``@njit(cache=True)``.

    Returns
    -------
    bool or None
        True when it is compiled in this process or its on-disk cache holds an entry for this
        machine, this numba and the function's current source; False when calling it will compile
        (no cache entry, or caching is off); None when it cannot be told (not a numba function,
        ``NUMBA_DISABLE_JIT``, or a numba whose cache is laid out differently).

    Notes
    -----
    The on-disk check reads the cache index the way numba does when it loads an overload
    (``numba.core.caching``): the index is valid only for the source file's stamp, and each entry
    is keyed by (signature, machine code generator, hash of the bytecode). The signature is not
    known before the call, so any entry matching the other two counts: the kernels are called with
    one set of argument types.
    """
    if getattr(dispatcher, "overloads", None):
        return True
    cache = getattr(dispatcher, "_cache", None)
    if cache is None:
        return None
    if type(cache).__name__ == "NullCache":
        return False  # caching off: every run compiles
    try:
        index = cache._cache_file._load_index()
        codegen = dispatcher.targetctx.codegen()
        return any(cache._index_key(key[0], codegen) == key for key in index)
    except Exception:
        return None


def notify_if_compiling(dispatchers, *, stream=None) -> bool:
    """Print :data:`COMPILE_NOTICE` on ``stream`` (stderr) when any of ``dispatchers`` will compile.

    For kernels that compile in other processes (sweep workers), where :func:`compile_notice`
    cannot listen. Returns whether it printed.
    """
    if any(is_compiled(d) is False for d in dispatchers):
        print(COMPILE_NOTICE, file=stream if stream is not None else sys.stderr, flush=True)
        return True
    return False

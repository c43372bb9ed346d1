"""A line on screen when the numba kernels are compiled, so that the first run's wait is not silent.

The kernels are compiled with ``cache=True``: the first run on a machine (or after the sources
change) compiles them for 10-30 s, later runs load them from ``__pycache__`` in a fraction of a
second. A command that compiles says so on stderr; a run that loads them from the cache prints
nothing.
"""

from __future__ import annotations

import sys
from contextlib import contextmanager

#: What a command prints on stderr when it starts compiling the kernels.
COMPILE_NOTICE = "actsim: compiling the solver once for this machine (about 20 s); later runs start at once"


@contextmanager
def compile_notice(stream=None, *, package="actsim"):
    """Within the block, print :data:`COMPILE_NOTICE` once when numba starts compiling an actsim function.

    Uses numba's event API (``numba:compile`` is announced only on a cache miss, just before the
    compiler runs), so a run whose kernels load from the cache prints nothing, and a run refused
    for bad input before the kernel is called prints nothing either.

    Parameters
    ----------
    stream : file, optional
        Where to print (default: stderr).
    package : str, optional
        Only functions of this package count.
    """
    from numba.core import event

    class Notice(event.Listener):
        shown = False

        def on_start(self, ev):
            dispatcher = (ev.data or {}).get("dispatcher")
            module = getattr(getattr(dispatcher, "py_func", None), "__module__", None) or ""
            if not self.shown and module.split(".")[0] == package:
                self.shown = True
                print(COMPILE_NOTICE, file=stream if stream is not None else sys.stderr, flush=True)

        def on_end(self, ev):
            pass

    with event.install_listener("numba:compile", Notice()) as listener:
        yield listener


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

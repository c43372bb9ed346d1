"""The compile notice: shown when a numba kernel will compile, silent when its cache is warm."""

from __future__ import annotations

import io
import subprocess
import sys
import textwrap

from actsim.jitcache import COMPILE_NOTICE, compile_notice, is_compiled, notify_if_compiling

MODULE = textwrap.dedent(
    """
    from numba import njit

    @njit(cache=True)
    def twice(x):
        return 2.0 * x
    """
)

PROBE = textwrap.dedent(
    """
    import io, sys
    sys.path.insert(0, sys.argv[1])
    from kernel_probe import twice
    from actsim.jitcache import compile_notice, is_compiled, notify_if_compiling
    before = is_compiled(twice)
    err = io.StringIO()
    shown = notify_if_compiling([twice], stream=err)
    heard = io.StringIO()
    with compile_notice(heard, package="kernel_probe"):
        twice(1.5)
        twice(2.5)
    print(before, shown, heard.getvalue().count("compiling the solver"), is_compiled(twice))
    """
)


def probe(folder):
    r = subprocess.run([sys.executable, "-c", PROBE, str(folder)], capture_output=True, text=True, check=True)
    return r.stdout.split()


def test_notice_only_while_the_cache_is_cold(tmp_path):
    (tmp_path / "kernel_probe.py").write_text(MODULE)
    # first process: no cache on disk -> it compiles: the cache check and the listener both say so, once
    assert probe(tmp_path) == ["False", "True", "1", "True"]
    assert list((tmp_path / "__pycache__").glob("kernel_probe.twice-*.nbi"))
    # second process: numba loads it from the cache -> no notice
    assert probe(tmp_path) == ["True", "False", "0", "True"]
    # the source changes: numba's index no longer matches, so it compiles again -> notice
    (tmp_path / "kernel_probe.py").write_text(MODULE.replace("2.0 * x", "3.0 * x") + "\n# changed\n")
    assert probe(tmp_path) == ["False", "True", "1", "True"]


def test_listener_ignores_other_packages_and_is_removed_afterwards():
    from numba import njit

    heard = io.StringIO()
    with compile_notice(heard):  # only actsim's functions count
        njit(lambda x: x + 1)(1)
    assert heard.getvalue() == ""
    with compile_notice(heard, package=__name__.split(".")[0]):
        pass
    njit(lambda x: x + 2)(1)  # compiled after the block: nobody listens
    assert heard.getvalue() == ""


def test_plain_functions_and_warm_kernels_print_nothing():
    err = io.StringIO()
    assert is_compiled(len) is None
    assert not notify_if_compiling([len], stream=err)
    assert err.getvalue() == ""
    err = io.StringIO()

    class Cold:  # stands for a dispatcher with caching off (numba's NullCache)
        overloads = {}
        _cache = type("NullCache", (), {})()

    assert notify_if_compiling([Cold()], stream=err)
    assert err.getvalue().strip() == COMPILE_NOTICE

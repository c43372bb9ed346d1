"""One-line mutations of the core: the test suite must fail on every one.

Each mutant changes one line of the core (a sign, a swapped argument, a march
in the wrong direction, a dropped term), clears the numba caches, runs the core
tests and restores the file. A mutant the tests do not catch ("survived") is a
hole in the tests. Run from the repository root::

    python3 tools/mutants.py            # all mutants
    python3 tools/mutants.py 3 7        # some of them (1-based)

It edits files in place and restores them afterwards (also on Ctrl-C); run it
on a clean work tree.
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

#: Tests run against each mutant (the core's; the whole suite takes longer).
TESTS = [
    "tests/test_outputs_independent.py", "tests/test_kernels.py", "tests/test_photokinetics.py",
    "tests/test_mechanics.py", "tests/test_heat_coupled.py", "tests/test_thermal.py", "tests/test_shape_memory.py",
    "tests/test_batch.py", "tests/test_optics.py", "tests/test_scenario_rules.py",
]

#: (file, exact text, replacement, what the mutation does)
MUTANTS = [
    ("actsim/solver.py", "b * (m_hold - n_hold * 0.5 * h)", "b * (m_hold + n_hold * 0.5 * h)",
     "sign of the N h/2 term in the holding moment"),
    ("actsim/solver.py", "face_temperatures(T[i], dz, p.heat.k_cond, env[i, 1], env[i, 0], env[i, 3], env[i, 2])",
     "face_temperatures(T[i], dz, p.heat.k_cond, env[i, 0], env[i, 1], env[i, 3], env[i, 2])",
     "h and ambient temperature swapped for the bottom face"),
    ("actsim/optics.py", "i = n_cell - 1 - j if light.from_top[b] else j", "i = j if light.from_top[b] else n_cell - 1 - j",
     "light marched from the wrong face"),
    ("actsim/kinetics.py", "k_b[i] = LN10 * sb + k_th", "k_b[i] = LN10 * sb - k_th",
     "sign of the thermal back rate"),
    ("actsim/kinetics.py", "xss = k_f[i] / k\n", "xss = k_b[i] / k\n",
     "photostationary state from the wrong rate"),
    ("actsim/mechanics.py", "kappa = (B * Ns - A * Ms) / det", "kappa = (A * Ms - B * Ns) / det",
     "sign of the free curvature in the kernel's section solve"),
    ("actsim/material.py", "e_th = mat.alpha_th[i] * (T[i] - T_ref)", "e_th = mat.alpha_th[i] * (T_ref - T[i])",
     "sign of the thermal strain"),
    ("actsim/thermal.py", "out[i] = heat_frac[i] * p / dz[i]", "out[i] = heat_frac[i] * p",
     "heat source not divided by the cell width"),
    ("actsim/_kernels.py", "kb1[i] = 0.5 * (kb0[i] + kb1[i])", "kb1[i] = kb0[i]",
     "corrector drops the end-of-step back rate"),
    ("actsim/solver.py", "x_tip, y_tip = mechanics.arc_tip_position(", "y_tip, x_tip = mechanics.arc_tip_position(",
     "tip coordinates swapped"),
    ("actsim/schedule.py", "seg_n = np.maximum(1, np.ceil(length / time_step - 1e-9))",
     "seg_n = np.maximum(1, np.floor(length / time_step - 1e-9))",
     "one time step too few per segment (off by one)"),
    ("actsim/material.py", "s = S[i] + strain[i] * dn", "s = S[i] - strain[i] * dn",
     "network remembers the strain with the wrong sign"),
]


def clear_caches() -> None:
    for pattern in ("*.nbi", "*.nbc"):
        for f in (ROOT / "actsim").rglob(pattern):
            f.unlink()


def run_tests() -> bool:
    """True if the tests pass."""
    r = subprocess.run([sys.executable, "-m", "pytest", "-q", "-x", "-p", "no:cacheprovider", *TESTS],
                       cwd=ROOT, capture_output=True, text=True)
    return r.returncode == 0


def main(argv) -> int:
    picks = [int(a) for a in argv] or list(range(1, len(MUTANTS) + 1))
    survived = []
    for k in picks:
        path, old, new, what = MUTANTS[k - 1]
        f = ROOT / path
        text = f.read_text()
        if text.count(old) != 1:
            print(f"{k:2d} STALE   {what}: the text to mutate is not found once in {path}; update this script")
            survived.append(k)
            continue
        t0 = time.perf_counter()
        try:
            f.write_text(text.replace(old, new))
            clear_caches()
            passed = run_tests()
        finally:
            f.write_text(text)
            clear_caches()
        verdict = "SURVIVED" if passed else "killed  "
        if passed:
            survived.append(k)
        print(f"{k:2d} {verdict} {what} ({path}, {time.perf_counter() - t0:.0f} s)", flush=True)
    print(f"{len(picks) - len(survived)} of {len(picks)} mutants killed" + (f"; survived: {survived}" if survived else ""))
    return 1 if survived else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

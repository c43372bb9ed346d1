"""Break the core on purpose, one line at a time, and check that the tests catch each break.

Each mutation replaces one exact piece of source text in a scratch copy of the package (the working tree is never
touched), clears the numba caches of the copy, and runs the given test files against it. A mutation whose text is
no longer in the source (the code moved) is reported as "not applied" rather than silently passed.

    python3 tools/mutations.py                            # all mutations, the core tests (CORE_TESTS)
    python3 tools/mutations.py -k trbdf2 tests/test_thermal.py
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

#: Tests run against each mutation by default: the core's (the whole suite takes longer).
CORE_TESTS = [
    "tests/test_outputs_independent.py", "tests/test_kernels.py", "tests/test_photokinetics.py",
    "tests/test_mechanics.py", "tests/test_heat_coupled.py", "tests/test_thermal.py", "tests/test_shape_memory.py",
    "tests/test_batch.py", "tests/test_optics.py", "tests/test_conversion_cap.py", "tests/test_schedule.py",
]
#: The error-controlled steps' mutations ("adaptive: ...") are checked against tests/test_time_stepping.py (slow):
#: python3 tools/mutations.py -k adaptive tests/test_time_stepping.py

#: name -> (file, original text, broken text)
MUTATIONS = {
    "holding_moment: M + N h/2": (
        "actsim/solver.py", "b * (m_hold - n_hold * 0.5 * h)", "b * (m_hold + n_hold * 0.5 * h)"),
    "holding_moment: about z = 0": (
        "actsim/solver.py", "b * (m_hold - n_hold * 0.5 * h)", "b * m_hold"),
    "holding_force: per unit width": (
        "actsim/solver.py", 'holding_force=b * n_hold,',
        'holding_force=n_hold,'),
    "face temperatures: h and T_amb swapped (bottom)": (
        "actsim/thermal.py",
        "lb, lt = face_heat_loss(T, dz, k, h_bottom, T_amb_bottom, h_top, T_amb_top)",
        "lb, lt = face_heat_loss(T, dz, k, T_amb_bottom, h_bottom, h_top, T_amb_top)"),
    "face temperatures: no half-cell drop": (
        "actsim/thermal.py",
        "return T[0] - lb * 0.5 * dz[0] / k[0], T[n - 1] - lt * 0.5 * dz[n - 1] / k[n - 1]",
        "return T[0], T[n - 1]"),
    "face temperatures: ambients of the faces swapped": (
        "actsim/solver.py", 'h_bottom=env[:, 1], ambient_bottom=env[:, 0],\n            h_top=env[:, 3], ambient_top=env[:, 2])',
        'h_bottom=env[:, 1], ambient_bottom=env[:, 2],\n            h_top=env[:, 3], ambient_top=env[:, 0])'),
    "face temperatures: h of the faces swapped": (
        "actsim/solver.py", 'h_bottom=env[:, 1], ambient_bottom=env[:, 0],\n            h_top=env[:, 3], ambient_top=env[:, 2])',
        'h_bottom=env[:, 3], ambient_bottom=env[:, 0],\n            h_top=env[:, 1], ambient_top=env[:, 2])'),
    "axial_strain: e0 + kappa h/2": (
        "actsim/solver.py", "e0 - kappa * 0.5 * h,", "e0 + kappa * 0.5 * h,"),
    "bend_angle: free curvature": (
        "actsim/solver.py", 'bend_angle=kappa * L,',
        'bend_angle=kappa_free * L,'),
    "tip: x and y swapped": (
        "actsim/solver.py", "x_tip, y_tip = mechanics.arc_tip_position", "y_tip, x_tip = mechanics.arc_tip_position"),
    "tip: small-angle deflection": (
        "actsim/solver.py", 'tip_deflection=y_tip,',
        'tip_deflection=0.5 * kappa * L**2,'),
    "blocked_force: 3 EI kappa / L": (
        "actsim/mechanics.py", "return 1.5 * ei * np.asarray(curvature) / free_length",
        "return 3.0 * ei * np.asarray(curvature) / free_length"),
    "blocked_moment: held curvature": (
        "actsim/solver.py", 'm_block = mechanics.blocked_moment(bending_stiffness=d_eff, curvature=kappa_free, width=b)',
        'm_block = mechanics.blocked_moment(bending_stiffness=d_eff, curvature=kappa, width=b)'),
    "bending stiffness: D instead of D - B^2/A": (
        "actsim/mechanics.py", "return e0, kappa, det / s[\"A\"]", "return e0, kappa, s[\"D\"]"),
    "stress: at the mid-thickness strain": (
        "actsim/solver.py", 'eigenstrain=e_star[r], strain_bottom=e0[r],',
        'eigenstrain=e_star[r], strain_bottom=e0[r] - kappa[r] * 0.5 * scenario.thickness,'),
    "dose: one segment late": (
        "actsim/schedule.py", "np.cumsum(seg_power * np.diff(schedule.times))",
        "np.cumsum(seg_power[::-1] * np.diff(schedule.times))"),
    "trbdf2 (numba): source at the end of the step in the first stage": (
        "actsim/thermal.py", "q_g[i] = (1.0 - g) * q_old[i] + g * q_new[i]", "q_g[i] = q_new[i]"),
    "trbdf2 (numba): BDF2 weight (1 - gamma) instead of (1 - gamma)^2": (
        "actsim/thermal.py", "a_n = (1.0 - g) * (1.0 - g) / (g * (2.0 - g))", "a_n = (1.0 - g) / (g * (2.0 - g))"),
    "trbdf2 (reference): source at the end of the step in the first stage": (
        "actsim/thermal_reference.py", "q_gamma = (1.0 - gamma) * q_old + gamma * q_new", "q_gamma = q_new"),
    "trbdf2 (reference): backward Euler second stage": (
        "actsim/thermal_reference.py", "    T_new = solve(d * dt, rhs)\n",
        "    T_new = solve(dt, cap * T + dt * b_of(q_new))\n"),
    "readable heat steps: top ambient on the bottom face": (
        "actsim/thermal_reference.py", "b[0] += self.g_b * self.ambient_bottom", "b[0] += self.g_b * self.ambient_top"),
    'h and ambient temperature swapped for the bottom face': (
        "actsim/solver.py", 'h_bottom=env[:, 1], ambient_bottom=env[:, 0],\n            h_top=env[:, 3], ambient_top=env[:, 2])',
        'h_bottom=env[:, 0], ambient_bottom=env[:, 1],\n            h_top=env[:, 3], ambient_top=env[:, 2])'),
    'light marched from the wrong face': (
        'actsim/optics.py', 'i = n_cell - 1 - j if light.from_top[b] else j', 'i = j if light.from_top[b] else n_cell - 1 - j'),
    'sign of the thermal back rate': (
        'actsim/kinetics.py', 'kb = LN10 * sb + k_th', 'kb = LN10 * sb - k_th'),
    'photostationary state from the wrong rate': (
        'actsim/kinetics.py', 'xss = k_f[i] / k\n', 'xss = k_b[i] / k\n'),
    "sign of the free curvature in the kernel's section solve": (
        'actsim/mechanics.py', 'kappa = (B * Ns - A * Ms) / det', 'kappa = (A * Ms - B * Ns) / det'),
    'sign of the thermal strain': (
        'actsim/material.py', 'e_th = mat.alpha_th[i] * (T[i] - T_ref)', 'e_th = mat.alpha_th[i] * (T_ref - T[i])'),
    'heat source not divided by the cell width': (
        'actsim/thermal.py', 'out[i] = heat_frac[i] * p / dz[i]', 'out[i] = heat_frac[i] * p'),
    'corrector drops the end-of-step back rate': (
        'actsim/_kernels.py', 'kb1[i] = 0.5 * (kb0[i] + kb1[i])\n                exact_update(x, kf1, kb1, dt, xp)',
        'kb1[i] = kb0[i]\n                exact_update(x, kf1, kb1, dt, xp)'),
    'tip coordinates swapped': (
        'actsim/solver.py', 'x_tip, y_tip = mechanics.arc_tip_position(', 'y_tip, x_tip = mechanics.arc_tip_position('),
    'one time step too few per segment (off by one)': (
        'actsim/schedule.py', 'seg_n = np.maximum(1, np.ceil(length / time_step - 1e-9))', 'seg_n = np.maximum(1, np.floor(length / time_step - 1e-9))'),
    'network remembers the strain with the wrong sign': (
        'actsim/material.py', 's = S[i] + strain[i] * dn', 's = S[i] - strain[i] * dn'),
    "conversion cap: kernel drops (1 - x_max) k_f from the back rate": (
        "actsim/kinetics.py", "kb = kb + (1.0 - x_max) * kf", "kb = kb"),
    "conversion cap: readable x_ss without x_max": (
        "actsim/kinetics.py", "x_ss = np.where(k > 0, reactive_fraction * k_forward / safe_k, conversion)",
        "x_ss = np.where(k > 0, k_forward / safe_k, conversion)"),
    "adaptive: error estimate ignores the conversion": (
        "actsim/_kernels.py", "d = abs(xp[i] - x_pred[i])", "d = 0.0 * abs(xp[i] - x_pred[i])"),
    "adaptive: the whole tolerance instead of half": (
        "actsim/_kernels.py", "err = err / (LOCAL_TARGET * tol)", "err = err / (4.0 * tol)"),
    "adaptive: last step overshoots the segment end": (
        "actsim/_kernels.py", "t = seg_len if last else t + dt", "t = seg_len if last else t + 1.01 * dt"),
    "adaptive: four-stage rates averaged with equal weights": (
        "actsim/_kernels.py", "kf_sum[i] = (kf_sum[i] + kf1[i]) / 6.0", "kf_sum[i] = (kf_sum[i] - kf0[i] + kf1[i]) / 4.0"),
    # result folders ("folders: ..."): python3 tools/mutations.py -k folders tests/test_result_folders.py
    "folders: new files merged into the old folder instead of swapped in": (
        "actsim/folders.py", "    if _exchange(stage, target):",
        "    shutil.copytree(stage, target, dirs_exist_ok=True); shutil.rmtree(stage); return\n    if _exchange(stage, target):"),
    "folders: no lock": (
        "actsim/folders.py", "fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)", "pass"),
    "folders: verify checks sizes only": (
        "actsim/folders.py", 'if p.stat().st_size != entry.get("bytes") or _sha256(p) != entry.get("sha256"):',
        'if p.stat().st_size != entry.get("bytes"):'),
    "folders: staging kept on failure": (
        "actsim/folders.py", "            _remove(stage)\n            renamed", "            renamed"),
    "folders: a user's folder replaced without --overwrite": (
        "actsim/folders.py", "    if any(target.iterdir()):\n        raise", "    if False:\n        raise"),
    "folders: leftovers of killed runs kept": (
        "actsim/folders.py", "    for p in olds + _leftovers(target, _STAGING):\n        _remove(p)", "    pass"),
}


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("tests", nargs="*", default=CORE_TESTS)
    ap.add_argument("-k", default="", help="run only the mutations whose name contains this text")
    args = ap.parse_args(argv)
    results = []
    for name, (rel, old, new) in MUTATIONS.items():
        if args.k and args.k not in name:
            continue
        with tempfile.TemporaryDirectory() as tmp:
            shutil.copytree(ROOT / "actsim", Path(tmp) / "actsim", ignore=shutil.ignore_patterns("__pycache__"))
            path = Path(tmp) / rel
            text = path.read_text()
            if text.count(old) != 1:
                results.append((name, "not applied", ""))
                continue
            path.write_text(text.replace(old, new))
            env = dict(os.environ, PYTHONPATH=tmp, NUMBA_CACHE_DIR=str(Path(tmp) / "numba_cache"))
            # run from the scratch folder: python -m puts the current folder first on the path
            cmd = [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "-c", str(ROOT / "pyproject.toml"),
                   "--rootdir", str(ROOT), *[str(ROOT / t) for t in args.tests]]
            r = subprocess.run(cmd, env=env, capture_output=True, text=True, cwd=tmp)
            failed = sorted({ln.split(" - ")[0].split("::", 1)[-1] for ln in r.stdout.splitlines()
                             if ln.startswith(("FAILED", "ERROR"))})
            results.append((name, "caught" if r.returncode else "MISSED", ", ".join(failed)))
    width = max(len(n) for n, _, _ in results)
    for name, verdict, by in results:
        print(f"{name:<{width}}  {verdict:<11}  {by}")
    return 1 if any(v == "MISSED" for _, v, _ in results) else 0


if __name__ == "__main__":
    sys.exit(main())

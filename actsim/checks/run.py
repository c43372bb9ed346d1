"""Run every design check of a scenario on its simulated result: the registry and its dispatcher.

:func:`run_checks` takes a scenario (with its optional ``[checks]``, ``[safety]`` and ``[joint]``
sections, see :mod:`actsim.checks.settings`) and the dataset of :func:`actsim.simulate`, builds
one :class:`~actsim.checks.context.CheckContext` (:func:`build_context`: the parsed sections and the
states several checks share), runs the checks of :data:`REGISTRY` in order, and returns the list of
check results with a dictionary of details (time series, counted cycles, the load line, the joint's
margin at each angle ...). The shared states, computed once:

* **Actuation** (details, no verdict; :mod:`actsim.checks.actuation`): the large-deflection blocked
  force at every output time (elastica), and the load line with the work the tip can do at the time
  of peak bend; with ``[checks].tip_force``, the shape under that dead load.
* **Joint sizing** (with ``[joint]``; :mod:`actsim.checks.joint_checks`): the moment the strips
  deliver against the payload's gravity moment at each angle, the number of strips needed with the
  safety factor, and the loaded strips' rotation over time.
* **Stress history** (:mod:`actsim.checks.mechanical`): the von Mises stress of every cell at every
  output time (biaxial plane-strain state for ``section = "plate"``, with the transverse stress of
  isotropic thermal strain when heat is modelled), of the loaded strips when a joint is sized, with
  the tip-loaded state at peak bend as one more state (``[checks].tip_force``: the elastica's
  bending moment M adds the bending stress of dk = M/EI about the neutral axis).

The registered checks (:data:`REGISTRY`), each ``check(context) -> CheckOutput``:

1. **Strength**, per layer (:func:`~actsim.checks.mechanical.yield_check`): the largest equivalent
   stress of the layer against its yield strength, with the required safety factor.
2. **Fatigue**, per layer (:func:`~actsim.checks.mechanical.fatigue_check`): the stress history at
   the critical point (largest stress range), counted by rainflow, Basquin life with the Goodman,
   Gerber, Morrow and Smith-Watson-Topper corrections and the Palmgren-Miner sum against
   ``target_cycles``; the most conservative method is flagged.
3. **Joint** (with ``[joint]``; :func:`~actsim.checks.joint_checks.joint_check`): the joint moment
   at the governing angle, and the plausibility of the stack of strips (its total thickness against
   the hinge length or lever arm, at most 1000 strips).
4. **Light at the exposure position** (UV and visible sources; :func:`~actsim.checks.safety.light_check`):
   actinic UV, UV-A and blue-light hazards of the protocol, repeated over the exposure duration;
   without ``[safety].exposure_duration``, 8 h of repeated use (the daily reference of the ICNIRP /
   IEC 62471 limits), never a single run.
5. **Skin contact** (``[safety].skin_contact = true``; :func:`~actsim.checks.safety.skin_check`): the
   peak modelled temperature of the contacting face against the skin-contact limit; if the scenario
   has no temperature model, a "not assessed" entry (never a pass).

A check that cannot be made is reported as :class:`NotAssessed`, never left out silently. Verdicts
say "within the modelled limit of <source>", never "safe"; print them with
:data:`actsim.cautions.CAUTION`.

References
----------
.. [1] N. E. Dowling, *Mechanical Behavior of Materials*, 4th ed., Pearson, 2013
   (ch. 7 yielding, ch. 9 stress-based fatigue).
.. [2] S. P. Timoshenko and J. M. Gere, *Mechanics of Materials*, Van Nostrand
   Reinhold, 1972 (cantilever formulas).
"""

from __future__ import annotations

import csv
import dataclasses
import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from .. import io
from ..errors import ActsimInputError
from .actuation import actuation_state, elastica_check
from .context import CheckContext, CheckOutput, layer_index
from .joint_checks import joint_check, joint_loaded_stress, size_joint
from .mechanical import fatigue_check, stress_history, yield_check
from .safety import light_check, skin_check
from .settings import CheckSettings, SafetySettings
from .verdict import NotAssessed, format_margin, format_quantity

__all__ = ["NotAssessed", "RegisteredCheck", "REGISTRY", "build_context", "dispatch", "run_checks", "format_results",
           "write_checks", "any_failed", "tightest", "verdict_line", "VERDICT_WORDS", "CHECKS_JSON",
           "CHECKS_CSV"]

CHECKS_JSON = "checks.json"
CHECKS_CSV = "checks.csv"


@dataclass(frozen=True)
class RegisteredCheck:
    """One kind of design check in :data:`REGISTRY`.

    Attributes
    ----------
    name : str
        What is checked.
    run : callable
        ``run(context) -> CheckOutput``; a per-layer check reads the layer from ``context.layer``.
    per_layer : bool
        Run once per layer, bottom to top (else once per scenario).
    section : str or None
        The scenario section whose presence enables the check (``"joint"``); None: always run (the
        check itself reports when there is nothing to assess, e.g. no light in the protocol, or
        "not assessed" when a limit is missing).
    details_key : str or None
        Where the check's details go in the details dict (per layer: under the layer's name there);
        None when it contributes none.
    """

    name: str
    run: Callable[[CheckContext], CheckOutput]
    per_layer: bool = False
    section: str | None = None
    details_key: str | None = None


#: The design checks in the order of their rows: the per-layer checks layer by layer (each layer's rows
#: together), then the scenario-wide ones.
REGISTRY: tuple[RegisteredCheck, ...] = (
    RegisteredCheck("yield strength", yield_check, per_layer=True),
    RegisteredCheck("fatigue", fatigue_check, per_layer=True, details_key="fatigue"),
    RegisteredCheck("large-deflection blocked force and load line", elastica_check),
    RegisteredCheck("joint moment and stack", joint_check, section="joint"),
    RegisteredCheck("light at the exposure position", light_check, details_key="light"),
    RegisteredCheck("skin contact", skin_check, details_key="skin"),
)


def build_context(scenario, ds, *, elastica: bool = True, elastica_budget=None, progress: bool = False) -> CheckContext:
    """Parse the scenario's check sections and compute the states the checks share, once.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
    ds : xarray.Dataset
        Result of :func:`actsim.simulate` for that scenario.
    elastica : bool, optional
        Compute the large-deflection blocked force at every output time and the load line.
    elastica_budget : actsim.elastica.SolveBudget, optional
        Time and solve-count limit of the large-deflection solves (default 20 s); what it does not
        reach is reported "not assessed".
    progress : bool, optional
        Show a progress line on stderr when the large-deflection solves take more than 2 s.

    Returns
    -------
    CheckContext
        With the actuation state, the joint's sizing (with ``[joint]``) and the stress history.

    Raises
    ------
    ActsimInputError
        A bad section field, a result of another scenario, a tip force the elastica does not solve.
    """
    from .settings import checks_settings, joint_settings, safety_settings

    cs = checks_settings(scenario) or CheckSettings()
    ss = safety_settings(scenario) or SafetySettings()
    js = joint_settings(scenario)
    li = layer_index(scenario)
    if li.size != ds.sizes["z"]:
        raise ActsimInputError(f"run_checks: the result has {ds.sizes['z']} cells but the scenario {li.size}; pass the matching pair")
    act = actuation_state(scenario, ds, cs, elastica=elastica, budget=elastica_budget, progress=progress)
    sigma = ds["stress"].values
    stress_how = "free strip as simulated"
    joint = None
    if js is not None:
        joint = size_joint(scenario, ds, js, cs, act)
        if joint.details.get("strips") is not None:
            loaded, how = joint_loaded_stress(scenario, ds, js, joint.details, act)
            if loaded is not None:
                sigma = loaded
                stress_how = how
    stress = stress_history(scenario, ds, li, stress=sigma, how=stress_how, tip=act.get("tip_load"),
                            tip_not_solved=act.get("tip_load_not_solved", ""))
    return CheckContext(scenario=scenario, ds=ds, checks=cs, safety=ss, joint_settings=js, elastica=elastica,
                        layers=li, actuation=act, joint=joint, stress=stress)


def dispatch(ctx: CheckContext, registry=REGISTRY):
    """Run the registered checks whose section is present, in order, and collect their rows and details.

    Parameters
    ----------
    ctx : CheckContext
        Of :func:`build_context`.
    registry : sequence of RegisteredCheck, optional
        The checks (default :data:`REGISTRY`).

    Returns
    -------
    results : list of CheckResult and NotAssessed
        The per-layer checks' rows layer by layer, then the scenario-wide checks' rows.
    details : dict
        ``title``, ``required_safety_factor``, the shared states (``actuation``, ``joint``,
        ``stress``), then each check's details under its ``details_key``.
    """
    details = {"title": ctx.scenario.title, "required_safety_factor": ctx.checks.required_safety_factor,
               "actuation": ctx.actuation}
    if ctx.joint is not None:
        details["joint"] = ctx.joint.details
    details["stress"] = ctx.stress.details
    active = [c for c in registry if c.section is None or ctx.has_section(c.section)]
    results: list = []
    for c in active:
        if c.per_layer and c.details_key is not None:
            details[c.details_key] = {}
    for k, layer in enumerate(ctx.scenario.layers):
        layer_ctx = ctx.for_layer(k)
        for c in active:
            if c.per_layer:
                out = c.run(layer_ctx)
                results.extend(out.results)
                if c.details_key is not None and out.details is not None:
                    details[c.details_key][layer.name] = out.details
    for c in active:
        if not c.per_layer:
            out = c.run(ctx)
            results.extend(out.results)
            if c.details_key is not None and out.details is not None:
                details[c.details_key] = out.details
    return results, details


def run_checks(scenario, ds, *, elastica: bool = True, elastica_budget=None, progress: bool = False):
    """All design checks of a scenario on its simulated result.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        With optional ``[checks]``, ``[safety]`` and ``[joint]`` sections.
    ds : xarray.Dataset
        Result of :func:`actsim.simulate` for that scenario.
    elastica : bool, optional
        Compute the large-deflection blocked force at every output time and the
        load line (default True).
    elastica_budget : actsim.elastica.SolveBudget, optional
        Time and solve-count limit of those solves (default 20 s). A bend past a full turn, a solve
        that does not converge or a budget used up gives a "not assessed" row, never an error.
    progress : bool, optional
        Show a progress line on stderr when the large-deflection solves take more than 2 s.

    Returns
    -------
    results : list of CheckResult and NotAssessed
        In the order of :data:`REGISTRY`: per layer its yield and fatigue rows, then the joint,
        light and skin rows.
    details : dict
        ``stress`` (per layer: peak equivalent stress per output time [Pa],
        critical cell), ``fatigue`` (per layer: counted cycles, life in
        actuation cycles per method, governing method), ``actuation``
        (elastica blocked force per output time [N], load line and work [J]),
        ``joint`` (angles [rad], moments [N m], strips), ``light`` and ``skin``.

    Notes
    -----
    Safety factor per layer (von Mises, plane strain :math:`\\sigma_y = \\nu\\sigma_x`
    for plates, :math:`- E\\alpha(T - T_\\mathrm{ref})` added with heat, :math:`E`
    the Young's modulus):

    .. math::

        S_k = \\sigma_{y,k} / \\max_{t, z\\in k} \\sigma_\\mathrm{vM}(t, z)

    Fatigue: :math:`D = (N_\\text{target}/n_\\text{per run}) \\sum_i n_i/N_i \\le D_\\text{limit}`.
    Joint (hinge): :math:`n\\,EI(\\kappa_0 - \\varphi/l_h) \\ge S\\,M_\\text{req}(\\varphi)`
    with :math:`M_\\text{req} = g\\sum m_i r_i\\cos(\\varphi + \\alpha_i)`.

    References
    ----------
    .. [1] N. E. Dowling, *Mechanical Behavior of Materials*, 4th ed., Pearson, 2013.
    .. [2] S. P. Timoshenko and J. M. Gere, *Mechanics of Materials*, Van Nostrand Reinhold, 1972.
    .. [3] IEC 62471:2006, *Photobiological safety of lamps and lamp systems*.
    """
    return dispatch(build_context(scenario, ds, elastica=elastica, elastica_budget=elastica_budget, progress=progress))


# ---------------------------------------------------------------------------
# output


def any_failed(results) -> bool:
    """True when any assessed check failed."""
    return any(r.passed is False for r in results)


def _record(r) -> dict:
    if isinstance(r, NotAssessed):
        return {"check": r.check, "value": None, "limit": None, "unit": "", "margin": None, "margin_kind": "",
                "passed": None, "status": "not assessed", "verdict": r.verdict, "source": r.source,
                "validity": r.validity, "note": r.reason}
    d = dataclasses.asdict(r)
    d["status"] = "pass" if r.passed else "fail"
    d["verdict"] = r.verdict
    return d


def _jsonable(x):
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items() if not str(k).startswith("_")}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, np.ndarray):
        return _jsonable(x.tolist())
    if isinstance(x, (np.floating, float)):
        v = float(x)
        if math.isnan(v):
            return None
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return v
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (np.bool_,)):
        return bool(x)
    return x


#: Check-name prefix that heads a group of rows on the screen (the rest of the name is the row's text).
_GROUP_PREFIXES = ("light at the exposure position: ",)
_LAYER = re.compile(r", (layer \d+ \([^)]*\))")
#: Short verdict words of the screen's table (the files and the report keep the full wording).
#: Note clauses the screen leaves out because the row's own text says it (the files keep them).
_SCREEN_SKIP = ("mean-stress correction with Basquin life and Palmgren-Miner sum",)
VERDICT_WORDS = {"pass": "within limit", "fail": "EXCEEDS limit", "short": "short of margin", "na": "not assessed"}


def _group_of(check: str) -> tuple[str, str]:
    """(heading, row text) of a check name: its layer, the light at the exposure position, the joint ..."""
    for prefix in _GROUP_PREFIXES:
        if check.startswith(prefix):
            return prefix.rstrip(": "), check[len(prefix):]
    m = _LAYER.search(check)
    if m:
        return m.group(1), (check[: m.start()] + check[m.end():]).strip()
    for word, heading in (("joint", "joint"), ("skin", "skin contact"), ("large-deflection", "actuation")):
        if check.startswith(word):
            return heading, check
    return "other checks", check


def _clauses(text: str) -> list[str]:
    """A note split at "; " outside brackets."""
    out, depth, cur = [], 0, []
    i = 0
    while i < len(text):
        ch = text[i]
        if ch in "([":
            depth += 1
        elif ch in ")]" and depth > 0:
            depth -= 1
        if depth == 0 and text.startswith("; ", i):
            out.append("".join(cur).strip())
            cur = []
            i += 2
            continue
        cur.append(ch)
        i += 1
    out.append("".join(cur).strip())
    return [c for c in out if c]


def _status(r) -> str:
    if isinstance(r, NotAssessed) or r.passed is None:
        return "na"
    if r.passed:
        return "pass"
    return "fail" if r.exceeds_limit else "short"


def tightest(results):
    """The assessed result with the smallest margin relative to what it must reach, and its row number (1-based).

    Ratios are compared as they are; a difference margin (a temperature) as ``margin / limit``.
    Returns (None, None) when nothing was assessed.
    """
    best, row, key = None, None, math.inf
    for i, r in enumerate(results, start=1):
        if isinstance(r, NotAssessed) or r.passed is None:
            continue
        k = r.margin if r.margin_kind == "ratio" else (1.0 + r.margin / abs(r.limit) if r.limit else r.margin)
        if k < key:
            best, row, key = r, i, k
    return best, row


def verdict_line(results, *, strict: bool = False) -> str:
    """The answer of a check run in one line: the verdict, the exit status, the tightest margin and its row."""
    failed = any_failed(results)
    na = any(r.passed is None for r in results)
    if failed:
        text = "verdict: at least one check exceeds its modelled limit or misses its required margin (exit status 1)"
    elif strict and na:
        text = "verdict: at least one check was not assessed and --strict was given (exit status 1)"
    else:
        text = "verdict: every assessed check is within its modelled limit (exit status 0)"
    r, i = tightest(results)
    if r is not None:
        _, what = _group_of(r.check)
        text += f"; tightest margin {format_margin(r)} in row {i} ({what.split(' vs ')[0]})"
    return text


def format_results(results, *, width: int | None = None) -> str:
    """The check table that fits the screen, its notes once, and the count (no caution: the command prints it).

    One row per check: number, quantity vs criterion, value, limit, margin, verdict; rows under a
    heading per layer or concern. The sources of the limits and the notes follow once each, with the
    rows they belong to; the full text of every row is in ``checks.json`` / ``checks.csv``.

    Parameters
    ----------
    results : list of CheckResult and NotAssessed
    width : int, optional
        Widest line [characters] (default: :func:`actsim.screens.screen_width`).

    Returns
    -------
    str
    """
    from ..screens import row_ranges, screen_width, table, wrap

    width = width or screen_width()
    header = ("#", "check: quantity vs criterion", "value", "limit", "margin", "verdict")
    rows, groups = [], []
    sources: dict[str, list[int]] = {}
    clauses: dict[str, list[int]] = {}
    for i, r in enumerate(results, start=1):
        group, text = _group_of(r.check)
        groups.append(group)
        st = _status(r)
        if isinstance(r, NotAssessed):
            rows.append((str(i), text, "-", "-", "-", VERDICT_WORDS[st]))
            note = f"not assessed: {r.reason}"
        else:
            rows.append((str(i), text, format_quantity(r.value, r.unit), format_quantity(r.limit, r.unit),
                         format_margin(r), VERDICT_WORDS[st]))
            note = r.note
        if r.source:
            sources.setdefault(r.source, []).append(i)
        for c in _clauses(note or ""):
            if c.startswith(("within the modelled limit of", "exceeds the modelled limit of")) and ":" not in c:
                continue  # the verdict column and the sources say it
            clauses.setdefault(c, []).append(i)
    out = table(header, rows, width=width, flex=1, align="rlrrrl", groups=groups)
    if sources:
        out += ["", "limits from:"]
        for s, ns in sources.items():
            out += wrap(f"[{row_ranges(ns)}] {s}", width, indent="  ")
    # notes once: clauses shared by several rows, and every clause of a row that does not pass; the
    # notes of a single passing row (its time and cell of the peak ...) are left to the files
    passing = {i for i, r in enumerate(results, start=1) if r.passed is True}
    by_rows: dict[tuple, list[str]] = {}
    for c, ns in clauses.items():
        if (len(ns) > 1 or not passing.issuperset(ns)) and not c.endswith(_SCREEN_SKIP):
            by_rows.setdefault(tuple(ns), []).append(c)
    left = any(len(ns) == 1 and ns[0] in passing for ns in clauses.values())
    if by_rows or left:
        out += ["", "notes:"]
        for ns, cs in by_rows.items():
            out += wrap(f"[{row_ranges(ns)}] " + "; ".join(cs), width, indent="  ")
        if left:
            out += wrap(f"notes of single rows that pass: {CHECKS_CSV} (column note)", width, indent="  ")
    n_fail = sum(r.passed is False for r in results)
    n_na = sum(isinstance(r, NotAssessed) for r in results)
    n_pass = sum(r.passed is True for r in results)
    out += [""] + wrap(f"{n_pass} within the modelled limit, {n_fail} not, {n_na} not assessed (full text of "
                       f"every row, validity and details in {CHECKS_JSON} and {CHECKS_CSV})", width)
    return "\n".join(out)


def write_checks(results, details, out_dir) -> list[str]:
    """Write ``checks.json`` (records + details) and ``checks.csv`` atomically into ``out_dir``.

    Returns
    -------
    list of str
        The file names written.
    """
    from ..cautions import CAUTION

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    records = [_record(r) for r in results]
    io.write_json(out / CHECKS_JSON, _jsonable({"title": details.get("title", ""), "units": "SI (Pa, N, N m, J, K, s, rad)",
                                                "any_failed": any_failed(results), "caution": CAUTION,
                                                "checks": records, "details": details}))
    cols = ["check", "status", "value", "limit", "unit", "margin", "margin_kind", "verdict", "source", "validity", "note"]
    with io.atomic_path(out / CHECKS_CSV) as tmp:
        with open(tmp, "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(cols)
            for rec in records:
                w.writerow(["" if rec[c] is None else (f"{rec[c]:.10g}" if isinstance(rec[c], float) else rec[c]) for c in cols])
    return [CHECKS_JSON, CHECKS_CSV]

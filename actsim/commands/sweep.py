"""``actsim sweep SCENARIO --vary FIELD=VALUES ...``: design sweeps, trade-offs and inverse design."""

from __future__ import annotations

import argparse
import contextlib
import json
import math
from pathlib import Path

from ..errors import ActsimInputError

EPILOG = """\
VALUES is a list (10 mW/cm^2,50 mW/cm^2), a linear range lin(5 um, 200 um, 40) or a
log range log(1 mW/cm^2, 100 mW/cm^2, 9). Fields are dotted paths into the scenario,
list entries by index or name. --link FIELD=VALUES ties a field to the --vary before it,
value by value (same number of values). Results: OUT/sweep.nc, OUT/metrics.csv,
OUT/chunks/ (one file per chunk), OUT/figures/, OUT/manifest.json. While it runs the chunks
are kept in .OUT.sweep-work/ beside OUT: after an interruption re-run the same command to resume.

example:
  actsim sweep scenarios/thickness_study.toml --vary "layers[active film].thickness=lin(5 um, 200 um, 40)" \\
      --target-angle "30 deg" --pareto --recommend "layers[active film].thickness" --within "20 s" --series
  actsim sweep scenarios/led_choice.toml --vary "sources[led].wavelength=365 nm,405 nm,450 nm" \\
      --link "protocol[0].light.led=41 mW/cm^2,55 mW/cm^2,62 mW/cm^2" --target-angle "20 deg"
  actsim sweep scenarios/vent_flap.toml --vary "protocol[0].light.uv_lamp=log(1 mW/cm^2, 100 mW/cm^2)" \\
      --vary "materials.contracting_film.photo_strain=-0.02,-0.01" --sample lhs --samples 200
  actsim sweep scenarios/vent_flap.toml --vary "protocol[0].light.uv_lamp=10 mW/cm^2,50 mW/cm^2" --scheduler tcp://10.0.0.5:8786
  actsim sweep scenarios/led_choice.toml --optimise power --free "protocol[0].light.led=1 mW/cm^2..300 mW/cm^2" \\
      --target-angle "20 deg" --within "30 s" --max-temperature "45 degC"
"""


class _AxisAction(argparse.Action):
    """Keep --vary and --link in command-line order in one list."""

    def __call__(self, parser, namespace, values, option_string=None):
        items = list(getattr(namespace, "axes", None) or [])
        items.append((option_string.lstrip("-"), values))
        setattr(namespace, "axes", items)


def build_vary(items) -> dict:
    """The ``vary`` dict of :func:`actsim.study.sweep.sweep` from (--vary|--link, text) pairs."""
    from ..study.values import parse_vary_option

    vary: dict = {}
    last = None
    for kind, text in items:
        path, values = parse_vary_option(text)
        if kind == "vary":
            vary[path] = values
            last = path
        else:
            if last is None:
                raise ActsimInputError(f"--link: '{text}' must follow the --vary it is linked to")
            old_key = last
            old = vary.pop(old_key)
            key = (old_key if isinstance(old_key, tuple) else (old_key,)) + (path,)
            vals = (old if isinstance(old_key, tuple) else (old,)) + (values,)
            vary[key] = vals
            last = key
    if not vary:
        raise ActsimInputError("--vary: give at least one FIELD=VALUES (or --optimise with --free)")
    return vary


def _quantity(text, option, kind):
    from ..units import parse_quantity

    return None if text is None else parse_quantity(text, field=option, kind=kind)


#: Longest --timeout accepted [s] (a day).
MAX_TIMEOUT = 86_400.0
#: Most generations of --optimise's differential evolution.
MAX_ITERATIONS = 10_000


def _positive_quantity(text, option, kind):
    """A finite quantity > 0 from an option (None when not given); one-line error otherwise."""
    value = _quantity(text, option, kind)
    if value is not None and not (math.isfinite(value) and value > 0):
        from ..units import SI_UNITS

        raise ActsimInputError(f"{option}: {text!r} is outside the allowed range (> 0 {SI_UNITS[kind][0]}, finite)")
    return value


def _finite_quantity(text, option, kind):
    value = _quantity(text, option, kind)
    if value is not None and not math.isfinite(value):
        raise ActsimInputError(f"{option}: {text!r} is not a finite value")
    return value


def _whole(value, option, lo, hi=None):
    if value is not None and not (lo <= value and (hi is None or value <= hi)):
        allowed = f">= {lo}" + (f" and <= {hi}" if hi is not None else "")
        raise ActsimInputError(f"{option}: {value} is outside the allowed range ({allowed})")


def check_arguments(args) -> dict:
    """Check every option of ``actsim sweep`` that needs no scenario, before anything is read, run or written.

    Returns
    -------
    dict
        The options read into SI: ``target`` [rad], ``within`` [s], ``min_force`` [N],
        ``max_temperature`` [K] (None when not given).

    Raises
    ------
    ActsimInputError
        One line naming the option, the value and the allowed range.
    """
    from ..study.values import MAX_SWEEP_DESIGNS

    t = args.timeout
    if t is not None and not (math.isfinite(t) and 0 < t <= MAX_TIMEOUT):
        raise ActsimInputError(f"--timeout: {t:g} s is outside the allowed range (> 0 and <= {MAX_TIMEOUT:g} s)")
    _whole(args.samples, "--samples", 1, MAX_SWEEP_DESIGNS)
    _whole(args.seed, "--seed", 0, 2**63 - 1)
    _whole(args.chunk_size, "--chunk-size", 1, MAX_SWEEP_DESIGNS)
    _whole(args.threads, "--threads", 1, 4096)
    _whole(args.maxiter, "--maxiter", 1, MAX_ITERATIONS)
    out = {
        "target": _finite_quantity(args.target_angle, "--target-angle", "angle"),
        "within": _positive_quantity(args.within, "--within", "time"),
        "min_force": _finite_quantity(args.min_force, "--min-force", "force"),
        "max_temperature": _positive_quantity(args.max_temperature, "--max-temperature", "temperature"),
    }
    if not args.optimise:
        if args.recommend and out["within"] is None:
            raise ActsimInputError("--recommend: give the time limit with --within, e.g. --within \"20 s\"")
        if args.recommend and args.sample:
            raise ActsimInputError("--recommend: needs a grid sweep (not --sample)")
    return out


def _resolve_dim(ds, name, option):
    from ..study.values import dim_name

    for cand in (name, dim_name(name)):
        if cand in ds.dims:
            return cand
    import difflib

    dims = [str(d) for d in ds.dims if d != "time"]
    hint = difflib.get_close_matches(dim_name(name), dims, n=1)
    raise ActsimInputError(f"{option}: '{name}' is not a swept field" + (f"; did you mean '{hint[0]}'?" if hint else
                           f"; swept: {', '.join(dims)}"))


def _metrics_csv(ds, path):
    from ..io import atomic_path

    cols = [n for n, v in ds.data_vars.items() if "time" not in v.dims]
    df = ds[cols].to_dataframe().reset_index()
    df = df.rename(columns={c: f"{c} [{ds[c].attrs.get('units', '')}]" for c in df.columns if c in ds.variables})
    with atomic_path(path) as tmp:
        df.to_csv(tmp, index=False, float_format="%.10g")


#: Rows of the Pareto front printed; the rest are counted and left to pareto.json.
PARETO_ROWS_SHOWN = 12
#: Metrics that exist only when the sweep has a target bend angle.
TARGET_METRICS = ("time_to_target", "reached_target", "blocked_force_at_target")


def _check_heatmap(metric, *, n_dims, sampling, has_target):
    """One-line error unless a heat map of ``metric`` can be drawn for this sweep."""
    from ..study.store import METRIC_INFO

    if metric not in METRIC_INFO:
        import difflib

        hint = difflib.get_close_matches(metric, list(METRIC_INFO), n=1)
        raise ActsimInputError(f"--heatmap: '{metric}' is not a sweep metric" + (f" (did you mean '{hint[0]}'?)" if hint else "")
                               + f"; valid: {', '.join(METRIC_INFO)}")
    if metric in TARGET_METRICS and not has_target:
        raise ActsimInputError(f"--heatmap: '{metric}' needs a target bend angle (--target-angle or [report] "
                               "target_bend_angle)")
    if sampling != "grid":
        raise ActsimInputError(f"--heatmap: needs a grid sweep over two or more fields, not --sample {sampling}")
    if n_dims < 2:
        raise ActsimInputError(f"--heatmap: needs two or more swept fields (--vary twice); this sweep varies {n_dims}")


def cmd_sweep(args) -> int:
    from ..folders import remove_part_files, result_folder, work_folder

    checked = check_arguments(args)  # before the scenario is read and anything runs or is written (the lock too)
    from ..study.execute import check_scheduler, tls_security

    checked["security"] = tls_security(ca=args.tls_ca, cert=args.tls_cert, key=args.tls_key)
    check_scheduler(args.scheduler, checked["security"])  # a bad address or certificate writes nothing
    final = Path(args.output or Path("actsim-out") / f"{Path(args.scenario).stem}-sweep")
    # the resumable chunk store lives beside the folder (it survives a kill; the same command finds it again);
    # its chunks join the staging folder as chunks/ and it goes when the finished folder is swapped in
    work = work_folder(final, "sweep")
    with result_folder(final, kind="sweep", overwrite=args.overwrite, parts=["inverse"] * bool(args.optimise),
                       then_remove=[] if args.optimise else [work]) as out:
        remove_part_files(work)  # left by a killed run (this one holds the lock now)
        try:
            return _sweep_into(args, out, final, work, checked)
        except BaseException:
            if work.is_dir() and not any(work.glob("chunk_*.nc")):
                import shutil

                shutil.rmtree(work, ignore_errors=True)  # nothing to resume: leave nothing behind
            raise


def _sweep_into(args, out, final, work, checked) -> int:
    """``actsim sweep`` writing into the staging folder ``out`` of the result folder ``final``."""
    from ..cautions import with_caution
    from ..scenario import load_scenario

    sc = load_scenario(args.scenario)
    target, within = checked["target"], checked["within"]
    if args.optimise:
        return _cmd_optimise(args, sc, out, target, within, final=final)
    if args.free:
        raise ActsimInputError("--free: only used with --optimise power|force")
    from ..io import write_json, write_netcdf
    from ..study import tradeoff
    from ..study.sweep import sweep

    vary = build_vary(args.axes or [])
    sampling = args.sample or "grid"
    if args.samples is not None and sampling == "grid":
        raise ActsimInputError("--samples: only used with --sample lhs|sobol")
    if args.pareto and target is None and sc.target_bend_angle is None:
        raise ActsimInputError("--pareto: needs a target bend angle (--target-angle or [report] target_bend_angle)")
    if args.recommend:
        from ..study.values import dim_name

        swept = [p for p in vary for p in (p if isinstance(p, tuple) else (p,))]
        if args.recommend not in swept and dim_name(args.recommend) not in {dim_name(p) for p in swept}:
            raise ActsimInputError(f"--recommend: '{args.recommend}' is not a swept field; swept: {', '.join(swept)}")
    if args.heatmap is not None:  # check before running: a heat map asked for is drawn or refused, never skipped
        _check_heatmap(args.heatmap, n_dims=len(vary), sampling=sampling,
                       has_target=target is not None or sc.target_bend_angle is not None)
    from ..jitcache import compile_notice, notify_if_compiling
    from ..study.batch import batch_kernel

    # dask worker processes (--scheduler) compile the kernel where no listener of this process hears it:
    # look at its cache instead
    shown = args.scheduler is not None and notify_if_compiling([batch_kernel])
    with contextlib.nullcontext() if shown else compile_notice():
        ds = sweep(sc, vary, sampling=sampling, n_samples=args.samples, seed=args.seed, target_bend_angle=target,
                   keep_series=args.series, chunk_size=args.chunk_size, store=work,
                   scheduler=args.scheduler, progress=not args.no_progress, yes=args.yes,
                   connect_timeout=args.timeout, threads=args.threads, security=checked["security"])
    from ..folders import link_files

    link_files(work, out / "chunks")
    write_netcdf(ds, out / "sweep.nc")
    _metrics_csv(ds, out / "metrics.csv")
    files = ["sweep.nc", "metrics.csv", "chunks/"]
    figs = out / "figures"
    figures = []  # records of the figures drawn (file, title, caption), kept in summary.json
    dims = [d for d in ds["status"].dims if d != "design"]
    has_target = "time_to_target" in ds
    from ..screens import display_quantity, screen_width, wrap
    from ..study.ranking import design_table, field_words

    width = screen_width()
    head = f"{sc.title}: {ds.attrs['n_designs']} designs ({sampling})"
    head += f", {ds.attrs['n_invalid']} invalid" if ds.attrs["n_invalid"] else ""
    head += f", {ds.attrs['n_failed']} failed" if ds.attrs["n_failed"] else ""
    if has_target:
        n_reach = int(ds["reached_target"].sum())
        head += f"; {n_reach} reach {math.degrees(target if target is not None else ds.attrs['target_bend_angle']):.4g} deg"
    screen = wrap(head, width)
    metric = args.heatmap or ("time_to_target" if has_target else "peak_bend_angle")
    notes = []
    if len(dims) >= 2 and sampling == "grid":
        figures.append(tradeoff.heatmap(ds, metric, dims[0], dims[1], figs / f"heatmap_{metric}.png"))
        files.append(f"figures/heatmap_{metric}.png")
        if len(dims) > 2:
            notes.append(f"heat map of {metric} over {dims[0]} and {dims[1]}; "
                         f"{', '.join(map(str, dims[2:]))} at their first value")
    force = tradeoff.FORCE_METRICS[args.force]
    flabel = tradeoff.force_label(force)
    if args.pareto:
        if not has_target:
            raise ActsimInputError("--pareto: needs a target bend angle (--target-angle or [report] target_bend_angle)")
        pf = tradeoff.pareto_front(ds, force=force)
        rec_dim = (_resolve_dim(ds, args.recommend, "--recommend")
                   if args.recommend and within is not None and sampling == "grid" else None)
        figures.append(tradeoff.pareto_plot(ds, figs / "pareto.png", force=force,
                                            within=within if args.recommend else None, recommend_dim=rec_dim))
        write_json(out / "pareto.json", {k: v for k, v in pf.items() if k != "mask"})
        files += ["pareto.json", "figures/pareto.png"]
        notes.append(f"Pareto front (time to target vs {flabel}): {pf['n_on_front']} designs (P in the table, all "
                     f"in pareto.json); {pf['n_not_reaching']} never reach the target")
    recommended = []
    if args.recommend:
        if within is None:
            raise ActsimInputError("--recommend: give the time limit with --within, e.g. --within \"20 s\"")
        if sampling != "grid":
            raise ActsimInputError("--recommend: needs a grid sweep (not --sample)")
        dim = _resolve_dim(ds, args.recommend, "--recommend")
        rows = tradeoff.recommend(ds, dim, within=within, maximise=force)
        write_json(out / "recommendation.json", {"field": ds[dim].attrs.get("field", dim), "within": within,
                                                 "units": ds[dim].attrs.get("units", ""), "maximised": force,
                                                 "maximised_label": flabel, "rows": rows})
        files.append("recommendation.json")
        unit = ds[dim].attrs.get("units", "")
        path = ds[dim].attrs.get("field", dim)
        dim_of = {ds[d].attrs.get("field", d): d for d in ds["status"].dims}
        for row in rows:
            others = ", ".join(f"{field_words(k)} {display_quantity(v, tradeoff.field_units(ds).get(k, ''), field=k)}"
                               for k, v in row.items() if k in dim_of and k != path)
            where = f" at {others}" if others else ""
            if row["recommended"] is None:
                notes.append(f"recommendation{where}: no {field_words(path)} reaches the target within {within:g} s")
                continue
            sel = {dim_of[k]: v for k, v in row.items() if k in dim_of and k != path}
            sel[dim] = row["recommended"]
            recommended.append(int(ds["design"].sel(sel).values))
            notes.append(f"recommendation{where}: {field_words(path)} "
                         f"{display_quantity(row['recommended'], unit, field=path)} (target in "
                         f"{row['time_to_target']:.3g} s, {flabel} {display_quantity(row[force], 'N')})")
    table_lines, _ = design_table(ds, force=force, within=within if args.recommend else None,
                                  recommended=recommended, width=width)
    screen += table_lines
    if args.series and dims:
        figures.append(tradeoff.bend_family(ds, figs / "bend_family.png", along=dims[0]))
        files.append("figures/bend_family.png")
    if "peak_temperature" in ds and not int(ds.attrs.get("heat_modelled", 0)) and \
            not math.isnan(float(ds["peak_temperature"].max(skipna=True).fillna(math.nan))):
        notes.append(f"peak temperature over the sweep: {float(ds['peak_temperature'].max()) - 273.15:.4g} degC")
    if notes:
        screen.append("")
        for n in notes:
            screen += wrap(n, width, indent="  ")
    write_json(out / "summary.json", {"kind": "sweep", "title": sc.title, "files": files + ["summary.json"],
                                      "figures": figures})
    files.append("summary.json")
    screen.append("")
    screen += wrap(f"sweep written to {final}/ ({', '.join(files)})", width)
    print(with_caution("\n".join(screen), width))
    return 0


def _cmd_optimise(args, sc, out, target, within, final=None):
    from ..cautions import with_caution
    from ..io import write_json
    from ..study.inverse import format_inverse, inverse_design

    if args.axes:
        raise ActsimInputError("--vary: not used with --optimise (give the free fields with --free FIELD=LOW..HIGH)")
    if not args.free:
        raise ActsimInputError("--optimise: give the free fields with --free FIELD=LOW..HIGH")
    free = {}
    for text in args.free:
        if "=" not in text:
            raise ActsimInputError(f"--free: '{text}' must be FIELD=LOW..HIGH")
        path, b = text.split("=", 1)
        free[path.strip()] = b.strip()
    res = inverse_design(sc, free, objective=args.optimise, target_bend_angle=target, within=within,
                         min_force=_finite_quantity(args.min_force, "--min-force", "force"),
                         max_temperature=_positive_quantity(args.max_temperature, "--max-temperature", "temperature"),
                         seed=args.seed, maxiter=args.maxiter)
    write_json(out / "inverse.json", json.loads(json.dumps(res, default=str).replace("NaN", "null")))
    from ..screens import fit_text, screen_width

    width = screen_width()
    print(with_caution(fit_text(f"{sc.title}\n{format_inverse(res)}\n\ninverse design written to "
                                f"{final or out}/inverse.json", width), width))
    if not res["feasible"]:
        print("actsim sweep: no feasible design between the bounds (exit status 1); widen the bounds or relax "
              "the targets")
        return 1
    return 0


#: Names accepted by ``--force``: the keys of :data:`actsim.study.tradeoff.FORCE_METRICS`, written out
#: here so that building the parser imports no study module (xarray, matplotlib); a test keeps the two equal.
FORCE_CHOICES = ("at-target", "peak")


def register(subparsers) -> None:
    """Add the ``sweep`` verb to the ``actsim`` command line."""
    p = subparsers.add_parser(
        "sweep",
        help="sweep scenario fields (grid or sampled), trade-offs, recommendations, inverse design",
        description="Run many variants of a scenario and compare their bend angle, speed, force and heating.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("scenario", metavar="SCENARIO", help="base scenario TOML file")
    p.add_argument("--vary", action=_AxisAction, metavar="FIELD=VALUES", dest="axes",
                   help="a field and its values: list, lin(a, b, n) or log(a, b, n), with units (repeat for more dimensions)")
    p.add_argument("--link", action=_AxisAction, metavar="FIELD=VALUES", dest="axes",
                   help="a field changed together with the --vary before it, value by value")
    p.add_argument("--sample", choices=("lhs", "sobol"), help="sample the ranges (Latin hypercube or Sobol) instead of a grid")
    p.add_argument("--samples", type=int, metavar="N", help="number of sampled designs")
    p.add_argument("--seed", type=int, default=0, help="seed of the sampler / optimiser (default 0)")
    p.add_argument("--target-angle", metavar="ANGLE", help="target bend angle, e.g. \"30 deg\" (default: the scenario's)")
    p.add_argument("--series", action="store_true", help="keep the bend, force and temperature time series of every design")
    p.add_argument("-o", "--output", metavar="OUT", help="output folder (default: actsim-out/<scenario>-sweep)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="where the designs run: a dask scheduler address tcp://host:port (or tls://host:port with "
                        "--tls-ca/--tls-cert), or 'local' (dask worker processes on this machine); default: this "
                        "process, in parallel over designs. Workers run code as you: trusted machines only")
    p.add_argument("--threads", type=int, metavar="N",
                   help="cores used in this process (default: all; or the NUMBA_NUM_THREADS environment variable)")
    p.add_argument("--timeout", type=float, default=10.0, metavar="SECONDS",
                   help="seconds to wait for the scheduler to answer and for a worker to be alive (default 10)")
    p.add_argument("--tls-ca", metavar="FILE", help="tls:// scheduler: certificate authority (PEM)")
    p.add_argument("--tls-cert", metavar="FILE", help="tls:// scheduler: this client's certificate (PEM)")
    p.add_argument("--tls-key", metavar="FILE", help="tls:// scheduler: this client's private key (PEM), if not in --tls-cert")
    p.add_argument("--chunk-size", type=int, metavar="N", help="designs per chunk (default from a memory budget)")
    p.add_argument("--yes", action="store_true", help="run a grid larger than 20000 designs")
    p.add_argument("--pareto", action="store_true",
                   help="Pareto front of time to target against blocked force (see --force)")
    p.add_argument("--recommend", metavar="FIELD",
                   help="best value of FIELD: reaches the target within --within with the largest force (see --force)")
    p.add_argument("--force", choices=FORCE_CHOICES, default="at-target",
                   help="force of --pareto and --recommend: 'at-target' (default), the blocked force when the target "
                        "angle is reached; 'peak', the largest blocked force over the whole protocol")
    p.add_argument("--within", metavar="TIME", help="time limit for --recommend and --optimise, e.g. \"20 s\"")
    p.add_argument("--heatmap", metavar="METRIC", help="metric of the heat map over the first two swept fields")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    from ..cli import add_overwrite_option

    add_overwrite_option(p)
    g = p.add_argument_group("inverse design (--optimise)")
    g.add_argument("--optimise", choices=("power", "force"), help="least optical power, or largest blocked force, meeting the targets")
    g.add_argument("--free", action="append", metavar="FIELD=LOW..HIGH", help="a free field and its bounds (repeat)")
    g.add_argument("--min-force", metavar="FORCE", help="least peak blocked force, e.g. \"1 mN\"")
    g.add_argument("--max-temperature", metavar="TEMP", help="highest peak temperature, e.g. \"45 degC\"")
    g.add_argument("--maxiter", type=int, default=40, help="generations of differential evolution (default 40)")
    p.set_defaults(func=cmd_sweep, axes=None)

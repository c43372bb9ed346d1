"""``actsim fit KIND DATA... -o OUT``: material and photo parameters from measured data.

KIND is one of ``tensile``, ``dma``, ``spectra``, ``bend`` or ``demo``. Every fit prints its
parameter table (values, standard errors, confidence intervals, correlations, warnings), writes
``OUT/fit.json`` and a figure in ``OUT/figures/``; ``bend`` also writes ``OUT/fitted.toml``, the
base scenario with the fitted values and a ``[calibration]`` section (see docs/calibration.md).
"""

from __future__ import annotations

import argparse
import math
import tomllib
from pathlib import Path

from ..errors import ActsimInputError

EPILOG = """\
KIND and DATA:
  tensile FILE              strain, stress CSV (e.g. 'strain [%], stress [MPa]')
  tensile FILE... --rate R... [--test-temperature T...] [--at-rate R]
                            curves at several strain rates: modulus and Eyring yield against rate
  dma FILE                  temperature, storage modulus CSV
  dma FILE --viscoelastic   temperature, frequency, storage and loss modulus CSV: shift factors,
                            WLF/Arrhenius, master curve, Prony series, [materials.NAME.relaxation]
  spectra BEFORE AFTER [PARTIAL]   absorbance spectra; needs --concentration and --thickness
  bend PLAN.toml            a fit plan (base scenario, curves with overrides, parameters)
  bend FILE... --scenario BASE.toml [--curve FILE:PATH=VALUE,...] [--param PATH:UNIT:LOW:HIGH]
  demo                      fit the bundled synthetic data and compare with the true values

example:
  actsim fit demo -o out/fit-demo
  actsim fit tensile scenarios/calibration/tensile_flap_film.csv -o out/tensile
  actsim fit dma scenarios/calibration/dma_flap_film.csv -o out/dma
  actsim fit dma scenarios/calibration/dma_sweeps_hinge_film.csv --viscoelastic \\
      --reference-temperature "60 degC" --material flap_film -o out/dma-ve
  actsim fit tensile a.csv b.csv c.csv --rate "1e-4 1/s" --rate "1e-3 1/s" --rate "1e-2 1/s" \\
      --at-rate "0.1 1/s" -o out/rates
  actsim fit spectra scenarios/calibration/uvvis_before.csv scenarios/calibration/uvvis_after.csv \\
      --concentration "0.4 mol/L" --thickness "1 um" --conversion 0.8 --absorbance-matrix 0.02 -o out/spectra
  actsim fit bend scenarios/calibration/bend_fit_plan.toml -o out/bend
  actsim fit bend --scenario scenarios/calibration/vent_flap_strip.toml \\
      --curve "scenarios/calibration/bend_05mWcm2.csv:protocol[0].light.uv_lamp=5 mW/cm^2" \\
      --curve "scenarios/calibration/bend_40mWcm2.csv:protocol[0].light.uv_lamp=40 mW/cm^2" -o out/bend2
  actsim run out/bend/fitted.toml --uncertainty 100 -o out/predict
"""

KINDS = ("tensile", "dma", "spectra", "bend", "demo")


# ----------------------------------------------------------------------------------------------
# helpers
# ----------------------------------------------------------------------------------------------

def _clean(obj):
    """JSON-safe copy: numpy to Python, non-finite floats to None."""
    import numpy as np

    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _clean(obj.tolist())
    if isinstance(obj, (np.floating, float)):
        v = float(obj)
        return v if math.isfinite(v) else None
    if isinstance(obj, (np.integer,)):
        return int(obj)
    if isinstance(obj, (np.bool_,)):
        return bool(obj)
    if isinstance(obj, Path):
        return str(obj)
    return obj


def _write_json(out: Path, record: dict) -> Path:
    from .. import __version__
    from ..io import write_json

    record = {"actsim_version": __version__, **record}
    path = out / "fit.json"
    write_json(path, _clean(record))
    return path


def _need(args, n_min, n_max, what):
    n = len(args.data)
    if not n_min <= n <= n_max:
        many = f"{n_min}" if n_min == n_max else f"{n_min} to {n_max}"
        raise ActsimInputError(f"fit {args.kind}: needs {many} DATA file(s) ({what}), got {n}")


def _figure():
    from ..figures import new_figure

    return new_figure((7.0, 4.6))


# ----------------------------------------------------------------------------------------------
# tensile, dma, spectra
# ----------------------------------------------------------------------------------------------

def fit_tensile_to(path, out: Path, *, toe=False, confidence=0.95):
    """Tensile evaluation of ``path`` into ``out``; returns (result, files)."""
    from ..calibrate.tensile import fit_tensile, plot_tensile

    res = fit_tensile(path, toe=toe, confidence=confidence)
    figures = []
    png = plot_tensile(res, out / "figures" / "tensile_fit.png", records=figures)
    js = _write_json(out, {"kind": "tensile", "data": str(path), **res.to_dict(), "figures": figures})
    return res, [js, png]


def plot_dma(res, path, *, records=None):
    """Storage modulus data and the fitted smooth step (log scale) to a PNG; its record is appended to ``records``."""
    import numpy as np

    from ..figures import figure_record, fmt
    from ..io import save_figure

    fig = _figure()
    ax = fig.add_subplot(1, 1, 1)
    T, E = res.temperature, res.storage_modulus
    ax.semilogy(T - 273.15, E / 1e6, "o", ms=3, color="0.3", label="data")
    Tf = np.linspace(T.min(), T.max(), 300)
    ax.semilogy(Tf - 273.15, res.model(Tf) / 1e6, color="C0",
                label=f"smooth step: Tg = {res.glass_transition - 273.15:.4g} °C, width {res.width:.3g} K")
    ax.axvline(res.glass_transition - 273.15, color="C0", ls=":", lw=1)
    ax.set_xlabel("temperature (°C)")
    ax.set_ylabel("storage modulus (MPa, log scale)")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title(f"DMA fit: {res.source}" + (" (synthetic data)" if res.synthetic else ""), fontsize=10)
    fig.tight_layout()
    save_figure(fig, path)
    if records is not None:
        records.append(figure_record(path, "DMA fit", (
            f"Storage modulus (MPa, log scale) against temperature (°C) of {res.source}"
            f"{' (synthetic data)' if res.synthetic else ''}: {T.size} data points "
            f"({fmt(T.min() - 273.15)}-{fmt(T.max() - 273.15)} °C) and the fitted smooth step (blue), glass transition "
            f"{fmt(res.glass_transition - 273.15, 4)} °C (dotted), width {fmt(res.width)} K")))
    return Path(path)


def fit_dma_to(path, out: Path, *, step="log", confidence=0.95):
    """DMA smooth-step fit of ``path`` into ``out``; returns (result, files)."""
    from ..calibrate.dma import fit_dma

    res = fit_dma(path, step=step, confidence=confidence)
    figures = []
    png = plot_dma(res, out / "figures" / "dma_fit.png", records=figures)
    js = _write_json(out, {"kind": "dma", "data": str(path), **res.to_dict(), "figures": figures})
    return res, [js, png]


def fit_tensile_rates_to(paths, out: Path, *, rates, temperatures, at_rate=None, at_temperature=None,
                         yield_from="offset", toe=False, confidence=0.95):
    """Tensile curves at several strain rates into ``out``; returns (series, files)."""
    from ..calibrate.rates import fit_tensile_rates, plot_tensile_rates
    from ..units import parse_quantity

    if not rates:
        raise ActsimInputError(f"fit tensile: {len(paths)} files need one --rate each (e.g. --rate \"1e-3 1/s\")")
    r = [parse_quantity(v, field="--rate", kind="rate") for v in rates]
    T = [parse_quantity(v, field="--test-temperature", kind="temperature") for v in (temperatures or ["23 degC"])]
    at_r = parse_quantity(at_rate, field="--at-rate", kind="rate") if at_rate else None
    at_T = parse_quantity(at_temperature, field="--at-temperature", kind="temperature") if at_temperature else None
    if at_r is not None and not at_r > 0:
        raise ActsimInputError(f"--at-rate: {at_rate!r} is outside the allowed range (> 0 1/s)")
    series = fit_tensile_rates(paths, rates=r, temperatures=T, yield_from=yield_from, at_rate=at_r,
                               at_temperature=at_T, confidence=confidence, toe=toe)
    png = plot_tensile_rates(series, out / "figures" / "tensile_rates.png")
    js = _write_json(out, {"kind": "tensile-rates", "data": [str(p) for p in paths], **series.to_dict(),
                           "regression": series.eyring.params.to_dict(), "synthetic": any(r.synthetic for r in series.results)})
    return series, [js, png]


def fit_viscoelastic_to(path, out: Path, *, reference_temperature=None, law="WLF", terms_per_decade=1,
                        material="fitted", scenario=None, confidence=0.95):
    """Viscoelastic DMA fit of ``path`` into ``out``; returns (fit, files, text)."""
    from ..calibrate.viscoelastic import fit_master_curve, plot_master_curve, relaxation_toml
    from ..io import write_text
    from ..units import parse_quantity

    Tr = parse_quantity(reference_temperature, field="--reference-temperature", kind="temperature") \
        if reference_temperature else None
    fit = fit_master_curve(path, reference_temperature=Tr, law=law, terms_per_decade=terms_per_decade,
                           confidence=confidence)
    png = plot_master_curve(fit, out / "figures" / "master_curve.png")
    snippet = relaxation_toml(fit, material=material)
    snip = out / "relaxation.toml"
    write_text(snip, snippet)
    files = [png, snip]
    text = fit.to_table() + "\n\nscenario table (" + str(snip.name) + "):\n" + snippet
    if scenario:
        toml_path = write_viscoelastic_scenario(fit, scenario, out / "fitted.toml", material=material)
        files.append(toml_path)
        text += f"\nfitted scenario: {toml_path.name} (base {Path(scenario).name}, material {material!r})"
    js = _write_json(out, {"kind": "dma-viscoelastic", "data": str(path), "material": material, **fit.to_dict(),
                           "regression": fit.shift.to_dict()})
    return fit, [js] + files, text


def write_viscoelastic_scenario(fit, base, path, *, material):
    """The base scenario with ``[materials.MATERIAL.relaxation]`` set from the fit, written to ``path``."""
    import copy

    import tomli_w

    from ..calibrate.settings import _rebase_files
    from ..calibrate.viscoelastic import relaxation_table
    from ..inputfiles import read_text_file
    from ..io import write_text
    from ..scenario import load_scenario

    load_scenario(base)  # the base must be a valid scenario before anything is written
    raw = copy.deepcopy(tomllib.loads(read_text_file(base, field="--scenario", shown=Path(base).name,
                                                     what="scenario")))
    mats = raw.get("materials", {})
    if material not in mats:
        raise ActsimInputError(f"--material: {material!r} is not a material of {Path(base).name} "
                               f"(materials: {', '.join(mats) or 'none'})")
    fitted = relaxation_table(fit)
    for key in ("glass_transition", "modulus_table"):  # the shift now carries the temperature dependence
        mats[material].pop(key, None)
    mats[material]["modulus"] = fitted["modulus"]
    mats[material]["relaxation"] = fitted["relaxation"]
    raw.pop("calibration", None)
    _rebase_files(raw, Path(base).resolve().parent, Path(path).resolve().parent)
    head = ["# Fitted scenario written by 'actsim fit dma --viscoelastic'"
            + (" from SYNTHETIC data" if fit.sweeps.synthetic else "") + ".",
            f"# Base scenario: {Path(base).name}; [materials.{material}.relaxation] holds the Prony series and the "
            f"{fit.law} shift fitted to {fit.sweeps.source}.", ""]
    text = "\n".join(head) + tomli_w.dumps(raw)
    from ..scenario import parse_scenario

    parse_scenario(text, path=path, base_dir=Path(path).resolve().parent)  # the fitted scenario runs as written
    write_text(path, text)
    return Path(path)


def plot_spectra(res, before, after, path, *, records=None):
    """Absorbance spectra and the derived absorptivities to a PNG; its record is appended to ``records``."""
    from ..calibrate.spectra import read_spectrum
    from ..figures import figure_record, fmt
    from ..io import save_figure

    fig = _figure()
    a1, a2 = fig.subplots(1, 2)
    for s, lab in ((before, "before"), (after, "after")):
        xy = read_spectrum(s)
        a1.plot(xy.x * 1e9, xy.y, label=lab)
    for x in res.isosbestic_points:
        a1.axvline(x * 1e9, color="0.6", lw=0.8, ls=":")
    a1.set_xlabel("wavelength (nm)")
    a1.set_ylabel("absorbance (decadic)")
    a1.legend(fontsize=8)
    wl = res.wavelength * 1e9
    a2.plot(wl, res.epsilon10_reactant * 10, label="reactant")
    a2.plot(wl, res.epsilon10_product * 10, label="product")
    a2.set_xlabel("wavelength (nm)")
    a2.set_ylabel("decadic molar absorptivity (L/(mol cm))")
    a2.legend(fontsize=8)
    for a in (a1, a2):
        a.grid(True, alpha=0.3)
    fig.suptitle(f"absorptivities, conversion {res.conversion:.3g} ({res.conversion_method})", fontsize=10)
    fig.tight_layout()
    save_figure(fig, path)
    if records is not None:
        import numpy as np

        peaks = "; ".join(f"{lab} peak {fmt(e.max() * 10, 4)} L/(mol cm) at {fmt(wl[int(np.argmax(e))], 4)} nm"
                          for lab, e in (("reactant", res.epsilon10_reactant), ("product", res.epsilon10_product)))
        iso = res.isosbestic_points
        records.append(figure_record(path, "Absorptivities from spectra", (
            f"Left: absorbance (decadic) against wavelength (nm) before and after irradiation"
            + (f", dotted: isosbestic points at {', '.join(fmt(x * 1e9, 4) for x in iso)} nm" if iso.size else "")
            + f"; right: decadic molar absorptivity (L/(mol cm)) of reactant and product derived with conversion "
              f"{fmt(res.conversion)} ({res.conversion_method}); {peaks}")))
    return Path(path)


def _absorptivity_csv(path, wl, eps, what, synthetic):
    from ..io import write_text

    lines = [f"# {what} decadic molar absorptivity from 'actsim fit spectra'" + (" (synthetic data)" if synthetic else ""),
             "# usable in a scenario as  reactant_absorptivity = { file = \"...\" }",
             "wavelength [nm], epsilon10 [L/(mol*cm)]"]
    lines += [f"{w * 1e9:.4f}, {max(e, 0.0) * 10:.6g}" for w, e in zip(wl, eps)]
    write_text(path, "\n".join(lines) + "\n")
    return Path(path)


def fit_spectra_to(paths, out: Path, *, concentration, thickness, conversion=None, absorbance_matrix=0.0):
    """Absorptivities from spectra into ``out``; returns (result, files)."""
    import numpy as np

    from ..calibrate.readers import read_xy_csv
    from ..calibrate.spectra import fit_spectra
    from ..units import parse_quantity

    c0 = parse_quantity(concentration, field="--concentration", kind="concentration")
    d = parse_quantity(thickness, field="--thickness", kind="length")
    before, after = paths[0], paths[1]
    partial = paths[2] if len(paths) > 2 else None
    res = fit_spectra(before, after, concentration=c0, thickness=d, conversion=conversion, partial=partial,
                      absorbance_matrix=absorbance_matrix)
    syn = read_xy_csv(before, x_kind="wavelength", y_kind="absorbance").synthetic
    figures = []
    png = plot_spectra(res, before, after, out / "figures" / "spectra_fit.png", records=figures)
    f1 = _absorptivity_csv(out / "absorptivity_reactant.csv", res.wavelength, res.epsilon10_reactant, "reactant", syn)
    f2 = _absorptivity_csv(out / "absorptivity_product.csv", res.wavelength, res.epsilon10_product, "product", syn)
    if np.min(res.epsilon10_product) < 0:
        res.notes.append("negative product absorptivities (noise) were written as 0 in absorptivity_product.csv")
    js = _write_json(out, {"kind": "spectra", "data": [str(p) for p in paths], "concentration_mol_per_m3": c0,
                           "thickness_m": d, "absorbance_matrix": absorbance_matrix, "synthetic": syn,
                           **res.to_dict(), "figures": figures})
    return res, [js, png, f1, f2]


def spectra_table(res) -> str:
    """Short text summary of a spectra fit (absorptivities at their peaks and at 365/405 nm)."""
    import numpy as np

    wl = res.wavelength
    lines = [f"absorptivities from spectra, conversion {res.conversion:.4g} ({res.conversion_method})"]
    for lab, e in (("reactant", res.epsilon10_reactant), ("product", res.epsilon10_product)):
        i = int(np.argmax(e))
        at = [f"{np.interp(w, wl, e) * 10:.4g} L/(mol*cm) at {w * 1e9:.0f} nm" for w in (365e-9, 405e-9)
              if wl[0] <= w <= wl[-1]]
        lines.append(f"  {lab}: peak {e[i] * 10:.4g} L/(mol*cm) at {wl[i] * 1e9:.4g} nm; " + "; ".join(at))
    if res.isosbestic_points.size:
        lines.append("  isosbestic points: " + ", ".join(f"{x * 1e9:.4g} nm" for x in res.isosbestic_points))
    lines += [f"  note: {n}" for n in res.notes]
    return "\n".join(lines)


# ----------------------------------------------------------------------------------------------
# bend
# ----------------------------------------------------------------------------------------------

def _parse_value(text: str):
    s = text.strip()
    try:
        return float(s)
    except ValueError:
        return s


def parse_curve_option(spec: str):
    """``FILE:PATH=VALUE,PATH=VALUE`` -> (file, overrides). The file part is the longest prefix that exists."""
    for i, ch in enumerate(spec):
        if ch == ":" and Path(spec[:i]).is_file():
            rest = spec[i + 1:]
            ov = {}
            for item in filter(None, (x.strip() for x in rest.split(","))):
                if "=" not in item:
                    raise ActsimInputError(f"--curve {spec!r}: '{item}' is not PATH=VALUE "
                                           "(e.g. protocol[0].light.uv_lamp=20 mW/cm^2)")
                k, v = item.split("=", 1)
                ov[k.strip()] = _parse_value(v)
            return spec[:i], ov
    if Path(spec).is_file():
        return spec, {}
    raise ActsimInputError(f"--curve {spec!r}: no existing data file before ':' (write FILE:PATH=VALUE,...)")


def parse_param_option(spec: str):
    """``PATH:UNIT:LOWER:UPPER[:INITIAL]`` -> FitParameter."""
    from ..calibrate.bend import make_parameter

    parts = spec.split(":")
    if len(parts) not in (4, 5):
        raise ActsimInputError(f"--param {spec!r}: write PATH:UNIT:LOWER:UPPER[:INITIAL], "
                               "e.g. materials.film.thermal_back_rate:1/s:0:1")
    vals = []
    for p in parts[2:]:
        try:
            vals.append(float(p))
        except ValueError:
            raise ActsimInputError(f"--param {spec!r}: bound or initial value {p!r} is not a number "
                                   f"(in the unit {parts[1]!r})") from None
    return make_parameter(parts[0], unit=parts[1], lower=vals[0], upper=vals[1],
                          initial=vals[2] if len(vals) > 2 else None)


def fit_bend_to(out: Path, *, plan=None, scenario=None, files=(), curve_specs=(), param_specs=(), confidence=None,
                max_iterations=None, progress=True):
    """Bend fit (from a plan file or from options) into ``out``; returns (fit, files, notes)."""
    from ..calibrate.bend import BendCurve, fit_bend, load_fit_plan
    from ..calibrate.settings import write_fitted_scenario
    from ..scenario import load_scenario

    if plan is not None:
        if scenario or curve_specs or param_specs or files:
            raise ActsimInputError("fit bend: give either a fit plan file or --scenario with data files, not both")
        fp = load_fit_plan(plan)
        sc, curves, params = fp.scenario, fp.curves, fp.parameters
        conf = confidence if confidence is not None else fp.confidence
        max_it = max_iterations if max_iterations is not None else fp.max_iterations
    else:
        if not scenario:
            raise ActsimInputError("fit bend: needs a fit plan (PLAN.toml) or --scenario BASE.toml with data files")
        sc = load_scenario(scenario)
        curves = [BendCurve(data=f) for f in files]
        for spec in curve_specs:
            f, ov = parse_curve_option(spec)
            curves.append(BendCurve(data=f, overrides=ov))
        if not curves:
            raise ActsimInputError("fit bend: no curves; give data files or --curve FILE:PATH=VALUE")
        params = [parse_param_option(s) for s in param_specs] or None
        conf = confidence if confidence is not None else 0.95
        max_it = max_iterations if max_iterations is not None else 40
    bar = None
    if progress:
        import os
        import sys

        from tqdm import tqdm

        bar = tqdm(desc="fit bend", unit="sim", disable=(not sys.stderr.isatty()) or bool(os.environ.get("CI")),
                   leave=False)
    try:
        fit = fit_bend(sc, curves, parameters=params, confidence=conf, max_iterations=max_it,
                       progress=(lambda n: bar.update(1)) if bar is not None else None)
    finally:
        if bar is not None:
            bar.close()
    notes = []
    figures = []
    png = fit.plot(out / "figures" / "bend_fit.png", records=figures)
    out.mkdir(parents=True, exist_ok=True)
    try:
        toml_path = write_fitted_scenario(fit, out / "fitted.toml")
    except ActsimInputError as exc:
        toml_path = write_fitted_scenario(fit, out / "fitted.toml", with_calibration=False)
        notes.append(f"fitted.toml has no [calibration] section, so --uncertainty cannot use it: {exc}")
    js = _write_json(out, {"kind": "bend", "plan": str(plan) if plan else None,
                           "scenario": sc.path, **fit.to_dict(), "figures": figures})
    return fit, [js, png, toml_path], notes


# ----------------------------------------------------------------------------------------------
# demo
# ----------------------------------------------------------------------------------------------

def _calibration_folder() -> Path:
    from ..cli import scenarios_folder

    folder = scenarios_folder() / "calibration"
    if not folder.is_dir():
        raise ActsimInputError("fit demo: the bundled scenarios/calibration folder was not found; run from a source "
                               "checkout (pip install -e .)")
    return folder


def run_demo(out: Path) -> str:
    """Fit every bundled synthetic data set; return the recovered-vs-true table."""
    import numpy as np

    from ..units import parse_quantity

    folder = _calibration_folder()
    truth = tomllib.loads((folder / "truth.toml").read_text(encoding="utf-8"))
    rows = []

    def row(what, fitted, lo, hi, true, unit, scale=1.0):
        inside = "" if lo is None else ("yes" if lo <= true <= hi else "NO")
        ci = "" if lo is None else f"{lo * scale:.5g}..{hi * scale:.5g}"
        rows.append((what, f"{fitted * scale:.5g}", ci, f"{true * scale:.5g}", inside, unit))

    tr, _ = fit_tensile_to(folder / "tensile_flap_film.csv", out / "tensile")
    reg = tr.regression
    E_true = parse_quantity(truth["tensile"]["modulus"], field="truth.tensile.modulus", kind="pressure")
    row("tensile modulus (regression)", reg.value("modulus"), *reg.ci("modulus"), E_true, "GPa", 1e-9)
    if tr.chord_modulus is not None:
        row("tensile chord modulus (ISO 527-1)", tr.chord_modulus, None, None, E_true, "GPa", 1e-9)

    dr, _ = fit_dma_to(folder / "dma_flap_film.csv", out / "dma")
    td = truth["dma"]
    for name, kind, unit, scale, off in (("glassy_modulus", "pressure", "GPa", 1e-9, 0.0),
                                         ("rubbery_modulus", "pressure", "MPa", 1e-6, 0.0),
                                         ("glass_transition", "temperature", "degC", 1.0, -273.15),
                                         ("width", "temperature", "K", 1.0, 0.0)):
        true = parse_quantity(td[name], field=f"truth.dma.{name}", kind=kind)
        lo, hi = dr.params.ci(name)
        v = dr.params.value(name)
        if off:
            row(f"DMA {name}", v + off, lo + off, hi + off, true + off, unit)
        else:
            row(f"DMA {name}", v, lo, hi, true, unit, scale)

    ts = truth["spectra"]
    sr, _ = fit_spectra_to([folder / "uvvis_before.csv", folder / "uvvis_after.csv"], out / "spectra",
                           concentration=ts["concentration"], thickness=ts["thickness"], conversion=ts["conversion"],
                           absorbance_matrix=ts["absorbance_matrix"])
    for lab, e, key in (("reactant", sr.epsilon10_reactant, "reactant_absorptivity_365nm"),
                        ("product", sr.epsilon10_product, "product_absorptivity_365nm")):
        true = parse_quantity(ts[key], field=f"truth.spectra.{key}", kind="molar_absorptivity")
        row(f"epsilon10 {lab} at 365 nm", float(np.interp(365e-9, sr.wavelength, e)), None, None, true,
            "L/(mol*cm)", 10.0)

    fit, _, notes = fit_bend_to(out / "bend", plan=folder / "bend_fit_plan.toml")
    tb = truth["bend"]
    for p in fit.parameters:
        v = tb[p.path]
        true = parse_quantity(v, field=p.path, kind="rate") if isinstance(v, str) else float(v)
        row(f"bend {p.label}", fit.result.value(p.label), *fit.result.ci(p.label), true, p.unit)

    head = ("quantity", "fitted", f"{100 * fit.result.confidence:g} % CI", "true", "true in CI", "unit")
    widths = [max(len(r[k]) for r in [head] + rows) for k in range(len(head))]
    lines = ["recovered vs true parameters (SYNTHETIC data in scenarios/calibration, see make_synthetic.py):",
             "  ".join(h.ljust(w) for h, w in zip(head, widths)).rstrip(),
             "  ".join("-" * w for w in widths)]
    lines += ["  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in rows]
    lines += [f"note: {n}" for n in notes]
    if fit.result.warnings:
        lines += [f"bend warning: {w}" for w in fit.result.warnings]
    lines.append("(the absorptivities have no interval: they are direct Beer-Lambert inversions of one spectrum pair)")
    return "\n".join(lines)


# ----------------------------------------------------------------------------------------------
# the verb
# ----------------------------------------------------------------------------------------------

def cmd_fit(args) -> int:
    from ..folders import result_folder
    from ..screens import fit_text, screen_width

    final = Path(args.output or Path("actsim-out") / f"fit-{args.kind}")
    conf = args.confidence
    if conf is not None and not 0.0 < conf < 1.0:
        raise ActsimInputError(f"--confidence: {conf!r} is outside the allowed range (> 0 and < 1)")
    if args.conversion is not None and not 0.0 < args.conversion <= 1.0:
        raise ActsimInputError(f"--conversion: {args.conversion!r} is outside the allowed range (> 0 and <= 1)")
    if not math.isfinite(args.absorbance_matrix) or args.absorbance_matrix < 0.0:
        raise ActsimInputError(f"--absorbance-matrix: {args.absorbance_matrix!r} is outside the allowed range "
                               "(>= 0, finite)")
    if args.max_iterations is not None and not 1 <= args.max_iterations <= 10_000:
        raise ActsimInputError(f"--max-iterations: {args.max_iterations} is outside the allowed range (>= 1 and <= 10000)")
    for name in args.data:  # the files named on the command line: regular files, bounded, before any work
        from ..inputfiles import check_data_file

        check_data_file(name, field="DATA")
    viscoelastic = args.kind == "dma" and args.viscoelastic
    if args.kind != "bend" and (args.curve or args.param or (args.scenario and not viscoelastic)):
        raise ActsimInputError(f"--scenario/--curve/--param: only for 'fit bend' (--scenario also for "
                               f"'fit dma --viscoelastic'), not 'fit {args.kind}'")
    if not viscoelastic and (args.reference_temperature or args.material or args.shift_law != "WLF"
                             or args.terms_per_decade != 1):
        raise ActsimInputError("--reference-temperature/--shift-law/--terms-per-decade/--material: only for "
                               "'fit dma --viscoelastic'")
    if args.kind != "tensile" and (args.rate or args.test_temperature or args.at_rate or args.at_temperature):
        raise ActsimInputError("--rate/--test-temperature/--at-rate/--at-temperature: only for 'fit tensile'")
    if args.viscoelastic and args.kind != "dma":
        raise ActsimInputError(f"--viscoelastic: only for 'fit dma', not 'fit {args.kind}'")
    # one transaction: the folder holds this fit's files only, or is left as it was
    with result_folder(final, kind="fit", overwrite=args.overwrite) as out:
        text, files = _fit_into(args, out, final, conf)
    width = screen_width()
    names = ", ".join(str(Path(f).relative_to(out)) if Path(f).is_relative_to(out) else str(f) for f in files)
    # no caution here: a fit reads measured data and writes parameters; it lights, heats or loads nothing.
    # The run that uses the fitted values prints it.
    print(fit_text(f"{text}\n\nfit results written to {final}/ ({names})", width))
    return 0


def _fit_into(args, out: Path, final: Path, conf):
    """Run the fit of ``args`` writing into the staging folder ``out``; returns (text, files)."""
    if args.kind == "tensile":
        if len(args.data) > 1 or args.rate:
            _need(args, 3, 1000, "strain, stress CSVs, one per strain rate")
            res, files = fit_tensile_rates_to(args.data, out, rates=args.rate, temperatures=args.test_temperature,
                                              at_rate=args.at_rate, at_temperature=args.at_temperature,
                                              yield_from=args.yield_from, toe=args.toe, confidence=conf or 0.95)
        else:
            _need(args, 1, 1, "strain, stress CSV")
            res, files = fit_tensile_to(args.data[0], out, toe=args.toe, confidence=conf or 0.95)
        text = res.to_table()
    elif args.kind == "dma" and args.viscoelastic:
        _need(args, 1, 1, "temperature, frequency, storage modulus, loss modulus CSV")
        _, files, text = fit_viscoelastic_to(args.data[0], out, reference_temperature=args.reference_temperature,
                                             law=args.shift_law, terms_per_decade=args.terms_per_decade,
                                             material=args.material or "fitted", scenario=args.scenario,
                                             confidence=conf or 0.95)
    elif args.kind == "dma":
        _need(args, 1, 1, "temperature, storage modulus CSV")
        res, files = fit_dma_to(args.data[0], out, step=args.step, confidence=conf or 0.95)
        text = res.to_table()
    elif args.kind == "spectra":
        _need(args, 2, 3, "BEFORE AFTER [PARTIAL] spectra")
        if not args.concentration or not args.thickness:
            raise ActsimInputError("fit spectra: needs --concentration (e.g. \"0.4 mol/L\") and --thickness "
                                   "(optical path, e.g. \"1 um\")")
        res, files = fit_spectra_to(args.data, out, concentration=args.concentration, thickness=args.thickness,
                                    conversion=args.conversion, absorbance_matrix=args.absorbance_matrix)
        text = spectra_table(res)
    elif args.kind == "bend":
        from ..jitcache import compile_notice

        plan = None
        files_in = list(args.data)
        if len(files_in) == 1 and files_in[0].lower().endswith(".toml") and not args.scenario:
            plan = files_in.pop()
        with compile_notice():
            fit, files, notes = fit_bend_to(out, plan=plan, scenario=args.scenario, files=files_in,
                                            curve_specs=args.curve, param_specs=args.param, confidence=conf,
                                            max_iterations=args.max_iterations)
        text = fit.to_table() + "".join(f"\nnote: {n}" for n in notes)
        text += f"\n\nfitted scenario: {final / 'fitted.toml'}  (actsim run {final / 'fitted.toml'} --uncertainty 100)"
    else:  # demo
        if args.data:
            raise ActsimInputError("fit demo: takes no DATA (it fits the bundled synthetic data)")
        from ..jitcache import compile_notice

        with compile_notice():
            text = run_demo(out)
        files = [out / k for k in ("tensile", "dma", "spectra", "bend")]
    return text, files


def register(subparsers) -> None:
    """Add the ``fit`` verb to the ``actsim`` command line."""
    p = subparsers.add_parser(
        "fit",
        help="fit material and photo parameters to measured data (tensile, dma, spectra, bend, demo)",
        description="Fit parameters to measured data, with standard errors, confidence intervals and "
                    "identifiability warnings. 'bend' uses the simulator itself as the model.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("kind", choices=KINDS, metavar="KIND", help="tensile, dma, spectra, bend or demo")
    p.add_argument("data", nargs="*", metavar="DATA", help="data file(s), or a fit plan .toml for bend")
    p.add_argument("-o", "--output", metavar="OUT", help="output folder (default: actsim-out/fit-KIND)")
    p.add_argument("--confidence", type=float, default=None, help="confidence level of the intervals (default 0.95)")
    from ..cli import add_overwrite_option

    add_overwrite_option(p)
    g = p.add_argument_group("tensile / dma")
    g.add_argument("--toe", action="store_true", help="tensile: apply toe compensation (ASTM D638 Appendix X1)")
    g.add_argument("--step", choices=("log", "linear"), default="log", help="dma: step in log E (default) or in E")
    g.add_argument("--rate", action="append", default=[], metavar="RATE",
                   help="tensile: strain rate of each file, in file order, e.g. \"1e-3 1/s\" (repeat)")
    g.add_argument("--test-temperature", action="append", default=[], metavar="T",
                   help="tensile: test temperature, once for all files or once per file (default 23 degC)")
    g.add_argument("--yield-from", choices=("offset", "maximum"), default="offset",
                   help="tensile rates: yield stress of each curve: offset yield (default) or the largest stress")
    g.add_argument("--at-rate", metavar="RATE", help="tensile rates: predict yield and modulus at this actuation rate")
    g.add_argument("--at-temperature", metavar="T", help="tensile rates: temperature of the prediction")
    g = p.add_argument_group("dma --viscoelastic")
    g.add_argument("--viscoelastic", action="store_true",
                   help="dma: frequency sweeps at several temperatures -> shift, master curve, Prony series")
    g.add_argument("--reference-temperature", metavar="T",
                   help="reference temperature of the shift and the Prony series (default: mid-range measured T)")
    g.add_argument("--shift-law", choices=("WLF", "Arrhenius"), default="WLF",
                   help="shift law written into the scenario (both are fitted and printed; default WLF)")
    g.add_argument("--terms-per-decade", type=int, choices=(1, 2), default=1,
                   help="Prony relaxation times per decade of reduced frequency (default 1)")
    g.add_argument("--material", metavar="NAME", help="material name in [materials.NAME.relaxation] (default "
                   "'fitted'); with --scenario, the base scenario's material that receives the table")
    g = p.add_argument_group("spectra")
    g.add_argument("--concentration", help="chromophore concentration, e.g. \"0.4 mol/L\"")
    g.add_argument("--thickness", help="optical path (film thickness), e.g. \"1 um\"")
    g.add_argument("--conversion", type=float, default=None,
                   help="known conversion of the AFTER spectrum (default: non-negativity lower bound)")
    g.add_argument("--absorbance-matrix", type=float, default=0.0,
                   help="absorbance of everything but the chromophore (substrate, matrix), subtracted (default 0)")
    g = p.add_argument_group("bend")
    g.add_argument("--scenario", metavar="BASE", help="base scenario when no fit plan is given (bend); the scenario "
                   "that receives the fitted relaxation table (dma --viscoelastic)")
    g.add_argument("--curve", action="append", default=[], metavar="FILE:PATH=VALUE,...",
                   help="a curve and its overrides, e.g. 'b20.csv:protocol[0].light.uv_lamp=20 mW/cm^2' (repeat)")
    g.add_argument("--param", action="append", default=[], metavar="PATH:UNIT:LOW:HIGH[:INIT]",
                   help="a fitted field (repeat); default: photo_strain, forward_quantum_yield, thermal_back_rate")
    g.add_argument("--max-iterations", type=int, default=None, help="largest number of fit iterations (default 40)")
    p.set_defaults(func=cmd_fit)

"""Parse and validate scenario TOML with units into the frozen SI dataclasses of :mod:`.model`.

Every dimensional field is a string with a unit (``"0.2 mm"``, ``"50 mW/cm^2"``,
``"365 nm"``); a bare number is refused unless the field is dimensionless. Every
problem is reported as one line naming the field, the value, the unit and the
allowed range (:class:`~actsim.errors.ActsimInputError`). The field reference
is ``docs/scenario.md``.

The top-level sections listed in :data:`JOB_SECTIONS` belong to jobs: they are checked to
be tables and kept as read (``Scenario.sections``); the job that uses one parses it
(:func:`actsim.scenario.section_settings`). This module imports no job.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from pathlib import Path

import numpy as np

from ..errors import ActsimInputError
from ..inputfiles import read_text_file, resolve_data_path
from ..schema import Table
from ..spectra import LightSource, SpectralFunction, gaussian_bands, line_bands, read_table_csv, tabulated_bands
from ..units import SI_UNITS, check_range, parse_dimensionless, parse_quantity
from .liquid_crystal import parse_director, parse_liquid_crystal, parse_polarisation
from .limits import SIZE_LIMITS, check_count, check_time_counts, limit, nesting_depth
from .model import HOLDS, HeatSettings, Layer, Material, OpticsSettings, Relaxation, Scenario, Step, Strip

__all__ = ["JOB_SECTIONS", "DEFAULT_TIME_TOLERANCE", "parse_scenario", "load_scenario"]

#: Default local error bound of one error-controlled time step (``[time] tolerance``).
DEFAULT_TIME_TOLERANCE = 1e-4

#: Optional top-level sections that belong to a job, with the job that reads each. The scenario
#: keeps them as raw tables (``Scenario.sections``) and never imports the job; the job parses
#: its section when it needs it (``checks_settings``, ``mask_settings``, ... built on
#: :func:`actsim.scenario.section_settings`).
JOB_SECTIONS = {
    "checks": "actsim check (actsim.checks.settings.checks_settings)",
    "safety": "actsim check (actsim.checks.settings.safety_settings)",
    "joint": "actsim check (actsim.checks.settings.joint_settings)",
    "mask": "actsim run (actsim.patterned.mask_settings)",
    "along_strip": "actsim run (actsim.along_strip.along_strip_settings)",
    "calibration": "actsim run --uncertainty (actsim.calibrate.settings.calibration_settings)",
}


def _spectral(table: Table, key: str, *, kind: str | None, default, base_dir: Path):
    """Parse a spectral property: a constant, a table or Gaussian bands (range: ``materials.NAME.<key>`` of LIMITS)."""
    path = table.field_path(key)
    lo, hi = limit(f"materials.NAME.{key}")["lo"], limit(f"materials.NAME.{key}")["hi"]
    value = table.raw(key, default)
    unit_name = SI_UNITS[kind][0] if kind else "1"

    def scalar(v, where):
        if kind is None:
            s = parse_dimensionless(v, field=where)
        else:
            s = parse_quantity(v, field=where, kind=kind)
        check_range(s, field=where, unit=unit_name, lo=lo, hi=hi, shown=repr(v))
        return s

    if not isinstance(value, dict):
        return SpectralFunction(field=path, kind="constant", constant=scalar(value, path), unit=unit_name)
    sub = Table(value, path)
    if sub.has("file"):
        fname = sub.string("file")
        lam, vals = read_table_csv(resolve_data_path(fname, base_dir=base_dir, field=f"{path}.file"), field_name=f"{path}.file",
                                   value_unit_kind=kind)
        sub.finish()
        if hi is not None and np.any(vals > hi):
            raise ActsimInputError(f"{path}.file: '{fname}' has a value {vals.max():g} {unit_name} above the allowed "
                                   f"maximum {hi:g} {unit_name}")
        _check_wavelengths(lam, f"{path}.file", fname)
        return SpectralFunction(field=path, kind="table", wavelength=lam, values=vals, unit=unit_name)
    if sub.has("wavelength"):
        lam_raw = sub.raw("wavelength")
        val_raw = sub.raw("values")
        if not isinstance(lam_raw, list) or not isinstance(val_raw, list) or len(lam_raw) != len(val_raw) or len(lam_raw) < 2:
            raise ActsimInputError(f"{path}: 'wavelength' and 'values' must be lists of equal length (at least 2)")
        check_count(len(lam_raw), "table_points", field=f"{path}.wavelength")
        lam = np.array([_bounded(v, f"{path}.wavelength[{i}]", "spectral wavelength[]") for i, v in enumerate(lam_raw)])
        vals = np.array([scalar(v, f"{path}.values[{i}]") for i, v in enumerate(val_raw)])
        sub.finish()
        if np.any(np.diff(lam) <= 0):
            raise ActsimInputError(f"{path}.wavelength: wavelengths must be strictly increasing")
        return SpectralFunction(field=path, kind="table", wavelength=lam, values=vals, unit=unit_name)
    if sub.has("bands"):
        bands_raw = sub.raw("bands")
        sub.finish()
        if not isinstance(bands_raw, list) or not bands_raw:
            raise ActsimInputError(f"{path}.bands: must be a list of {{centre, fwhm, peak}} tables")
        check_count(len(bands_raw), "spectral_bands", field=f"{path}.bands")
        bands = []
        for i, b in enumerate(bands_raw):
            bt = Table(b, f"{path}.bands[{i}]")
            centre = bt.quantity("centre", "wavelength", **limit("spectral bands[].centre"))
            fwhm = bt.quantity("fwhm", "wavelength", **limit("spectral bands[].fwhm"))
            peak = scalar(bt.raw("peak"), f"{path}.bands[{i}].peak")
            bt.finish()
            bands.append((centre, fwhm, peak))
        return SpectralFunction(field=path, kind="bands", bands=tuple(bands), unit=unit_name)
    raise ActsimInputError(f"{path}: a spectral table needs 'file', 'wavelength'+'values' or 'bands'")


def _bounded(value, field: str, key: str) -> float:
    """A quantity ``value`` in SI, range-checked against ``LIMITS[key]``."""
    from .limits import LIMITS

    lim = LIMITS[key]
    si = parse_quantity(value, field=field, kind=lim.kind)
    check_range(si, field=field, unit=SI_UNITS[lim.kind][0], **lim.kw(),
                shown=f"{value!r} (= {si:g} {SI_UNITS[lim.kind][0]})")
    return si


def _check_wavelengths(lam, field: str, fname: str):
    """Refuse a data file whose wavelengths leave the range of ``spectral wavelength[]``."""
    lim = limit("spectral wavelength[]")
    if lam[0] < lim["lo"] or lam[-1] > lim["hi"]:
        raise ActsimInputError(
            f"{field}: '{fname}' spans {lam[0] * 1e9:g} to {lam[-1] * 1e9:g} nm, outside the allowed range "
            f"(>= {lim['lo'] * 1e9:g} nm and <= {lim['hi'] * 1e9:g} nm)"
        )


def _parse_temperature_modulus(t: "Table", base_dir: Path):
    """The optional [materials.X.glass_transition] or modulus_table = {file=...} law."""
    if t.has("glass_transition") and t.has("modulus_table"):
        raise ActsimInputError(f"{t.name}: give either glass_transition or modulus_table, not both")
    if t.has("glass_transition"):
        g = t.table("glass_transition")
        law = (
            "glass",
            g.quantity("glassy_modulus", "pressure", **limit("materials.NAME.glass_transition.glassy_modulus")),
            g.quantity("rubbery_modulus", "pressure", **limit("materials.NAME.glass_transition.rubbery_modulus")),
            g.quantity("temperature", "temperature", **limit("materials.NAME.glass_transition.temperature")),
            g.quantity("width", "temperature_difference", **limit("materials.NAME.glass_transition.width")),
        )
        g.finish()
        return law
    if t.has("modulus_table"):
        g = t.table("modulus_table")
        fname = g.string("file")
        g.finish()
        where = f"{t.name}.modulus_table.file"
        temps, moduli = _read_modulus_table(resolve_data_path(fname, base_dir=base_dir, field=where), where)
        return ("table", temps, moduli)
    return None


def _read_modulus_table(path: Path, field_name: str):
    """Read a DMA-style CSV (temperature [unit], modulus [unit]) with :func:`actsim.tables.read_xy_csv`."""
    from ..tables import read_xy_csv

    try:
        data = read_xy_csv(path, x_kind="temperature", y_kind="modulus")
    except ActsimInputError as exc:
        raise ActsimInputError(f"{field_name}: {exc}") from None
    temps, moduli = data.x, data.y
    if np.any(np.diff(temps) <= 0) or np.any(moduli <= 0):
        raise ActsimInputError(f"{field_name}: '{path.name}' temperatures must increase strictly and moduli be > 0")
    for values, key, unit in ((temps, "glass_transition.temperature", "K"), (moduli, "modulus", "Pa")):
        lim = limit(f"materials.NAME.{key}")
        if values.min() < lim["lo"] or values.max() > lim["hi"]:
            raise ActsimInputError(
                f"{field_name}: '{path.name}' has a {key.split('.')[-1]} from {values.min():g} to {values.max():g} {unit}, "
                f"outside the allowed range (>= {lim['lo']:g} and <= {lim['hi']:g} {unit})"
            )
    return temps, moduli


def _read_shift_table(path: Path, field_name: str):
    """Read a shift table CSV: temperature [unit] and ``log10 ...`` [1] (log10 a_T) or ``shift factor`` [1] (a_T)."""
    from ..tables import read_xy_csv

    try:
        data = read_xy_csv(path, x_kind="temperature", y_kind="dimensionless")
    except ActsimInputError as exc:
        raise ActsimInputError(f"{field_name}: {exc}") from None
    temps, y = data.x, data.y
    name = data.y_name.strip().lower()
    if name.startswith("log"):
        log10_a = y
    elif "shift" in name or name in ("a_t", "at"):
        if np.any(y <= 0):
            raise ActsimInputError(f"{field_name}: '{path.name}' column '{data.y_name}' (a_T) must be > 0; "
                                   "or give log10 a_T in a column named 'log10 shift [1]'")
        log10_a = np.log10(y)
    else:
        raise ActsimInputError(f"{field_name}: '{path.name}' second column '{data.y_name}': name it "
                               "'log10 shift [1]' (log10 a_T) or 'shift factor [1]' (a_T)")
    if np.any(np.diff(temps) <= 0):
        raise ActsimInputError(f"{field_name}: '{path.name}' temperatures must increase strictly")
    for values, key, unit in ((temps, "reference_temperature", "K"), (log10_a, "shift_table.log10_shift", "")):
        lim = limit(f"materials.NAME.relaxation.{key}")
        if values.min() < lim["lo"] or values.max() > lim["hi"]:
            what = "temperature" if unit else "log10 a_T"
            raise ActsimInputError(
                f"{field_name}: '{path.name}' has a {what} from {values.min():g} to {values.max():g} {unit}".rstrip()
                + f", outside the allowed range (>= {lim['lo']:g} and <= {lim['hi']:g} {unit})".replace(" )", ")")
            )
    return tuple(float(v) for v in temps), tuple(float(v) for v in log10_a)


def _parse_relaxation(t: "Table", base_dir: Path) -> Relaxation | None:
    """The optional [materials.X.relaxation] table: Prony terms and the time-temperature shift."""
    if not t.has("relaxation"):
        return None
    g = t.table("relaxation")
    terms = g.raw("terms")
    where = g.field_path("terms")
    if not isinstance(terms, list) or not terms:
        raise ActsimInputError(f"{where}: give a list of {{ modulus = \"...\", time = \"...\" }} tables (at least one)")
    check_count(len(terms), "relaxation_terms", field=where)
    moduli, times = [], []
    for k, term in enumerate(terms):
        tt = Table(term, f"{where}[{k}]")
        moduli.append(tt.quantity("modulus", "pressure", **limit("materials.NAME.relaxation.terms[].modulus")))
        times.append(tt.quantity("time", "time", **limit("materials.NAME.relaxation.terms[].time")))
        tt.finish()
    shift = g.string("shift", default="none", choices=("none", "wlf", "arrhenius", "table"))
    kw = {}
    if shift == "table":
        where = g.field_path("shift_table") + ".file"
        st = g.table("shift_table")
        fname = st.string("file")
        st.finish()
        temps, log10_a = _read_shift_table(resolve_data_path(fname, base_dir=base_dir, field=where), where)
        kw["shift_table_temperatures"], kw["shift_table_log10"] = temps, log10_a
    elif g.has("shift_table"):
        raise ActsimInputError(f"{g.field_path('shift_table')}: not used with shift = '{shift}' (use shift = 'table')")
    if shift not in ("none", "table"):
        kw["reference_temperature"] = g.quantity("reference_temperature", "temperature",
                                                 **limit("materials.NAME.relaxation.reference_temperature"))
    if shift == "wlf":
        kw["wlf_c1"] = g.number("wlf_c1", default=17.44, **limit("materials.NAME.relaxation.wlf_c1"))
        kw["wlf_c2"] = g.quantity("wlf_c2", "temperature_difference", default="51.6 K",
                                  **limit("materials.NAME.relaxation.wlf_c2"))
    elif shift == "arrhenius":
        kw["activation_energy"] = g.quantity("activation_energy", "energy_per_mol",
                                             **limit("materials.NAME.relaxation.activation_energy"))
    for key in ("reference_temperature", "wlf_c1", "wlf_c2", "activation_energy"):
        if key not in kw and g.has(key):
            raise ActsimInputError(f"{g.field_path(key)}: not used with shift = '{shift}'")
    g.finish()
    return Relaxation(moduli=tuple(moduli), times=tuple(times), shift=shift, **kw)


def _parse_material(name: str, data, base_dir: Path) -> Material:
    t = Table(data, f"materials.{name}")
    temperature_modulus = _parse_temperature_modulus(t, base_dir)
    relaxation = _parse_relaxation(t, base_dir)
    if relaxation is not None and temperature_modulus is not None:
        raise ActsimInputError(
            f"materials.{name}.relaxation: a relaxing material takes its temperature dependence from the shift; "
            "remove glass_transition / modulus_table and give the long-term modulus as modulus"
        )
    strain_law = t.string("strain_law", default="linear", choices=("linear", "neo-hookean", "gent"))
    extensibility = 0.0
    if strain_law == "gent":
        extensibility = t.number("extensibility", **limit("materials.NAME.extensibility"))
    elif t.has("extensibility"):
        raise ActsimInputError(f"materials.{name}.extensibility: used only with strain_law = 'gent' "
                               f"(here '{strain_law}')")
    if strain_law != "linear" and relaxation is not None:
        raise ActsimInputError(f"materials.{name}.relaxation: a '{strain_law}' layer is elastic; large-strain "
                               "viscoelasticity is not modelled (use strain_law = 'linear' or remove relaxation)")
    if temperature_modulus is not None:
        for key in ("modulus", "product_modulus"):
            if t.has(key):
                raise ActsimInputError(
                    f"materials.{name}.{key}: not used when the modulus follows a temperature law; use product_modulus_ratio"
                )
        modulus = product_modulus = None  # the temperature law gives them
        ratio = t.number("product_modulus_ratio", default=1.0, **limit("materials.NAME.product_modulus_ratio"))
    else:
        modulus = t.quantity("modulus", "pressure", **limit("materials.NAME.modulus"))
        product_modulus = t.quantity("product_modulus", "pressure", default=modulus, **limit("materials.NAME.product_modulus"))
        ratio = product_modulus / modulus
    def lim(key):
        return limit(f"materials.NAME.{key}")

    nu = t.number("poisson_ratio", default=0.35, **lim("poisson_ratio"))
    n_ref = t.number("refractive_index", default=1.5, **lim("refractive_index"))
    background = _spectral(t, "background_absorption", kind="absorption_coefficient", default="0 1/m", base_dir=base_dir)
    conc = t.quantity("chromophore_concentration", "concentration", default=0.0, **lim("chromophore_concentration"))
    photo_strain = t.number("photo_strain", default=0.0, **lim("photo_strain"))
    k_back = t.quantity("thermal_back_rate", "rate", default=0.0, **lim("thermal_back_rate"))
    x_max = t.number("reactive_fraction", default=1.0, **lim("reactive_fraction"))
    kw = dict(
        conductivity=t.quantity("conductivity", "conductivity", default=0.2, **lim("conductivity")),
        density=t.quantity("density", "density", default=1200.0, **lim("density")),
        specific_heat=t.quantity("specific_heat", "heat_capacity", default=1500.0, **lim("specific_heat")),
        thermal_expansion=t.quantity("thermal_expansion", "thermal_expansion", default=0.0, **lim("thermal_expansion")),
        heat_fraction=t.number("heat_fraction", default=1.0, **lim("heat_fraction")),
        back_reaction_activation_energy=t.quantity("back_reaction_activation_energy", "energy_per_mol", default=0.0,
                                                   **lim("back_reaction_activation_energy")),
        network_modulus=t.quantity("network_modulus", "pressure", default=0.0, **lim("network_modulus")),
        temperature_modulus=temperature_modulus,
        product_modulus_ratio=ratio,
        relaxation=relaxation,
        strain_law=strain_law,
        extensibility=extensibility,
    )
    kw["liquid_crystal"] = parse_liquid_crystal(t, name, has_chromophore=conc > 0, strain_law=strain_law,
                                                relaxation=relaxation, network_modulus=kw["network_modulus"])
    if kw["network_modulus"] > 0 and conc <= 0:
        raise ActsimInputError(
            f"materials.{name}.network_modulus: a light-formed network needs a chromophore (chromophore_concentration > 0)"
        )
    if conc > 0:
        kw["reactant_absorptivity"] = _spectral(t, "reactant_absorptivity", kind="molar_absorptivity", default=..., base_dir=base_dir)
        kw["product_absorptivity"] = _spectral(t, "product_absorptivity", kind="molar_absorptivity", default="0 m^2/mol", base_dir=base_dir)
        kw["forward_quantum_yield"] = _spectral(t, "forward_quantum_yield", kind=None, default=..., base_dir=base_dir)
        kw["backward_quantum_yield"] = _spectral(t, "backward_quantum_yield", kind=None, default=0.0, base_dir=base_dir)
    else:
        for key in ("reactant_absorptivity", "product_absorptivity", "forward_quantum_yield", "backward_quantum_yield",
                    "reactive_fraction"):
            if t.has(key):
                raise ActsimInputError(
                    f"materials.{name}.{key}: given but chromophore_concentration is zero; set chromophore_concentration (> 0 mol/m^3) or remove it"
                )
        if photo_strain != 0.0:
            raise ActsimInputError(
                f"materials.{name}.photo_strain: {photo_strain:g} given but the material has no chromophore (chromophore_concentration = 0)"
            )
    t.finish()
    return Material(
        name=name, modulus=modulus, product_modulus=product_modulus, poisson_ratio=nu, refractive_index=n_ref,
        background_absorption=background, chromophore_concentration=conc, photo_strain=photo_strain,
        thermal_back_rate=k_back, reactive_fraction=x_max, **kw,
    )


def _parse_source(i: int, data, optics: OpticsSettings, base_dir: Path) -> LightSource:
    t = Table(data, f"sources[{i}]")
    name = t.string("name")
    kind = t.string("kind", default="line", choices=("line", "gaussian", "table"))
    face = t.string("face", default="top", choices=("top", "bottom"))
    polarisation = parse_polarisation(t)
    irradiance = t.quantity("irradiance", "irradiance", **limit("sources[].irradiance"))
    if kind == "line":
        lam = t.quantity("wavelength", "wavelength", **limit("sources[].wavelength"))
        wl, frac = line_bands(wavelength=lam)
        desc = f"line at {lam * 1e9:.4g} nm"
    elif kind == "gaussian":
        lam = t.quantity("wavelength", "wavelength", **limit("sources[].wavelength"))
        fwhm_range = limit("sources[].fwhm")
        fwhm_range["hi"] = min(fwhm_range["hi"], lam / 2)
        fwhm = t.quantity("fwhm", "wavelength", **fwhm_range)
        n_bands = t.integer("bands", default=optics.bands_per_source, lo=1, hi=limit("sources[].bands")["hi"])
        wl, frac = gaussian_bands(centre=lam, fwhm=fwhm, n_bands=n_bands)
        desc = f"Gaussian band at {lam * 1e9:.4g} nm, FWHM {fwhm * 1e9:.3g} nm"
    else:
        fname = t.string("file")
        n_bands = t.integer("bands", default=optics.bands_per_source, lo=1, hi=limit("sources[].bands")["hi"])
        lam_tab, val = read_table_csv(resolve_data_path(fname, base_dir=base_dir, field=f"sources[{i}].file"),
                                       field_name=f"sources[{i}].file", value_unit_kind=None)
        _check_wavelengths(lam_tab, f"sources[{i}].file", fname)
        wl, frac = tabulated_bands(wavelength=lam_tab, spectral_irradiance=val, n_bands=n_bands, field_name=f"sources[{i}].file")
        desc = f"tabulated spectrum '{fname}' ({lam_tab[0] * 1e9:.4g}-{lam_tab[-1] * 1e9:.4g} nm)"
    t.finish()
    if polarisation is not None:
        desc += f", polarised at {math.degrees(polarisation):.4g} deg to the strip axis"
    return LightSource(name=name, face=face, irradiance=irradiance, band_wavelength=wl, band_fraction=frac,
                       description=desc, polarisation=polarisation)


def _parse_step(i: int, data, sources, heat: "HeatSettings", previous: "Step | None", thickness: float) -> Step:
    t = Table(data, f"protocol[{i}]")
    duration = t.quantity("duration", "time", **limit("protocol[].duration"))
    label = t.string("label", default="")
    hold = t.string("hold", default="free", choices=HOLDS)
    hold_value = 0.0
    if hold == "stretch":
        hold_value = t.number("strain", **limit("protocol[].strain"))
    elif hold == "bend":
        if t.has("curvature") and t.has("mandrel_radius"):
            raise ActsimInputError(f"protocol[{i}]: give curvature or mandrel_radius, not both")
        if t.has("mandrel_radius"):
            key = "mandrel_radius"
            hold_value = 1.0 / t.quantity("mandrel_radius", "length", **limit("protocol[].mandrel_radius"))
        else:
            key = "curvature"
            hold_value = t.quantity("curvature", "curvature", **limit("protocol[].curvature"))
        surface = abs(hold_value) * thickness / 2
        if surface > 2.0:
            raise ActsimInputError(
                f"protocol[{i}].{key}: gives a surface strain of {100 * surface:.4g} % on the {thickness * 1e6:g} um stack "
                f"(allowed <= 200 %, the stretch limit; radius >= {thickness / 4 * 1e6:.4g} um)"
            )
    elif hold == "release":
        prev_hold = previous.hold if previous is not None else "free"
        if prev_hold in ("free", "release"):
            raise ActsimInputError(
                f"protocol[{i}].hold: 'release' but the strip is not held in the step before (it is '{prev_hold}'); use 'free'"
            )
    for key in ("strain", "curvature", "mandrel_radius"):
        if t.has(key) and key not in t.used:
            raise ActsimInputError(f"protocol[{i}].{key}: only used with hold = 'stretch' (strain) or 'bend' (curvature, mandrel_radius)")
    amb = t.quantity("ambient_temperature", "temperature", default=None, **limit("protocol[].ambient_temperature"))
    h_top = t.quantity("top_heat_transfer", "heat_transfer_coefficient", default=None,
                       **limit("protocol[].top_heat_transfer"))
    h_bot = t.quantity("bottom_heat_transfer", "heat_transfer_coefficient", default=None,
                       **limit("protocol[].bottom_heat_transfer"))
    if (amb is not None or h_top is not None or h_bot is not None) and not heat.enabled:
        raise ActsimInputError(
            f"protocol[{i}]: ambient_temperature / heat transfer given but heat is not modelled "
            "(add a [heat] section, or set heat.enabled = true)"
        )
    ambient = amb if amb is not None else (previous.ambient_top if previous is not None else heat.ambient_temperature)
    from ..thermal import linearised_radiation_coefficient

    # surroundings persist: a step that does not give them keeps those of the step before
    h_t = h_top if h_top is not None else (previous.convection_top if previous is not None else heat.top_heat_transfer)
    h_b = h_bot if h_bot is not None else (previous.convection_bottom if previous is not None else heat.bottom_heat_transfer)
    conv_t, conv_b = h_t, h_b
    h_t += float(linearised_radiation_coefficient(emissivity=heat.top_emissivity, ambient_temperature=ambient))
    h_b += float(linearised_radiation_coefficient(emissivity=heat.bottom_emissivity, ambient_temperature=ambient))
    names = [s.name for s in sources]
    irr = [0.0] * len(sources)
    lights = t.raw("light", default={})
    if isinstance(lights, list):
        bad = [n for n in lights if not isinstance(n, str)]
        if bad:
            raise ActsimInputError(f"protocol[{i}].light: {bad[0]!r} is not a source name (write names in quotes)")
        lights = {n: None for n in lights}
    if not isinstance(lights, dict):
        raise ActsimInputError(f"protocol[{i}].light: must be a table {{source = \"irradiance\"}} or a list of source names")
    for key, value in lights.items():
        if key not in names:
            hint = difflib.get_close_matches(key, names, n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else f"; sources are: {', '.join(names) or 'none'}"
            raise ActsimInputError(f"protocol[{i}].light.{key}: no source of that name{extra}")
        j = names.index(key)
        if value is None or value == "on":
            irr[j] = sources[j].irradiance
        else:
            v = parse_quantity(value, field=f"protocol[{i}].light.{key}", kind="irradiance")
            check_range(v, field=f"protocol[{i}].light.{key}", unit="W/m^2", **limit("protocol[].light.NAME"),
                        shown=f"{value!r} (= {v:g} W/m^2)")
            irr[j] = v
    t.finish()
    return Step(duration=duration, irradiance=tuple(irr), label=label or f"step {i + 1}", hold=hold,
                hold_value=hold_value, ambient_bottom=ambient, ambient_top=ambient, h_bottom=h_b, h_top=h_t,
                convection_bottom=conv_b, convection_top=conv_t)


def parse_scenario(text: str, *, path: str | Path = "", base_dir: str | Path | None = None) -> Scenario:
    """Parse scenario TOML text into a validated :class:`Scenario`.

    Parameters
    ----------
    text : str
        TOML text.
    path : str or pathlib.Path
        Where the text came from (kept in the result for provenance).
    base_dir : str or pathlib.Path, optional
        Folder against which relative data-file paths are resolved
        (default: the folder of ``path``, or the working directory).
    """
    where = f"scenario {path or '<text>'}"
    most = SIZE_LIMITS["file_bytes"]
    if len(text) > most or len(text.encode("utf-8", "surrogatepass")) > most:
        raise ActsimInputError(f"{where}: the text is longer than {most} bytes (allowed <= {most})")
    depth = SIZE_LIMITS["nesting_depth"]
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ActsimInputError(f"{where}: not valid TOML ({exc})") from None
    except RecursionError:
        raise ActsimInputError(f"{where}: tables or arrays are nested too deeply (allowed <= {depth} levels)") from None
    if nesting_depth(raw, stop=depth) > depth:
        raise ActsimInputError(f"{where}: tables or arrays are nested too deeply (allowed <= {depth} levels)")
    base = Path(base_dir) if base_dir is not None else (Path(path).parent if path else Path.cwd())
    top = Table(raw, "")
    title = top.string("title", default=Path(path).stem if path else "scenario")
    description = top.string("description", default="")

    st = top.table("strip")
    strip = Strip(
        free_length=st.quantity("free_length", "length", **limit("strip.free_length")),
        width=st.quantity("width", "length", **limit("strip.width")),
        section=st.string("section", default="beam", choices=("beam", "plate")),
    )
    st.finish()

    ot = top.table("optics", default={})
    optics = OpticsSettings(
        front_reflection=ot.boolean("front_reflection", default=True),
        ambient_refractive_index=ot.number("ambient_refractive_index", default=1.0,
                                           **limit("optics.ambient_refractive_index")),
        max_cell_optical_depth=ot.number("max_cell_optical_depth", default=1.5, **limit("optics.max_cell_optical_depth")),
        bands_per_source=ot.integer("bands_per_source", default=15, lo=1, hi=limit("optics.bands_per_source")["hi"]),
    )
    ot.finish()

    mats_raw = top.raw("materials")
    if not isinstance(mats_raw, dict) or not mats_raw:
        raise ActsimInputError("materials: required section with at least one material, e.g. [materials.film]")
    check_count(len(mats_raw), "materials", field="materials")
    materials = {name: _parse_material(name, data, base) for name, data in mats_raw.items()}

    layers_raw = top.raw("layers")
    if not isinstance(layers_raw, list) or not layers_raw:
        raise ActsimInputError("layers: required list of [[layers]] tables, bottom to top")
    check_count(len(layers_raw), "layers", field="layers")
    layers = []
    layer_names = set()
    for i, data in enumerate(layers_raw):
        lt = Table(data, f"layers[{i}]")
        mname = lt.string("material")
        if mname not in materials:
            hint = difflib.get_close_matches(mname, list(materials), n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else f"; materials are: {', '.join(materials)}"
            raise ActsimInputError(f"layers[{i}].material: no material '{mname}'{extra}")
        layer = Layer(
            name=lt.string("name", default=f"layer{i}"),
            material=materials[mname],
            thickness=lt.quantity("thickness", "length", **limit("layers[].thickness")),
            cells=lt.integer("cells", default=20, lo=1, hi=limit("layers[].cells")["hi"]),
            initial_conversion=lt.number("initial_conversion", default=0.0, **limit("layers[].initial_conversion")),
            director=parse_director(lt, i, liquid_crystal=materials[mname].liquid_crystal is not None,
                                    cells=lt.integer("cells", default=20, lo=1, hi=limit("layers[].cells")["hi"])),
        )
        if layer.initial_conversion > 0 and not layer.material.is_active:
            raise ActsimInputError(
                f"layers[{i}].initial_conversion: {layer.initial_conversion:g} given but material '{mname}' has no chromophore"
            )
        if layer.initial_conversion > layer.material.reactive_fraction:
            raise ActsimInputError(
                f"layers[{i}].initial_conversion: {layer.initial_conversion:g} is above reactive_fraction = "
                f"{layer.material.reactive_fraction:g} of material '{mname}' (dimensionless; allowed range 0 to "
                f"{layer.material.reactive_fraction:g})"
            )
        if layer.name in layer_names:
            raise ActsimInputError(f"layers[{i}].name: '{layer.name}' is already used by another layer; names must be unique")
        lt.finish()
        layers.append(layer)
        layer_names.add(layer.name)
    check_count(sum(layer.cells for layer in layers), "total_cells", field="layers[].cells")

    src_raw = top.raw("sources", default=[])
    if not isinstance(src_raw, list):
        raise ActsimInputError("sources: must be a list of [[sources]] tables")
    check_count(len(src_raw), "sources", field="sources")
    sources = [_parse_source(i, d, optics, base) for i, d in enumerate(src_raw)]
    seen = set()
    for s in sources:
        if s.name in seen:
            raise ActsimInputError(f"sources: name '{s.name}' is used twice; names must be unique")
        seen.add(s.name)

    if top.has("heat"):
        ht = top.table("heat")
        ambient = ht.quantity("ambient_temperature", "temperature", default="20 degC", **limit("heat.ambient_temperature"))
        heat = HeatSettings(
            enabled=ht.boolean("enabled", default=True),
            ambient_temperature=ambient,
            reference_temperature=ht.quantity("reference_temperature", "temperature", default=ambient,
                                              **limit("heat.reference_temperature")),
            top_heat_transfer=ht.quantity("top_heat_transfer", "heat_transfer_coefficient", default="10 W/(m^2*K)",
                                          **limit("heat.top_heat_transfer")),
            bottom_heat_transfer=ht.quantity("bottom_heat_transfer", "heat_transfer_coefficient", default="10 W/(m^2*K)",
                                             **limit("heat.bottom_heat_transfer")),
            top_emissivity=ht.number("top_emissivity", default=0.0, **limit("heat.top_emissivity")),
            bottom_emissivity=ht.number("bottom_emissivity", default=0.0, **limit("heat.bottom_emissivity")),
            scheme=ht.string("scheme", default="tr-bdf2", choices=("tr-bdf2", "crank-nicolson")),
        )
        ht.finish()
    else:
        heat = HeatSettings(enabled=False)
    for mname, mat in materials.items():
        if mat.temperature_modulus is not None and not heat.enabled:
            raise ActsimInputError(f"materials.{mname}: a temperature-dependent modulus needs a [heat] section")
        if not heat.enabled:
            for key in ("thermal_expansion", "back_reaction_activation_energy"):
                if mats_raw[mname].get(key) not in (None, 0, 0.0) and getattr(mat, key) != 0.0:
                    raise ActsimInputError(
                        f"materials.{mname}.{key}: has an effect only when heat is modelled; add a [heat] section"
                    )

    prot_raw = top.raw("protocol")
    if not isinstance(prot_raw, list) or not prot_raw:
        raise ActsimInputError("protocol: required list of [[protocol]] steps (each with a duration)")
    check_count(len(prot_raw), "protocol_steps", field="protocol")
    protocol = []
    for i, d in enumerate(prot_raw):
        protocol.append(_parse_step(i, d, sources, heat, protocol[-1] if protocol else None,
                                    sum(layer.thickness for layer in layers)))

    tt = top.table("time", default={})
    total = sum(s.duration for s in protocol)
    output_interval = tt.quantity("output_interval", "time", default=None, **limit("time.output_interval"))
    if output_interval is None:
        output_interval = total / 200.0
    time_step = tt.quantity("step", "time", default=None, **limit("time.step"))
    if time_step is not None and tt.has("tolerance"):
        raise ActsimInputError("time: give either time.step (fixed steps) or time.tolerance (error-controlled steps), "
                               "not both")
    tolerance = tt.number("tolerance", default=DEFAULT_TIME_TOLERANCE, **limit("time.tolerance"))
    if time_step is None:
        time_step = math.inf
    else:
        tolerance = 0.0
    tt.finish()
    if tolerance and heat.enabled and heat.scheme == "crank-nicolson":
        raise ActsimInputError("heat.scheme: 'crank-nicolson' needs a fixed time.step (it rings when an error-controlled "
                               "step grows past the cell diffusion time); use 'tr-bdf2' or give time.step")
    check_time_counts(durations=[s.duration for s in protocol], output_interval=output_interval, time_step=time_step,
                      fixed=not tolerance, n_cells=sum(layer.cells for layer in layers))

    target = None
    rt = top.table("report", default={})
    if rt.has("target_bend_angle"):
        target = rt.quantity("target_bend_angle", "angle", **limit("report.target_bend_angle"))
    front_level = rt.number("front_conversion", 0.5, **limit("report.front_conversion"))
    small_strain_limit = rt.number("small_strain_limit", 0.05, **limit("report.small_strain_limit"))
    rt.finish()
    sections = {}
    for section in JOB_SECTIONS:
        if top.has(section):
            sections[section] = Table(top.raw(section), section).data  # a table; its fields are the job's to check

    top.finish(allowed_extra=tuple(JOB_SECTIONS))
    return Scenario(
        title=title, strip=strip, layers=tuple(layers), sources=tuple(sources), protocol=tuple(protocol),
        optics=optics, heat=heat, output_interval=output_interval, time_step=time_step, time_tolerance=tolerance, text=text, path=str(path),
        description=description, target_bend_angle=target, front_level=front_level,
        small_strain_limit=small_strain_limit, sections=sections, base_dir=str(base),
        material_names=tuple(materials),
    )


def load_scenario(path) -> Scenario:
    """Read and validate a scenario TOML file.

    Parameters
    ----------
    path : str or pathlib.Path
        The scenario file; data files it names are resolved against its folder.

    Returns
    -------
    Scenario
        The validated scenario in SI units.

    Examples
    --------
    >>> import actsim
    >>> sc = actsim.load_scenario("scenarios/vent_flap.toml")  # doctest: +SKIP
    >>> ds = actsim.simulate(sc)  # doctest: +SKIP
    """
    p = Path(path)
    most = SIZE_LIMITS["file_bytes"]
    if p.is_file() and p.stat().st_size > most:
        raise ActsimInputError(f"scenario: '{p}' is larger than {most} bytes (allowed <= {most})")
    text = read_text_file(p, field="scenario", what="TOML")
    return parse_scenario(text, path=p)

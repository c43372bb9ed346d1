"""Scenario files: parse and validate TOML with units into frozen SI dataclasses.

Every dimensional field is a string with a unit (``"0.2 mm"``, ``"50 mW/cm^2"``,
``"365 nm"``); a bare number is refused unless the field is dimensionless. Every
problem is reported as one line naming the field, the value, the unit and the
allowed range (:class:`~actsim.errors.ActsimInputError`). The field reference
is ``docs/scenario.md``.
"""

from __future__ import annotations

import difflib
import math
import re
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from .errors import ActsimInputError
from .spectra import (
    LightSource,
    SpectralFunction,
    gaussian_bands,
    line_bands,
    read_table_csv,
    tabulated_bands,
)
from .units import check_range, parse_dimensionless, parse_quantity

# ----------------------------------------------------------------------------
# Frozen SI dataclasses
# ----------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class Material:
    """Material of one layer, SI units.

    ``modulus`` is the Young's modulus of the unconverted (reactant) form and
    ``product_modulus`` that of the fully converted form; in between the
    modulus is linear in conversion. A passive material has zero chromophore
    concentration.
    """

    name: str
    modulus: float | None  # Pa (None when the modulus follows a temperature law)
    product_modulus: float | None  # Pa
    poisson_ratio: float  # 1
    refractive_index: float  # 1
    background_absorption: SpectralFunction  # 1/m (natural-log absorption coefficient)
    chromophore_concentration: float = 0.0  # mol/m^3
    photo_strain: float = 0.0  # eigenstrain at full conversion, 1
    thermal_back_rate: float = 0.0  # 1/s
    reactive_fraction: float = 1.0  # part of the chromophore that can react (conversion cap), 1
    forward_quantum_yield: SpectralFunction | None = None
    backward_quantum_yield: SpectralFunction | None = None
    reactant_absorptivity: SpectralFunction | None = None  # decadic, m^2/mol
    product_absorptivity: SpectralFunction | None = None  # decadic, m^2/mol
    # heat
    conductivity: float = 0.2  # W/(m K)
    density: float = 1200.0  # kg/m^3
    specific_heat: float = 1500.0  # J/(kg K)
    thermal_expansion: float = 0.0  # 1/K
    heat_fraction: float = 1.0  # fraction of absorbed light that becomes heat
    back_reaction_activation_energy: float = 0.0  # J/mol (Arrhenius; 0: rate independent of T)
    # modulus against temperature: None, ("glass", Eg, Er, Tg, width) or ("table", T[], E[])
    temperature_modulus: tuple | None = None
    product_modulus_ratio: float = 1.0  # E_B/E_A when the modulus follows a temperature law
    # light-formed (second) network: modulus of the fully formed network [Pa]; network density = conversion
    network_modulus: float = 0.0

    @property
    def is_active(self) -> bool:
        return self.chromophore_concentration > 0.0

    @property
    def forms_network(self) -> bool:
        return self.network_modulus > 0.0


@dataclass(frozen=True, eq=False)
class Layer:
    """One layer of the stack (bottom to top)."""

    name: str
    material: Material
    thickness: float  # m
    cells: int
    initial_conversion: float = 0.0


@dataclass(frozen=True)
class Strip:
    """Strip geometry."""

    free_length: float  # m
    width: float  # m
    section: str = "beam"  # "beam" (plane stress) or "plate" (plane strain)


#: Mechanical conditions of a protocol step.
HOLDS = ("free", "release", "stretch", "bend", "flat")


@dataclass(frozen=True)
class Step:
    """One protocol step: duration, irradiance of each source [W m-2], mechanical condition, surroundings."""

    duration: float  # s
    irradiance: tuple  # one value per source, in the order of Scenario.sources
    label: str = ""
    hold: str = "free"  # one of HOLDS
    hold_value: float = 0.0  # stretch: mid-plane strain [1]; bend: curvature [1/m]
    ambient_bottom: float = 293.15  # K
    ambient_top: float = 293.15  # K
    h_bottom: float = 10.0  # W/(m^2 K), convection + linearised radiation
    h_top: float = 10.0  # W/(m^2 K)
    convection_bottom: float = 10.0  # W/(m^2 K), convection alone (carried to the next step)
    convection_top: float = 10.0


@dataclass(frozen=True)
class HeatSettings:
    """Photothermal heating: on when the scenario has a [heat] section."""

    enabled: bool = False
    ambient_temperature: float = 293.15  # K
    reference_temperature: float = 293.15  # K, zero of thermal strain and reference of the back-reaction rate
    top_heat_transfer: float = 10.0  # W/(m^2 K)
    bottom_heat_transfer: float = 10.0
    top_emissivity: float = 0.0
    bottom_emissivity: float = 0.0
    scheme: str = "tr-bdf2"  # or "crank-nicolson"


@dataclass(frozen=True)
class OpticsSettings:
    front_reflection: bool = True
    ambient_refractive_index: float = 1.0
    max_cell_optical_depth: float = 1.5
    bands_per_source: int = 15


@dataclass(frozen=True, eq=False)
class Scenario:
    """A whole scenario in SI units. Build with :func:`load_scenario` or :func:`parse_scenario`."""

    title: str
    strip: Strip
    layers: tuple
    sources: tuple
    protocol: tuple
    optics: OpticsSettings
    heat: HeatSettings
    output_interval: float  # s
    time_step: float  # s
    text: str = ""
    path: str = ""
    description: str = ""
    target_bend_angle: float | None = None  # rad
    extras: dict = field(default_factory=dict)  # parsed optional sections (see SECTION_PARSERS)
    base_dir: str = ""  # folder against which the scenario's data files were resolved

    @property
    def thickness(self) -> float:
        return float(sum(layer.thickness for layer in self.layers))

    @property
    def duration(self) -> float:
        return float(sum(step.duration for step in self.protocol))

    def replace(self, **changes) -> "Scenario":
        """A copy with some top-level fields changed (dataclasses.replace)."""
        return replace(self, **changes)


# ----------------------------------------------------------------------------
# Parsing helpers
# ----------------------------------------------------------------------------

#: Optional top-level sections parsed by the module of the job that uses them:
#: section name -> (module, function). The function is called as
#: ``fn(data, field=name, base_dir=Path, scenario_info=dict)`` and returns a frozen object
#: stored in ``Scenario.extras[name]``; it raises ActsimInputError on bad input.
SECTION_PARSERS = {
    "checks": ("actsim.checks.settings", "parse_checks"),
    "safety": ("actsim.checks.settings", "parse_safety"),
    "joint": ("actsim.checks.settings", "parse_joint"),
    "mask": ("actsim.patterned", "parse_mask"),
    "calibration": ("actsim.calibrate.settings", "parse_calibration"),
}


class _Table:
    """A TOML table whose keys are consumed; unknown keys raise with a suggestion."""

    def __init__(self, data, name: str):
        if not isinstance(data, dict):
            raise ActsimInputError(f"{name}: expected a table (section), got {type(data).__name__} {data!r}")
        self.data = data
        self.name = name
        self.used: set[str] = set()

    def _path(self, key):
        return f"{self.name}.{key}" if self.name else key

    def has(self, key) -> bool:
        return key in self.data

    def raw(self, key, default=...):
        self.used.add(key)
        if key in self.data:
            return self.data[key]
        if default is ...:
            raise ActsimInputError(f"{self._path(key)}: required field is missing")
        return default

    def quantity(self, key, kind, default=..., *, lo=None, hi=None, lo_open=False, hi_open=False):
        value = self.raw(key, default)
        if value is None:
            return None
        if value is default and not isinstance(value, str):
            return value
        si = parse_quantity(value, field=self._path(key), kind=kind)
        from .units import SI_UNITS

        check_range(si, field=self._path(key), unit=SI_UNITS[kind][0], lo=lo, hi=hi, lo_open=lo_open,
                    hi_open=hi_open, shown=f"{value!r} (= {si:g} {SI_UNITS[kind][0]})")
        return si

    def number(self, key, default=..., *, lo=None, hi=None, lo_open=False, hi_open=False):
        value = self.raw(key, default)
        v = parse_dimensionless(value, field=self._path(key))
        check_range(v, field=self._path(key), unit="1", lo=lo, hi=hi, lo_open=lo_open, hi_open=hi_open)
        return v

    def integer(self, key, default=..., *, lo=None, hi=None):
        value = self.raw(key, default)
        if isinstance(value, bool) or not isinstance(value, int):
            raise ActsimInputError(f"{self._path(key)}: {value!r} must be a whole number")
        check_range(value, field=self._path(key), unit="1", lo=lo, hi=hi)
        return int(value)

    def string(self, key, default=..., *, choices=None):
        value = self.raw(key, default)
        if not isinstance(value, str):
            raise ActsimInputError(f"{self._path(key)}: {value!r} must be a text string")
        if choices is not None and value not in choices:
            hint = difflib.get_close_matches(value, choices, n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else ""
            raise ActsimInputError(
                f"{self._path(key)}: '{value}' is not one of {', '.join(repr(c) for c in choices)}{extra}"
            )
        return value

    def boolean(self, key, default=...):
        value = self.raw(key, default)
        if not isinstance(value, bool):
            raise ActsimInputError(f"{self._path(key)}: {value!r} must be true or false")
        return value

    def table(self, key, default=...):
        value = self.raw(key, default)
        return _Table(value, self._path(key))

    def finish(self, allowed_extra=()):
        unknown = [k for k in self.data if k not in self.used and k not in allowed_extra]
        if unknown:
            key = unknown[0]
            known = sorted(self.used | set(allowed_extra))
            hint = difflib.get_close_matches(key, known, n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else f"; known fields: {', '.join(known)}"
            raise ActsimInputError(f"{self._path(key)}: unknown field{extra}")


def _spectral(table: _Table, key: str, *, kind: str | None, default, base_dir: Path, lo=0.0, hi=None):
    """Parse a spectral property: a constant, a table or Gaussian bands."""
    from .units import SI_UNITS

    path = table._path(key)
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
    sub = _Table(value, path)
    if sub.has("file"):
        fname = sub.string("file")
        lam, vals = read_table_csv(base_dir / fname, field_name=f"{path}.file", value_unit_kind=kind)
        sub.finish()
        if hi is not None and np.any(vals > hi):
            raise ActsimInputError(f"{path}.file: '{fname}' has a value {vals.max():g} above the allowed maximum {hi:g}")
        return SpectralFunction(field=path, kind="table", wavelength=lam, values=vals, unit=unit_name)
    if sub.has("wavelength"):
        lam_raw = sub.raw("wavelength")
        val_raw = sub.raw("values")
        if not isinstance(lam_raw, list) or not isinstance(val_raw, list) or len(lam_raw) != len(val_raw) or len(lam_raw) < 2:
            raise ActsimInputError(f"{path}: 'wavelength' and 'values' must be lists of equal length (at least 2)")
        lam = np.array([parse_quantity(v, field=f"{path}.wavelength[{i}]", kind="wavelength") for i, v in enumerate(lam_raw)])
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
        bands = []
        for i, b in enumerate(bands_raw):
            bt = _Table(b, f"{path}.bands[{i}]")
            centre = bt.quantity("centre", "wavelength", lo=0, lo_open=True)
            fwhm = bt.quantity("fwhm", "wavelength", lo=0, lo_open=True)
            peak = scalar(bt.raw("peak"), f"{path}.bands[{i}].peak")
            bt.finish()
            bands.append((centre, fwhm, peak))
        return SpectralFunction(field=path, kind="bands", bands=tuple(bands), unit=unit_name)
    raise ActsimInputError(f"{path}: a spectral table needs 'file', 'wavelength'+'values' or 'bands'")


def _parse_temperature_modulus(t: "_Table", base_dir: Path):
    """The optional [materials.X.glass_transition] or modulus_table = {file=...} law."""
    if t.has("glass_transition") and t.has("modulus_table"):
        raise ActsimInputError(f"{t.name}: give either glass_transition or modulus_table, not both")
    if t.has("glass_transition"):
        g = t.table("glass_transition")
        law = (
            "glass",
            g.quantity("glassy_modulus", "pressure", lo=0, lo_open=True),
            g.quantity("rubbery_modulus", "pressure", lo=0, lo_open=True),
            g.quantity("temperature", "temperature", lo=0, lo_open=True),
            g.quantity("width", "temperature_difference", lo=0, lo_open=True),
        )
        g.finish()
        return law
    if t.has("modulus_table"):
        g = t.table("modulus_table")
        fname = g.string("file")
        g.finish()
        temps, moduli = _read_modulus_table(base_dir / fname, f"{t.name}.modulus_table.file")
        return ("table", temps, moduli)
    return None


def _read_modulus_table(path: Path, field_name: str):
    """Read a DMA-style CSV (temperature [unit], modulus [unit]) with :func:`actsim.tables.read_xy_csv`."""
    from .tables import read_xy_csv

    try:
        data = read_xy_csv(path, x_kind="temperature", y_kind="modulus")
    except ActsimInputError as exc:
        raise ActsimInputError(f"{field_name}: {exc}") from None
    temps, moduli = data.x, data.y
    if np.any(np.diff(temps) <= 0) or np.any(moduli <= 0):
        raise ActsimInputError(f"{field_name}: '{path.name}' temperatures must increase strictly and moduli be > 0")
    return temps, moduli


def _parse_material(name: str, data, base_dir: Path) -> Material:
    t = _Table(data, f"materials.{name}")
    temperature_modulus = _parse_temperature_modulus(t, base_dir)
    if temperature_modulus is not None:
        for key in ("modulus", "product_modulus"):
            if t.has(key):
                raise ActsimInputError(
                    f"materials.{name}.{key}: not used when the modulus follows a temperature law; use product_modulus_ratio"
                )
        modulus = product_modulus = None  # the temperature law gives them
        ratio = t.number("product_modulus_ratio", default=1.0, lo=0.0, lo_open=True, hi=100.0)
    else:
        modulus = t.quantity("modulus", "pressure", lo=0, lo_open=True)
        product_modulus = t.quantity("product_modulus", "pressure", default=modulus, lo=0, lo_open=True)
        ratio = product_modulus / modulus
    nu = t.number("poisson_ratio", default=0.35, lo=0.0, hi=0.5, hi_open=True)
    n_ref = t.number("refractive_index", default=1.5, lo=1.0, hi=4.0)
    background = _spectral(t, "background_absorption", kind="absorption_coefficient", default="0 1/m", base_dir=base_dir)
    conc = t.quantity("chromophore_concentration", "concentration", default=0.0, lo=0.0)
    photo_strain = t.number("photo_strain", default=0.0, lo=-0.5, hi=0.5)
    k_back = t.quantity("thermal_back_rate", "rate", default=0.0, lo=0.0)
    x_max = t.number("reactive_fraction", default=1.0, lo=0.0, lo_open=True, hi=1.0)
    kw = dict(
        conductivity=t.quantity("conductivity", "conductivity", default=0.2, lo=0.0, lo_open=True),
        density=t.quantity("density", "density", default=1200.0, lo=0.0, lo_open=True),
        specific_heat=t.quantity("specific_heat", "heat_capacity", default=1500.0, lo=0.0, lo_open=True),
        thermal_expansion=t.quantity("thermal_expansion", "thermal_expansion", default=0.0, lo=-1e-3, hi=1e-2),
        heat_fraction=t.number("heat_fraction", default=1.0, lo=0.0, hi=1.0),
        back_reaction_activation_energy=t.quantity("back_reaction_activation_energy", "energy_per_mol", default=0.0, lo=0.0, hi=1e6),
        network_modulus=t.quantity("network_modulus", "pressure", default=0.0, lo=0.0),
        temperature_modulus=temperature_modulus,
        product_modulus_ratio=ratio,
    )
    if kw["network_modulus"] > 0 and conc <= 0:
        raise ActsimInputError(
            f"materials.{name}.network_modulus: a light-formed network needs a chromophore (chromophore_concentration > 0)"
        )
    if conc > 0:
        kw["reactant_absorptivity"] = _spectral(t, "reactant_absorptivity", kind="molar_absorptivity", default=..., base_dir=base_dir)
        kw["product_absorptivity"] = _spectral(t, "product_absorptivity", kind="molar_absorptivity", default="0 m^2/mol", base_dir=base_dir)
        kw["forward_quantum_yield"] = _spectral(t, "forward_quantum_yield", kind=None, default=..., base_dir=base_dir, lo=0.0, hi=1.0)
        kw["backward_quantum_yield"] = _spectral(t, "backward_quantum_yield", kind=None, default=0.0, base_dir=base_dir, lo=0.0, hi=1.0)
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
    t = _Table(data, f"sources[{i}]")
    name = t.string("name")
    kind = t.string("kind", default="line", choices=("line", "gaussian", "table"))
    face = t.string("face", default="top", choices=("top", "bottom"))
    irradiance = t.quantity("irradiance", "irradiance", lo=0.0)
    if kind == "line":
        lam = t.quantity("wavelength", "wavelength", lo=100e-9, hi=20e-6)
        wl, frac = line_bands(wavelength=lam)
        desc = f"line at {lam * 1e9:.4g} nm"
    elif kind == "gaussian":
        lam = t.quantity("wavelength", "wavelength", lo=100e-9, hi=20e-6)
        fwhm = t.quantity("fwhm", "wavelength", lo=0.0, lo_open=True, hi=lam / 2)
        n_bands = t.integer("bands", default=optics.bands_per_source, lo=1, hi=200)
        wl, frac = gaussian_bands(centre=lam, fwhm=fwhm, n_bands=n_bands)
        desc = f"Gaussian band at {lam * 1e9:.4g} nm, FWHM {fwhm * 1e9:.3g} nm"
    else:
        fname = t.string("file")
        n_bands = t.integer("bands", default=optics.bands_per_source, lo=1, hi=200)
        lam_tab, val = read_table_csv(base_dir / fname, field_name=f"sources[{i}].file", value_unit_kind=None)
        if lam_tab[0] < 100e-9 or lam_tab[-1] > 20e-6:
            raise ActsimInputError(
                f"sources[{i}].file: '{fname}' spans {lam_tab[0] * 1e9:g} to {lam_tab[-1] * 1e9:g} nm, outside the "
                "allowed range (>= 100 nm and <= 20000 nm)"
            )
        wl, frac = tabulated_bands(wavelength=lam_tab, spectral_irradiance=val, n_bands=n_bands, field_name=f"sources[{i}].file")
        desc = f"tabulated spectrum '{fname}' ({lam_tab[0] * 1e9:.4g}-{lam_tab[-1] * 1e9:.4g} nm)"
    t.finish()
    return LightSource(name=name, face=face, irradiance=irradiance, band_wavelength=wl, band_fraction=frac, description=desc)


def _parse_step(i: int, data, sources, heat: "HeatSettings", previous: "Step | None", thickness: float) -> Step:
    t = _Table(data, f"protocol[{i}]")
    duration = t.quantity("duration", "time", lo=0.0, lo_open=True)
    label = t.string("label", default="")
    hold = t.string("hold", default="free", choices=HOLDS)
    hold_value = 0.0
    if hold == "stretch":
        hold_value = t.number("strain", lo=-0.5, hi=2.0)
    elif hold == "bend":
        if t.has("curvature") and t.has("mandrel_radius"):
            raise ActsimInputError(f"protocol[{i}]: give curvature or mandrel_radius, not both")
        if t.has("mandrel_radius"):
            key = "mandrel_radius"
            hold_value = 1.0 / t.quantity("mandrel_radius", "length", lo=0.0, lo_open=True)
        else:
            key = "curvature"
            hold_value = t.quantity("curvature", "curvature")
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
    amb = t.quantity("ambient_temperature", "temperature", default=None, lo=0.0, lo_open=True)
    h_top = t.quantity("top_heat_transfer", "heat_transfer_coefficient", default=None, lo=0.0)
    h_bot = t.quantity("bottom_heat_transfer", "heat_transfer_coefficient", default=None, lo=0.0)
    if (amb is not None or h_top is not None or h_bot is not None) and not heat.enabled:
        raise ActsimInputError(
            f"protocol[{i}]: ambient_temperature / heat transfer given but heat is not modelled "
            "(add a [heat] section, or set heat.enabled = true)"
        )
    ambient = amb if amb is not None else (previous.ambient_top if previous is not None else heat.ambient_temperature)
    from .thermal import linearised_radiation_coefficient

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
            check_range(v, field=f"protocol[{i}].light.{key}", unit="W/m^2", lo=0.0, shown=repr(value))
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
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ActsimInputError(f"scenario {path or '<text>'}: not valid TOML ({exc})") from None
    base = Path(base_dir) if base_dir is not None else (Path(path).parent if path else Path.cwd())
    top = _Table(raw, "")
    title = top.string("title", default=Path(path).stem if path else "scenario")
    description = top.string("description", default="")

    st = top.table("strip")
    strip = Strip(
        free_length=st.quantity("free_length", "length", lo=0.0, lo_open=True),
        width=st.quantity("width", "length", lo=0.0, lo_open=True),
        section=st.string("section", default="beam", choices=("beam", "plate")),
    )
    st.finish()

    ot = top.table("optics", default={})
    optics = OpticsSettings(
        front_reflection=ot.boolean("front_reflection", default=True),
        ambient_refractive_index=ot.number("ambient_refractive_index", default=1.0, lo=1.0, hi=4.0),
        max_cell_optical_depth=ot.number("max_cell_optical_depth", default=1.5, lo=0.0, lo_open=True, hi=20.0),
        bands_per_source=ot.integer("bands_per_source", default=15, lo=1, hi=200),
    )
    ot.finish()

    mats_raw = top.raw("materials")
    if not isinstance(mats_raw, dict) or not mats_raw:
        raise ActsimInputError("materials: required section with at least one material, e.g. [materials.film]")
    materials = {name: _parse_material(name, data, base) for name, data in mats_raw.items()}

    layers_raw = top.raw("layers")
    if not isinstance(layers_raw, list) or not layers_raw:
        raise ActsimInputError("layers: required list of [[layers]] tables, bottom to top")
    layers = []
    for i, data in enumerate(layers_raw):
        lt = _Table(data, f"layers[{i}]")
        mname = lt.string("material")
        if mname not in materials:
            hint = difflib.get_close_matches(mname, list(materials), n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else f"; materials are: {', '.join(materials)}"
            raise ActsimInputError(f"layers[{i}].material: no material '{mname}'{extra}")
        layer = Layer(
            name=lt.string("name", default=f"layer{i}"),
            material=materials[mname],
            thickness=lt.quantity("thickness", "length", lo=0.0, lo_open=True, hi=0.1),
            cells=lt.integer("cells", default=20, lo=1, hi=10000),
            initial_conversion=lt.number("initial_conversion", default=0.0, lo=0.0, hi=1.0),
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
        if any(other.name == layer.name for other in layers):
            raise ActsimInputError(f"layers[{i}].name: '{layer.name}' is already used by another layer; names must be unique")
        lt.finish()
        layers.append(layer)

    src_raw = top.raw("sources", default=[])
    if not isinstance(src_raw, list):
        raise ActsimInputError("sources: must be a list of [[sources]] tables")
    sources = [_parse_source(i, d, optics, base) for i, d in enumerate(src_raw)]
    names = [s.name for s in sources]
    dup = {n for n in names if names.count(n) > 1}
    if dup:
        raise ActsimInputError(f"sources: name '{sorted(dup)[0]}' is used twice; names must be unique")

    if top.has("heat"):
        ht = top.table("heat")
        ambient = ht.quantity("ambient_temperature", "temperature", default="20 degC", lo=0.0, lo_open=True)
        heat = HeatSettings(
            enabled=ht.boolean("enabled", default=True),
            ambient_temperature=ambient,
            reference_temperature=ht.quantity("reference_temperature", "temperature", default=ambient, lo=0.0, lo_open=True),
            top_heat_transfer=ht.quantity("top_heat_transfer", "heat_transfer_coefficient", default="10 W/(m^2*K)", lo=0.0),
            bottom_heat_transfer=ht.quantity("bottom_heat_transfer", "heat_transfer_coefficient", default="10 W/(m^2*K)", lo=0.0),
            top_emissivity=ht.number("top_emissivity", default=0.0, lo=0.0, hi=1.0),
            bottom_emissivity=ht.number("bottom_emissivity", default=0.0, lo=0.0, hi=1.0),
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
    protocol = []
    for i, d in enumerate(prot_raw):
        protocol.append(_parse_step(i, d, sources, heat, protocol[-1] if protocol else None,
                                    sum(layer.thickness for layer in layers)))

    tt = top.table("time", default={})
    total = sum(s.duration for s in protocol)
    output_interval = tt.quantity("output_interval", "time", default=None, lo=0.0, lo_open=True)
    if output_interval is None:
        output_interval = total / 200.0
    time_step = tt.quantity("step", "time", default=None, lo=0.0, lo_open=True)
    if time_step is None:
        time_step = min(output_interval, total / 1000.0)
    tt.finish()
    if output_interval > total:
        raise ActsimInputError(
            f"time.output_interval: {output_interval:g} s is longer than the whole protocol ({total:g} s)"
        )
    n_outputs = int(math.floor(total / output_interval + 1e-9)) + len(protocol)
    if n_outputs > 1_000_000:
        raise ActsimInputError(
            f"time.output_interval: {output_interval:g} s gives {n_outputs} output times over {total:g} s "
            "(allowed <= 1e6); use a longer interval"
        )
    n_cells_total = sum(layer.cells for layer in layers)
    if n_outputs * n_cells_total > 200_000_000:
        raise ActsimInputError(
            f"time.output_interval: {n_outputs} output times x {n_cells_total} cells is too large to keep "
            "(allowed <= 2e8 values per field); use a longer interval or fewer cells"
        )
    n_steps = sum(math.ceil(s.duration / time_step - 1e-9) for s in protocol) + n_outputs
    if n_steps > 5_000_000:
        raise ActsimInputError(
            f"time.step: {time_step:g} s gives {n_steps} steps over {total:g} s (allowed <= 5e6); use a longer step"
        )

    target = None
    rt = top.table("report", default={})
    if rt.has("target_bend_angle"):
        target = rt.quantity("target_bend_angle", "angle")
    rt.finish()

    extras = {}
    info = {"materials": list(materials), "layers": [layer.name for layer in layers], "sources": names,
            "n_steps": len(protocol), "free_length": strip.free_length, "width": strip.width}
    for section, (module, func) in SECTION_PARSERS.items():
        if top.has(section):
            import importlib

            try:
                parser = getattr(importlib.import_module(module), func)
            except (ImportError, AttributeError):
                raise ActsimInputError(f"{section}: this section is not supported by this actsim installation") from None
            extras[section] = parser(top.raw(section), field=section, base_dir=base, scenario_info=info)

    top.finish()
    return Scenario(
        title=title, strip=strip, layers=tuple(layers), sources=tuple(sources), protocol=tuple(protocol),
        optics=optics, heat=heat, output_interval=output_interval, time_step=time_step, text=text, path=str(path),
        description=description, target_bend_angle=target, extras=extras, base_dir=str(base),
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
    if not p.is_file():
        raise ActsimInputError(f"scenario: file '{p}' does not exist")
    try:
        text = p.read_text(encoding="utf-8")
    except UnicodeDecodeError:
        raise ActsimInputError(f"scenario: '{p}' is not a UTF-8 text (TOML) file") from None
    return parse_scenario(text, path=p)


# ----------------------------------------------------------------------------
# Overrides: change any field of a scenario by its dotted path
# ----------------------------------------------------------------------------

_PATH_TOKEN = re.compile(r"([^.\[\]]+)|\[([^\]]+)\]")


def split_field_path(path: str):
    """Split ``"layers[1].thickness"`` or ``"layers[active film].thickness"`` into tokens."""
    tokens = []
    for name, index in _PATH_TOKEN.findall(path):
        tokens.append(name if name else ("[", index))
    if not tokens:
        raise ActsimInputError(f"field path '{path}' is empty")
    return tokens


def _descend(container, token, path, *, create=False):
    if isinstance(token, tuple):
        index = token[1].strip()
        if not isinstance(container, list):
            raise ActsimInputError(f"{path}: '[{index}]' used on something that is not a list")
        if index.lstrip("-").isdigit():
            i = int(index)
            if not -len(container) <= i < len(container):
                raise ActsimInputError(f"{path}: index {i} is out of range (the list has {len(container)} entries)")
            return container, i
        names = [item.get("name") if isinstance(item, dict) else None for item in container]
        if index in names:
            return container, names.index(index)
        hint = difflib.get_close_matches(index, [n for n in names if n], n=1)
        extra = f"; did you mean '{hint[0]}'?" if hint else f"; names are: {', '.join(n for n in names if n)}"
        raise ActsimInputError(f"{path}: no entry named '{index}'{extra}")
    if not isinstance(container, dict):
        raise ActsimInputError(f"{path}: '{token}' used on something that is not a table")
    if token not in container and not create:
        hint = difflib.get_close_matches(token, list(container), n=1)
        extra = f"; did you mean '{hint[0]}'?" if hint else f"; fields here: {', '.join(container)}"
        raise ActsimInputError(f"{path}: no field '{token}'{extra}")
    return container, token


def apply_overrides(scenario: Scenario, overrides: dict) -> Scenario:
    """A new scenario with some fields replaced, validated like a file.

    Parameters
    ----------
    scenario : Scenario
        The base scenario (its TOML text is the starting point).
    overrides : dict
        Dotted field path -> value as it would be written in the file, e.g.
        ``{"layers[1].thickness": "30 um", "materials.film.photo_strain": -0.02,
        "protocol[0].light.lamp": "80 mW/cm^2"}``. List entries are addressed
        by index or by ``name``. The last field may be new (an optional field
        not in the file); every table on the way must exist.

    Returns
    -------
    Scenario
        Parsed from the modified TOML, so every value is checked exactly as in
        a scenario file; its ``text`` is the modified TOML.
    """
    import copy

    import tomli_w

    raw = copy.deepcopy(tomllib.loads(scenario.text))
    for path, value in overrides.items():
        tokens = split_field_path(path)
        node = raw
        for tok in tokens[:-1]:
            parent, key = _descend(node, tok, path)
            if key == "light" and isinstance(parent[key], list):
                # the list form ["lamp", ...] means each source at its own irradiance: make it a table
                parent[key] = {name: "on" for name in parent[key]}
            node = parent[key]
        parent, key = _descend(node, tokens[-1], path, create=True)
        if hasattr(value, "units") and hasattr(value, "magnitude"):
            value = f"{value.magnitude!r} {value.units:~}"
        elif isinstance(value, (np.floating, np.integer)):
            value = value.item()
        parent[key] = value
    text = tomli_w.dumps(raw)
    base = scenario.base_dir or (Path(scenario.path).parent if scenario.path else Path.cwd())
    return parse_scenario(text, path=scenario.path, base_dir=base)

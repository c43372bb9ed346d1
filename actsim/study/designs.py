"""The designs of a sweep, built from one parsed scenario: each swept field patches only what it changes.

:class:`DesignBuilder` parses nothing per design. For every swept field path it
knows (see :data:`MAPPED_FIELDS`) it holds a reader of the value as written
(the unit string is parsed once per unit, then a number times the factor; see
:func:`si_reader`) and the stage objects the field feeds:

- ``protocol[i].light.NAME`` (irradiance of a source in a step): the row ``i``
  of ``schedule.step_irradiance`` (that source) and of ``schedule.step_flux``
  (the beams of that source), recomputed with :func:`actsim.spectra.photon_flux`
  exactly as :func:`actsim.schedule.build_schedule` does;
- a material property (``materials.NAME.modulus``, ``...photo_strain``,
  ``...conductivity``, a constant absorptivity or quantum yield, ...): the
  :class:`~actsim.scenario.Material` is replaced (``dataclasses.replace``) in
  every layer that uses it, and only the stage builders that read that
  property are called again;
- geometry (``layers[X].thickness``, ``layers[X].cells``,
  ``layers[X].initial_conversion``, ``strip.free_length``, ``strip.width``):
  the :class:`~actsim.scenario.Layer` or :class:`~actsim.scenario.Strip` is
  replaced and the grid and the stage objects built on it are rebuilt;
- ``sources[X].wavelength`` (line or Gaussian sources): the bands, then the
  optics, photoreaction and schedule objects;
- ``protocol[i].duration``: the schedule and the heat parameters (and the
  default output interval and step when ``[time]`` does not give them).

Every other field (and any value the fast readers are not sure of) goes the
general way: :func:`actsim.scenario.apply_overrides` and
:func:`actsim.solver.build_problem`. A value that may be out of its allowed
range, or a cross-field rule that may be broken, is also sent the general way,
so an invalid design fails with exactly the one-line error of the scenario
parser. The stage objects are built by the stages' own builders from a
scenario changed with ``dataclasses.replace``, so a design built here is
bitwise the design :func:`~actsim.solver.build_problem` builds from the
re-parsed scenario (``tests/test_sweep_designs.py`` checks it for every kind of
field). As a guard against a stage that starts to read a field this map does
not know about, the first design of every builder is also built the general
way and compared array by array; on a difference the builder warns
(:class:`~actsim.errors.ActsimWarning`) and builds every design the general way.
"""

from __future__ import annotations

import math
import tomllib
import warnings
from dataclasses import dataclass, replace

import numpy as np

from ..errors import ActsimInputError, ActsimWarning
from ..scenario.limits import SIZE_LIMITS, check_time_counts, limit
from ..units import SI_UNITS, parse_dimensionless, parse_quantity
from .values import NUMBER_WITH_UNIT

__all__ = ["MAPPED_FIELDS", "DesignBuilder", "si_reader", "problems_equal"]

#: Stage objects in the order they are built (each may read the ones before it).
STAGE_ORDER = ("grid", "light", "photo", "schedule", "heat", "material")

#: Stage objects rebuilt when the cells of a layer change (their arrays have one row per cell).
GRID_STAGES = frozenset({"grid", "light", "photo", "heat", "material"})

#: Stage objects rebuilt when only cell widths change (a layer thickness): the grid, the optics (its
#: optical-depth-per-cell check) and the heat stage (its Crank-Nicolson step check); the photoreaction
#: and material objects read the layer of each cell only.
THICKNESS_STAGES = frozenset({"grid", "light", "heat"})

# material property -> (reader kind, stages, needs an active material, needs heat); the ranges are those of the
# parser (actsim.scenario.limits.LIMITS["materials.NAME.<property>"]); kind None = dimensionless number
_MATERIAL_FIELDS = {
    "modulus": ("pressure", {"material"}, False, False),
    "product_modulus": ("pressure", {"material"}, False, False),
    "poisson_ratio": (None, {"material"}, False, False),
    "refractive_index": (None, {"light"}, False, False),
    "chromophore_concentration": ("concentration", {"light"}, True, False),
    "photo_strain": (None, {"material"}, True, False),
    "thermal_back_rate": ("rate", {"photo"}, False, False),
    "reactive_fraction": (None, {"photo"}, True, False),
    "conductivity": ("conductivity", {"heat"}, False, False),
    "density": ("density", {"heat"}, False, False),
    "specific_heat": ("heat_capacity", {"heat"}, False, False),
    "heat_fraction": (None, {"heat"}, False, False),
    "thermal_expansion": ("thermal_expansion", {"material"}, False, True),
    "back_reaction_activation_energy": ("energy_per_mol", {"photo"}, False, True),
    "network_modulus": ("pressure", {"material"}, True, False),
}

# spectral material properties given as one constant: (kind, stages), ranges as _MATERIAL_FIELDS; all need an active material
# except the background absorption
_SPECTRAL_FIELDS = {
    "background_absorption": ("absorption_coefficient", {"light"}),
    "reactant_absorptivity": ("molar_absorptivity", {"light"}),
    "product_absorptivity": ("molar_absorptivity", {"light"}),
    "forward_quantum_yield": (None, {"photo"}),
    "backward_quantum_yield": (None, {"photo"}),
}

#: Field paths built without re-parsing (patterns; NAME and X are a name or an index), the rest go the general way.
MAPPED_FIELDS = (
    "protocol[i].light.NAME", "protocol[i].duration",
    "layers[X].thickness", "layers[X].cells", "layers[X].initial_conversion",
    "strip.free_length", "strip.width", "sources[X].wavelength",
    *(f"materials.NAME.{k}" for k in _MATERIAL_FIELDS), *(f"materials.NAME.{k}" for k in _SPECTRAL_FIELDS),
)


#: (unit as written, kind) -> SI factor, or None where the unit is read value by value (offset scales, or a
#: unit whose factor did not reproduce the full parse of a value).
_FACTORS: dict = {}


class _General(Exception):
    """This design (or value) goes the general way: apply_overrides + build_problem."""


def _unit_factor(unit, kind):
    key = (unit, kind)
    if key not in _FACTORS:
        try:
            factor = parse_quantity(f"1 {unit}", field="unit", kind=kind)
        except ActsimInputError:
            factor = None
        if factor is not None:
            # the full parse of a value is (number * 1 unit) converted with the same factor: check it on a few
            # numbers (an offset scale such as degC fails here and is read value by value)
            for probe in ("3.7", "0.1", "123.456e-3", "7"):
                if float(probe) * factor != parse_quantity(f"{probe} {unit}", field="unit", kind=kind):
                    factor = None
                    break
        _FACTORS[key] = factor
    return _FACTORS[key]


def si_reader(kind, *, lo=None, hi=None, lo_open=False, hi_open=False):
    """A reader of one field's values as written -> SI float, as the scenario parser reads them.

    Parameters
    ----------
    kind : str or None
        A key of :data:`actsim.units.SI_UNITS` (a quantity with a unit), or None for a
        dimensionless number (:func:`actsim.units.parse_dimensionless`).
    lo, hi : float, optional
        Allowed range in SI (as the parser's ``check_range``) [SI unit of ``kind``].
    lo_open, hi_open : bool
        Whether the ends themselves are refused.

    Returns
    -------
    callable
        ``read(value) -> float``; raises ``_General`` when the value is not certainly valid
        (the general path then gives the parser's own one-line error). A number with a
        unit is read as the number times the factor of its unit, the unit being parsed
        once (the factor is that of :func:`actsim.units.parse_quantity`, which multiplies
        the number by the same factor, so the result is bitwise the same).
    """

    def read(value):
        if isinstance(value, bool) or not isinstance(value, (str, int, float)):
            raise _General
        if kind is None:
            try:
                v = parse_dimensionless(value, field="value")
            except ActsimInputError:
                raise _General from None
        else:
            if not isinstance(value, str):
                raise _General
            m = NUMBER_WITH_UNIT.match(value)
            factor = _unit_factor(m.group(2), kind) if m else None
            if factor is not None:
                v = float(m.group(1)) * factor
            else:
                try:
                    v = parse_quantity(value, field="value", kind=kind)
                except ActsimInputError:
                    raise _General from None
            if not math.isfinite(v):
                raise _General
        if lo is not None and (v < lo or (lo_open and v == lo)):
            raise _General
        if hi is not None and (v > hi or (hi_open and v == hi)):
            raise _General
        return v

    return read


@dataclass
class _Edit:
    """The changes of one design, gathered before the scenario is rebuilt."""

    layers: dict  # layer index -> {field: value}
    materials: dict  # material name -> {field: value}
    sources: dict  # source index -> wavelength
    steps: dict  # step index -> {"duration": s, "irradiance": {source index: W m-2}}
    strip: dict
    stages: set
    flux: list  # (step, source) pairs whose irradiance changed


class DesignBuilder:
    """Builds the Problems of many variants of one parsed scenario, patching only what each swept field changes.

    Parameters
    ----------
    base : Scenario
        The parsed base scenario.
    paths : iterable of str
        The swept field paths (as :func:`actsim.scenario.apply_overrides` takes them).
    check : bool
        Build the first design also the general way and compare (see the module notes).

    Attributes
    ----------
    mapped : dict
        Field path -> whether it is built without re-parsing.
    """

    def __init__(self, base, paths, *, check=True):
        from ..solver import build_problem

        from ..errors import ActsimError

        self.base = base
        self.raw = tomllib.loads(base.text)
        self._check = check
        self._fast = True
        try:
            self.base_problem = build_problem(base)
        except ActsimError:  # the base itself is not a valid design (its swept values may be): re-parse each
            self.base_problem = None
            self._fast = False
        self._specs = {}
        self.mapped = {}
        for path in paths:
            try:
                spec = self._classify(path)
            except (ActsimInputError, _General):
                spec = None
            self._specs[path] = spec
            self.mapped[path] = spec is not None
        if not all(self.mapped.values()):
            self._fast = False

    # ------------------------------------------------------------------ field map
    def _classify(self, path):
        """(reader, apply) of one field path, or None (general way)."""
        from ..scenario import descend, split_field_path

        sc, raw = self.base, self.raw
        tok = split_field_path(path)
        names = [t if isinstance(t, str) else None for t in tok]
        if len(tok) == 4 and names[0] == "protocol" and names[2] == "light" and names[3] is not None:
            steps = _entries(raw, "protocol", path)
            _, i = descend(steps, tok[1], path)
            i %= len(steps)
            if not isinstance(steps[i], dict) or "light" not in steps[i]:
                return None
            src = [s.name for s in sc.sources]
            if tok[3] not in src:
                return None
            j = src.index(tok[3])
            irr = si_reader("irradiance", **limit("protocol[].light.NAME"))
            default = sc.sources[j].irradiance

            def read(value):
                return default if value == "on" else irr(value)

            def apply(e, v):
                e.steps.setdefault(i, {}).setdefault("irradiance", {})[j] = v
                e.flux.append((i, j))

            return read, apply
        if len(tok) == 3 and names[0] == "protocol" and names[2] == "duration":
            steps = _entries(raw, "protocol", path)
            _, i = descend(steps, tok[1], path)
            i %= len(steps)

            def apply(e, v):
                e.steps.setdefault(i, {})["duration"] = v
                e.stages.update(("schedule", "heat"))

            return si_reader("time", **limit("protocol[].duration")), apply
        if len(tok) == 3 and names[0] == "layers" and names[2] in ("thickness", "cells", "initial_conversion"):
            layers = _entries(raw, "layers", path)
            _, li = descend(layers, tok[1], path)
            li %= len(layers)
            key = names[2]
            if key == "thickness":
                if any(st.hold == "bend" for st in sc.protocol):  # the bend limit depends on the stack thickness
                    return None
                read = si_reader("length", **limit("layers[].thickness"))
            elif key == "cells":
                def read(value):
                    if isinstance(value, bool) or not isinstance(value, int) or not 1 <= value <= limit("layers[].cells")["hi"]:
                        raise _General
                    return int(value)
            else:
                if not sc.layers[li].material.is_active:
                    return None
                read = si_reader(None, **limit("layers[].initial_conversion"))

            def apply(e, v):
                e.layers.setdefault(li, {})[key] = v
                e.stages.update({"cells": GRID_STAGES, "thickness": THICKNESS_STAGES}.get(key, ("photo",)))

            return read, apply
        if len(tok) == 2 and names[0] == "strip" and names[1] in ("free_length", "width"):
            key = names[1]

            def apply(e, v):
                e.strip[key] = v

            return si_reader("length", **limit(f"strip.{key}")), apply
        if len(tok) == 3 and names[0] == "sources" and names[2] == "wavelength":
            srcs = _entries(raw, "sources", path)
            _, j = descend(srcs, tok[1], path)
            j %= len(srcs)
            if srcs[j].get("kind", "line") not in ("line", "gaussian"):
                return None

            def apply(e, v):
                e.sources[j] = v
                e.stages.update(("light", "photo", "schedule"))

            return si_reader("wavelength", **limit("sources[].wavelength")), apply
        if len(tok) == 3 and names[0] == "materials" and names[1] is not None and names[2] is not None:
            mats = raw.get("materials")
            if not isinstance(mats, dict):
                return None
            descend(mats, names[1], path)
            mname, key = names[1], names[2]
            users = [layer.material for layer in sc.layers if layer.material.name == mname]
            mat = users[0] if users else None
            active = mat.is_active if mat is not None else False
            if key in _MATERIAL_FIELDS:
                kind, stages, need_active, need_heat = _MATERIAL_FIELDS[key]
                if mat is None or (need_active and not active) or (need_heat and not sc.heat.enabled):
                    return None
                if key in ("modulus", "product_modulus") and mat.temperature_modulus is not None:
                    return None
                read = si_reader(kind, **limit(f"materials.NAME.{key}"))
            elif key in _SPECTRAL_FIELDS:
                kind, stages = _SPECTRAL_FIELDS[key]
                if mat is None or (key != "background_absorption" and not active):
                    return None
                read = si_reader(kind, **limit(f"materials.NAME.{key}"))
            else:
                return None

            def apply(e, v):
                e.materials.setdefault(mname, {})[key] = v
                e.stages.update(stages)

            return read, apply
        return None

    # ------------------------------------------------------------------ one design
    def _general(self, overrides):
        from ..scenario import apply_overrides
        from ..solver import build_problem

        sc = apply_overrides(self.base, overrides)
        return build_problem(sc), sc

    def build(self, overrides):
        """The Problem and the scenario of one design.

        Parameters
        ----------
        overrides : dict
            Field path -> value as written (as :func:`actsim.scenario.apply_overrides`).

        Returns
        -------
        (Problem, Scenario)
            The scenario of a design built without re-parsing keeps the base ``text``;
            its stage fields, strip and heat settings are those of the design.

        Raises
        ------
        ActsimInputError
            An invalid design: the scenario parser's one-line error.
        """
        if not self._fast or any(p not in self._specs for p in overrides):
            return self._general(overrides)
        try:
            problem, sc = self._patched(overrides)
        except _General:
            return self._general(overrides)
        if self._check:
            self._check = False
            try:
                ref, ref_sc = self._general(overrides)
            except ActsimInputError as exc:  # refused by the parser but not by the patching: a gap in the map
                warnings.warn(ActsimWarning(
                    f"sweep: a design patched in {', '.join(overrides)} was accepted but the parser refuses it "
                    f"({exc}); every design is built by re-parsing (slower)"), stacklevel=2)
                self._fast = False
                raise
            diff = problems_equal(problem, ref)
            if diff is None and (sc.strip != ref_sc.strip or sc.heat != ref_sc.heat):
                diff = "strip or heat settings"
            if diff is not None:
                warnings.warn(ActsimWarning(
                    f"sweep: the design built by patching {', '.join(overrides)} differs from the re-parsed one in "
                    f"{diff}; every design is built by re-parsing (slower)"), stacklevel=2)
                self._fast = False
                return ref, ref_sc
        return problem, sc

    def _patched(self, overrides):
        from .. import kinetics, material, optics, thermal
        from ..grid import build_grid
        from ..schedule import build_schedule
        from ..solver import Problem
        from ..spectra import SpectralFunction, gaussian_bands, line_bands

        e = _Edit(layers={}, materials={}, sources={}, steps={}, strip={}, stages=set(), flux=[])
        for path, value in overrides.items():
            read, apply = self._specs[path]
            apply(e, read(value))
        base = self.base
        changes = {}
        if e.strip:
            changes["strip"] = replace(base.strip, **e.strip)
        layers = list(base.layers)
        if e.materials:
            new_mats = {}
            for mname, ch in e.materials.items():
                m = next(layer.material for layer in base.layers if layer.material.name == mname)
                kw = {}
                for key, v in ch.items():
                    if key in _SPECTRAL_FIELDS:  # a constant, as the parser builds it from one value
                        kind = _SPECTRAL_FIELDS[key][0]
                        kw[key] = SpectralFunction(field=f"materials.{mname}.{key}", kind="constant", constant=v,
                                                   unit=SI_UNITS[kind][0] if kind else "1")
                    elif key not in ("modulus", "product_modulus"):
                        kw[key] = v
                if "modulus" in ch or "product_modulus" in ch:
                    mod = ch.get("modulus", m.modulus)
                    given = "product_modulus" in self.raw["materials"][mname]
                    pm = ch.get("product_modulus", m.product_modulus if given else mod)
                    kw.update(modulus=mod, product_modulus=pm, product_modulus_ratio=pm / mod)
                new_mats[mname] = replace(m, **kw)
            layers = [replace(layer, material=new_mats[layer.material.name]) if layer.material.name in new_mats
                      else layer for layer in layers]
        for li, ch in e.layers.items():
            layers[li] = replace(layers[li], **ch)
        for li, layer in enumerate(layers):  # the parser's cross-field rules of a layer
            if layer.initial_conversion > 0 and not layer.material.is_active:
                raise _General
            if layer.initial_conversion > layer.material.reactive_fraction:
                raise _General
        if e.materials or e.layers:
            changes["layers"] = tuple(layers)
        if e.sources:
            srcs = list(base.sources)
            for j, lam in e.sources.items():
                raw_src = self.raw["sources"][j]
                if raw_src.get("kind", "line") == "line":
                    wl, frac = line_bands(wavelength=lam)
                    desc = f"line at {lam * 1e9:.4g} nm"
                else:
                    fwhm = parse_quantity(raw_src["fwhm"], field="fwhm", kind="wavelength")
                    if fwhm > lam / 2:
                        raise _General
                    wl, frac = gaussian_bands(centre=lam, fwhm=fwhm, n_bands=srcs[j].band_wavelength.size)
                    desc = f"Gaussian band at {lam * 1e9:.4g} nm, FWHM {fwhm * 1e9:.3g} nm"
                srcs[j] = replace(srcs[j], band_wavelength=wl, band_fraction=frac, description=desc)
            changes["sources"] = tuple(srcs)
        if e.steps:
            steps = list(base.protocol)
            for i, ch in e.steps.items():
                kw = {}
                if "duration" in ch:
                    kw["duration"] = ch["duration"]
                if "irradiance" in ch:
                    irr = list(steps[i].irradiance)
                    for j, v in ch["irradiance"].items():
                        irr[j] = v
                    kw["irradiance"] = tuple(irr)
                steps[i] = replace(steps[i], **kw)
            changes["protocol"] = tuple(steps)
            if any("duration" in ch for ch in e.steps.values()):
                changes.update(self._time_settings(steps, layers))
        if "cells" in {k for ch in e.layers.values() for k in ch} and "protocol" not in changes:
            self._time_settings(list(base.protocol), layers)  # the limit on output times x cells
        sc = replace(base, **changes) if changes else base
        p = self.base_problem
        built = dict(grid=p.grid, light=p.light, photo=p.photo, schedule=p.schedule, heat=p.heat, material=p.material)
        if "grid" in e.stages:
            built["grid"] = build_grid(sc)
        if "light" in e.stages:
            built["light"] = optics.light_params(sc, built["grid"])
        if "photo" in e.stages:
            built["photo"] = kinetics.photo_params(sc, built["grid"], built["light"])
        if "schedule" in e.stages:
            built["schedule"] = build_schedule(sc, built["light"])
        elif e.flux:
            built["schedule"] = self._patch_flux(p.schedule, p.light, sc, e.flux)
        if "heat" in e.stages:
            built["heat"] = thermal.heat_params(sc, built["grid"], built["schedule"])
        if "material" in e.stages:
            built["material"] = material.material_params(sc, built["grid"])
        return Problem(**built), sc

    def _time_settings(self, steps, layers):
        """Output interval and step of a changed protocol, with the parser's limits (else the general way)."""
        tt = self.raw.get("time", {})
        sc = self.base
        total = sum(s.duration for s in steps)
        out = {}
        output_interval = sc.output_interval if "output_interval" in tt else total / 200.0
        if "output_interval" not in tt:
            out["output_interval"] = output_interval
        if sum(layer.cells for layer in layers) > SIZE_LIMITS["total_cells"]:
            raise _General
        try:  # the parser's limits on the protocol's length, output times and steps
            check_time_counts(durations=[s.duration for s in steps], output_interval=output_interval,
                              time_step=sc.time_step, fixed=not sc.time_tolerance,
                              n_cells=sum(layer.cells for layer in layers))
        except ActsimInputError:
            raise _General from None
        return out

    @staticmethod
    def _patch_flux(schedule, light, sc, flux):
        """The schedule with new irradiances of some (step, source) pairs, as build_schedule computes them."""
        from ..spectra import photon_flux

        step_irr = schedule.step_irradiance.copy()
        step_flux = schedule.step_flux.copy()
        for i, j in flux:
            step_irr[i, j] = sc.protocol[i].irradiance[j]
            for b in np.flatnonzero(light.beam_source == j):
                step_flux[i, b] = photon_flux(irradiance=step_irr[i:i + 1, j] * light.beam_fraction[b],
                                              wavelength=light.beam_wavelength[b])[0]
        return schedule._replace(step_irradiance=step_irr, step_flux=step_flux)


def _entries(raw, name, path):
    """The list ``raw[name]`` of the raw TOML (an [[array of tables]]), or the general way."""
    value = raw.get(name)
    if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
        raise _General
    return value


def problems_equal(a, b):
    """None when two Problems hold bitwise equal arrays (same shapes and dtypes), else the first differing field."""
    for stage in ("grid", "light", "photo", "heat", "material", "schedule"):
        pa, pb = getattr(a, stage), getattr(b, stage)
        if type(pa) is not type(pb):
            return stage
        for name in pa._fields:
            x, y = np.asarray(getattr(pa, name)), np.asarray(getattr(pb, name))
            if x.dtype != y.dtype or x.shape != y.shape or not np.array_equal(x, y, equal_nan=x.dtype.kind in "fc"):
                return f"{stage}.{name}"
    return None

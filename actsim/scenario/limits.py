"""The allowed range of every numeric scenario field, and the size limits of a scenario.

Every numeric field of a scenario has a lower and an upper limit (:data:`LIMITS`), checked when the
field is read, so that a value far outside what the models describe is refused as one line before any
work is done, and no derived quantity (a count of steps, a diffusion time, a peak temperature)
overflows. The sizes that set memory and run time (file size, nesting depth, numbers of materials,
layers, sources, steps, cells, output times and time steps) are bounded before anything is allocated
(:data:`SIZE_LIMITS`, :func:`check_time_counts`), and a run whose work estimate (cells x time steps)
exceeds :data:`WORK_LIMIT` is refused unless the caller allows it (:func:`check_work`;
``simulate(..., allow_large=True)``, ``actsim run --yes``).

The field table of ``docs/scenario.md`` ("Limits of every numeric field") is generated from
:data:`LIMITS` by :func:`limits_markdown` (``python -m actsim.scenario.limits``); a test keeps the two
equal.

Each limit carries its reason: a physical one, or "common practice, no source" where the bound is a
generous rule of thumb that only keeps the arithmetic finite.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import ActsimInputError

__all__ = ["Limit", "LIMITS", "SIZE_LIMITS", "WORK_LIMIT", "limit", "check_count", "check_time_counts",
           "work_estimate", "check_work", "nesting_depth", "limits_markdown"]


@dataclass(frozen=True)
class Limit:
    """The allowed range of one numeric field, in the SI unit of its kind.

    Attributes
    ----------
    kind : str or None
        A key of :data:`actsim.units.SI_UNITS`; None for a dimensionless number, ``"integer"`` for a count.
    lo, hi : float
        Lowest and highest allowed value [SI unit of ``kind``].
    lo_open, hi_open : bool
        Whether ``lo`` / ``hi`` themselves are refused.
    reason : str
        Why these limits (physics, or "common practice, no source").
    """

    kind: str | None
    lo: float
    hi: float
    lo_open: bool = False
    hi_open: bool = False
    reason: str = ""

    def kw(self) -> dict:
        """``lo``, ``hi``, ``lo_open``, ``hi_open`` as keyword arguments of the range checks."""
        return dict(lo=self.lo, hi=self.hi, lo_open=self.lo_open, hi_open=self.hi_open)


_NOSRC = "common practice, no source"
_MODULUS = ("from a soft gel (1 kPa) to diamond (about 1.1 TPa, from memory); outside it the layered-beam "
            "model of a polymer strip does not apply")
_TEMPERATURE = ("1 K to 2000 K: every polymer has decomposed far below 2000 K; the bounds keep exp(Ea/RT) and "
                "the radiation coefficient 4 eps sigma T^3 finite (" + _NOSRC + ")")
_H = ("up to 1e6 W/(m^2 K): above forced boiling of water (about 1e5, from memory); 0 is an insulated face")
_IRRADIANCE = ("0 to 1e7 W/m^2 (1 kW/cm^2): a continuous beam of that irradiance ablates a polymer within "
               "milliseconds, and the model has no ablation or melting (" + _NOSRC + ")")
_WAVELENGTH = "100 nm (vacuum UV) to 20 um (thermal infrared): the range of the optics' tabulated data"
_FWHM = "0.1 nm (a narrow line filter) to 1000 nm; narrower bands are given as kind = \"line\""
_DURATION = ("1 us to 1e7 s (about 116 days): shorter steps are lost in the round-off of absolute times, longer "
             "ones are beyond the model (no ageing or creep) (" + _NOSRC + ")")

#: Allowed range of every numeric scenario field, by field path (``[]`` stands for any list index,
#: ``NAME`` for any material or source name). Job sections (``[checks]`` ...) have their own limits.
LIMITS: dict[str, Limit] = {
    "strip.free_length": Limit("length", 1e-6, 10.0, reason="1 um to 10 m: a strip far shorter than 1 um is no "
                               "continuum beam, and 10 m is beyond any light-driven strip (" + _NOSRC + ")"),
    "strip.width": Limit("length", 1e-6, 10.0, reason="as free_length"),
    "optics.ambient_refractive_index": Limit(None, 1.0, 4.0, reason="vacuum to the highest indices of "
                                             "transparent solids (germanium about 4, from memory)"),
    "optics.max_cell_optical_depth": Limit(None, 0.0, 20.0, lo_open=True, reason=_NOSRC),
    "optics.bands_per_source": Limit("integer", 1, 200, reason="enough to resolve any source spectrum (" + _NOSRC + ")"),
    "heat.ambient_temperature": Limit("temperature", 1.0, 2000.0, reason=_TEMPERATURE),
    "heat.reference_temperature": Limit("temperature", 1.0, 2000.0, reason=_TEMPERATURE),
    "heat.top_heat_transfer": Limit("heat_transfer_coefficient", 0.0, 1e6, reason=_H),
    "heat.bottom_heat_transfer": Limit("heat_transfer_coefficient", 0.0, 1e6, reason=_H),
    "heat.top_emissivity": Limit(None, 0.0, 1.0, reason="an emissivity is between 0 and 1 (Kirchhoff's law)"),
    "heat.bottom_emissivity": Limit(None, 0.0, 1.0, reason="an emissivity is between 0 and 1 (Kirchhoff's law)"),
    "materials.NAME.modulus": Limit("pressure", 1e3, 1e12, reason=_MODULUS),
    "materials.NAME.product_modulus": Limit("pressure", 1e3, 1e12, reason=_MODULUS),
    "materials.NAME.product_modulus_ratio": Limit(None, 0.0, 100.0, lo_open=True, reason=_NOSRC),
    "materials.NAME.network_modulus": Limit("pressure", 0.0, 1e12, reason="0 (no network) up to diamond's "
                                             "modulus (about 1.1 TPa, from memory)"),
    "materials.NAME.glass_transition.glassy_modulus": Limit("pressure", 1e3, 1e12, reason=_MODULUS),
    "materials.NAME.glass_transition.rubbery_modulus": Limit("pressure", 1e3, 1e12, reason=_MODULUS),
    "materials.NAME.glass_transition.temperature": Limit("temperature", 1.0, 2000.0, reason=_TEMPERATURE),
    "materials.NAME.glass_transition.width": Limit("temperature_difference", 0.1, 1000.0,
                                                   reason="a transition sharper than 0.1 K is below the resolution "
                                                   "of a dynamic mechanical analysis (" + _NOSRC + ")"),
    "materials.NAME.poisson_ratio": Limit(None, 0.0, 0.5, hi_open=True,
                                          reason="0.5 (incompressible) makes the plate modulus E/(1 - nu^2) "
                                          "meaningless for the plane-strain section; auxetic values are not modelled"),
    "materials.NAME.extensibility": Limit(None, 0.0, 1e6, lo_open=True,
                                          reason="Gent's J_m, the largest I1 - 3; rubbers lie between about 20 and "
                                          "200 (Gent 1996), and large values give back the neo-Hookean law"),
    "materials.NAME.refractive_index": Limit(None, 1.0, 4.0, reason="as optics.ambient_refractive_index"),
    "materials.NAME.background_absorption": Limit("absorption_coefficient", 0.0, 1e9,
                                                  reason="up to an absorption length of 1 nm (metals absorb within "
                                                  "about 10 nm, from memory)"),
    "materials.NAME.chromophore_concentration": Limit("concentration", 0.0, 2e4,
                                                      reason="a neat chromophore of molar mass >= 75 g/mol at a "
                                                      "density <= 1.5 g/cm^3 is at most 20 mol/L"),
    "materials.NAME.reactant_absorptivity": Limit("molar_absorptivity", 0.0, 1e5,
                                                  reason="1e6 L/(mol cm): above the strongest organic dyes "
                                                  "(a few 1e5 L/(mol cm), from memory)"),
    "materials.NAME.product_absorptivity": Limit("molar_absorptivity", 0.0, 1e5, reason="as reactant_absorptivity"),
    "materials.NAME.forward_quantum_yield": Limit(None, 0.0, 1.0, reason="a quantum yield is a probability"),
    "materials.NAME.backward_quantum_yield": Limit(None, 0.0, 1.0, reason="a quantum yield is a probability"),
    "materials.NAME.photo_strain": Limit(None, -0.5, 0.5, reason="beyond +-50 % the small-strain model is "
                                         "meaningless (" + _NOSRC + ")"),
    "materials.NAME.thermal_back_rate": Limit("rate", 0.0, 1e6, reason="up to a 1 us thermal lifetime, the fastest "
                                              "thermal back reactions of photoswitches (from memory)"),
    "materials.NAME.reactive_fraction": Limit(None, 0.0, 1.0, lo_open=True, reason="a fraction of the chromophore"),
    "materials.NAME.conductivity": Limit("conductivity", 1e-3, 5e3,
                                         reason="from below aerogels (about 0.01 W/(m K)) to above diamond "
                                         "(about 2000 W/(m K)), from memory"),
    "materials.NAME.density": Limit("density", 1.0, 3e4, reason="from aerogels (a few kg/m^3) to above osmium "
                                    "(22600 kg/m^3), from memory"),
    "materials.NAME.specific_heat": Limit("heat_capacity", 10.0, 1e5,
                                          reason="from below lead (130 J/(kg K)) to above hydrogen "
                                          "(14300 J/(kg K)), from memory"),
    "materials.NAME.thermal_expansion": Limit("thermal_expansion", -1e-3, 1e-2, reason=_NOSRC),
    "materials.NAME.heat_fraction": Limit(None, 0.0, 1.0, reason="a fraction of the absorbed power"),
    "materials.NAME.back_reaction_activation_energy": Limit("energy_per_mol", 0.0, 1e6,
                                                            reason="1000 kJ/mol is above any covalent bond "
                                                            "energy (from memory)"),
    "materials.NAME.relaxation.terms[].modulus": Limit("pressure", 0.0, 1e12, reason="0 (an elastic term) up to "
                                                        "diamond's modulus (about 1.1 TPa, from memory)"),
    "materials.NAME.relaxation.terms[].time": Limit("time", 1e-12, 1e30,
                                                    reason="from picoseconds (the fastest segmental motions, from "
                                                    "memory) to far beyond any protocol (an elastic term); the "
                                                    "shift a_T moves them further (" + _NOSRC + ")"),
    "materials.NAME.relaxation.reference_temperature": Limit("temperature", 1.0, 2000.0, reason=_TEMPERATURE),
    "materials.NAME.relaxation.wlf_c1": Limit(None, 0.0, 100.0, lo_open=True,
                                              reason="17.44 is the 'universal' value about Tg (Williams, Landel "
                                              "and Ferry 1955); measured ones are a few to about 40 (from memory)"),
    "materials.NAME.relaxation.wlf_c2": Limit("temperature_difference", 1.0, 1000.0,
                                              reason="51.6 K is the 'universal' value about Tg (Williams, Landel "
                                              "and Ferry 1955); measured ones are tens to a few hundred K (from "
                                              "memory)"),
    "materials.NAME.relaxation.shift_table.log10_shift": Limit(None, -300.0, 300.0,
                                                              reason="ln a_T is clamped at +-700 (log10 a_T about "
                                                              "304) anyway; measured shift factors span some 20 "
                                                              "decades (from memory)"),
    "materials.NAME.relaxation.activation_energy": Limit("energy_per_mol", 0.0, 1e7,
                                                         reason="secondary relaxations take tens of kJ/mol, an "
                                                         "Arrhenius fit through Tg up to several MJ/mol (from "
                                                         "memory)"),
    "materials.NAME.liquid_crystal.clearing_temperature": Limit("temperature", 200.0, 700.0,
                                                              reason="nematic-isotropic transitions of liquid-crystal "
                                                              "networks lie from below room temperature to about "
                                                              "300 degC, where they decompose (from memory)"),
    "materials.NAME.liquid_crystal.clearing_shift": Limit("temperature_difference", 0.0, 500.0,
                                                        reason="the drop of T_NI at full conversion; also below the "
                                                        "clearing temperature less 1 K (" + _NOSRC + ")"),
    "materials.NAME.liquid_crystal.haller_exponent": Limit(None, 0.05, 1.0,
                                                         reason="Haller's exponent is about 0.15 to 0.25 for "
                                                         "nematics (from memory); 1 is a linear fall"),
    "materials.NAME.liquid_crystal.preparation_temperature": Limit("temperature", 1.0, 700.0,
                                                                 reason="1 K to 700 K; also below the "
                                                                 "clearing temperature (the network is made nematic)"),
    "materials.NAME.liquid_crystal.strain_per_order": Limit(None, -2.0, 2.0,
                                                          reason="glassy networks give about 0.01 to 0.1 per unit "
                                                          "of Q (from memory); past 2 the small-strain section is "
                                                          "meaningless (" + _NOSRC + ")"),
    "materials.NAME.liquid_crystal.strain_across_per_order": Limit(None, -2.0, 2.0,
                                                                 reason="as strain_per_order"),
    "materials.NAME.liquid_crystal.birefringence": Limit(None, 0.0, 0.6,
                                                       reason="n_e - n_o of nematics is about 0.05 to 0.4 (from "
                                                       "memory)"),
    "materials.NAME.liquid_crystal.reactant_order": Limit(None, -0.5, 1.0,
                                                        reason="an order parameter lies between -1/2 (moments "
                                                        "across the director) and 1; the species' order is this "
                                                        "share of Q"),
    "materials.NAME.liquid_crystal.product_order": Limit(None, -0.5, 1.0, reason="as reactant_order"),
    "materials.NAME.liquid_crystal.absorption_ratio_reactant": Limit(None, 0.0, 1.0,
                                                                   reason="absorption across over along the "
                                                                   "transition moment: 0 (a pure moment) to 1 "
                                                                   "(isotropic); a moment across the long axis is "
                                                                   "a negative order"),
    "materials.NAME.liquid_crystal.absorption_ratio_product": Limit(None, 0.0, 1.0,
                                                                  reason="as absorption_ratio_reactant"),
    "layers[].director.angle": Limit("angle", -2 * math.pi, 2 * math.pi,
                                     reason="one turn either way from the strip axis"),
    "layers[].director.tilt": Limit("angle", -math.pi / 2, math.pi / 2,
                                    reason="out of the plane: 0 planar, 90 deg homeotropic"),
    "layers[].director.table.height": Limit(None, 0.0, 1.0,
                                            reason="height within the layer, 0 bottom face to 1 top face"),
    "sources[].polarisation": Limit("angle", -2 * math.pi, 2 * math.pi,
                                    reason="the electric field's angle from the strip axis, one turn either way"),
    "spectral bands[].centre": Limit("wavelength", 100e-9, 20e-6, reason=_WAVELENGTH),
    "spectral bands[].fwhm": Limit("wavelength", 0.1e-9, 1000e-9, reason=_FWHM),
    "spectral wavelength[]": Limit("wavelength", 100e-9, 20e-6, reason=_WAVELENGTH),
    "layers[].thickness": Limit("length", 1e-9, 0.01, reason="1 nm (a few molecular layers) to 10 mm (a strip "
                                "light bends is far thinner) (" + _NOSRC + ")"),
    "layers[].cells": Limit("integer", 1, 10000, reason="bounds the memory of the (time, cell) outputs"),
    "layers[].initial_conversion": Limit(None, 0.0, 1.0, reason="a fraction of the chromophore"),
    "sources[].irradiance": Limit("irradiance", 0.0, 1e7, reason=_IRRADIANCE),
    "sources[].wavelength": Limit("wavelength", 100e-9, 20e-6, reason=_WAVELENGTH),
    "sources[].fwhm": Limit("wavelength", 0.1e-9, 1000e-9, reason=_FWHM + "; also <= wavelength / 2"),
    "sources[].bands": Limit("integer", 1, 200, reason="as optics.bands_per_source"),
    "protocol[].duration": Limit("time", 1e-6, 1e7, reason=_DURATION),
    "protocol[].light.NAME": Limit("irradiance", 0.0, 1e7, reason=_IRRADIANCE),
    "protocol[].strain": Limit(None, -0.5, 2.0, reason="a stretch of 200 % is about the limit of elastomers "
                               "(" + _NOSRC + ")"),
    "protocol[].curvature": Limit("curvature", -1e10, 1e10,
                                  reason="keeps the arithmetic finite; the surface strain |kappa| h / 2 must "
                                  "also stay <= 200 %"),
    "protocol[].mandrel_radius": Limit("length", 1e-9, 1e3, reason="as curvature; the surface strain h / (2 R) "
                                       "must also stay <= 200 %"),
    "protocol[].ambient_temperature": Limit("temperature", 1.0, 2000.0, reason=_TEMPERATURE),
    "protocol[].top_heat_transfer": Limit("heat_transfer_coefficient", 0.0, 1e6, reason=_H),
    "protocol[].bottom_heat_transfer": Limit("heat_transfer_coefficient", 0.0, 1e6, reason=_H),
    "time.output_interval": Limit("time", 1e-6, 1e7, reason="as protocol[].duration; also <= the whole "
                                  "protocol and at most 1e6 output times"),
    "time.step": Limit("time", 1e-9, 1e7, reason="at most 5e6 steps in all (" + _NOSRC + ")"),
    "time.tolerance": Limit(None, 1e-10, 0.1, reason="tighter than 1e-10 is below the round-off of the states; "
                            "looser than 0.1 is no error control (" + _NOSRC + ")"),
    "report.target_bend_angle": Limit("angle", -20 * math.pi, 20 * math.pi, reason="+-10 turns (" + _NOSRC + ")"),
    "report.front_conversion": Limit(None, 0.0, 1.0, lo_open=True, hi_open=True,
                                     reason="a share of full conversion; 0 and 1 mark no contour"),
    "report.small_strain_limit": Limit(None, 0.0, 1.0, lo_open=True,
                                       reason="a strain; past 100 % no small-strain law is worth a warning (" + _NOSRC
                                       + ")"),
}

#: Sizes of a scenario, checked before anything of that size is read or allocated (common practice, no
#: source: each is far above every bundled scenario and bounds memory and run time).
SIZE_LIMITS: dict[str, int] = {
    "file_bytes": 1_000_000,  # scenario text (UTF-8 bytes); it is stored with every result
    "nesting_depth": 24,  # tables and arrays inside one another
    "materials": 100,
    "layers": 100,
    "sources": 100,
    "protocol_steps": 10_000,
    "table_points": 100_000,  # points of an inline spectral table
    "spectral_bands": 1_000,  # Gaussian bands of one spectral property
    "relaxation_terms": 50,  # Prony terms of one material (a decade apart, 50 span any measured spectrum)
    "total_cells": 100_000,  # cells of all layers
    "output_times": 1_000_000,
    "output_values": 20_000_000,  # output times x cells, per (time, z) field: about 1.1 GB for the seven fields
    "time_steps": 5_000_000,  # fixed time steps over the protocol
}

#: Largest work estimate (cells x time steps, :func:`work_estimate`) run without ``allow_large`` (``--yes``):
#: about a minute of the time loop on one core (common practice, no source).
WORK_LIMIT = 2e9

#: The longest protocol in all [s] (the sum of its step durations); see protocol[].duration.
MAX_TOTAL_DURATION = 1e7


def limit(path: str) -> dict:
    """The range of the field ``path`` (a key of :data:`LIMITS`) as keyword arguments of a range check.

    Examples
    --------
    >>> limit("layers[].thickness")
    {'lo': 1e-09, 'hi': 0.01, 'lo_open': False, 'hi_open': False}
    """
    return LIMITS[path].kw()


def check_count(n: int, what: str, *, field: str, hint: str = "") -> int:
    """Refuse ``n`` items of ``what`` (a key of :data:`SIZE_LIMITS`) above its limit, with one line naming ``field``."""
    most = SIZE_LIMITS[what]
    if n > most:
        raise ActsimInputError(f"{field}: {n} {what.replace('_', ' ')} is too many (allowed <= {most}){hint}")
    return n


def nesting_depth(value, *, stop: int | None = None) -> int:
    """Depth of tables and arrays inside one another in a parsed TOML value (iterative: no recursion).

    Parameters
    ----------
    value : object
        A parsed TOML value (dicts, lists, scalars).
    stop : int, optional
        Stop counting once this depth is exceeded (the result is then ``stop + 1``).
    """
    deepest = 0
    stack = [(value, 1)]
    while stack:
        node, depth = stack.pop()
        if isinstance(node, dict):
            children = node.values()
        elif isinstance(node, list):
            children = node
        else:
            continue
        deepest = max(deepest, depth)
        if stop is not None and deepest > stop:
            return deepest
        stack.extend((child, depth + 1) for child in children if isinstance(child, (dict, list)))
    return deepest


def check_time_counts(*, durations, output_interval: float, time_step: float, fixed: bool, n_cells: int):
    """Output times and time steps of a protocol, refused (one line) above :data:`SIZE_LIMITS` before allocation.

    Parameters
    ----------
    durations : sequence of float
        Duration of each protocol step [s].
    output_interval : float
        Interval between output times [s].
    time_step : float
        Largest time step [s] (inf for error-controlled steps).
    fixed : bool
        Whether the steps are fixed (``time.step``); the count of fixed steps is then bounded too.
    n_cells : int
        Cells of all layers.

    Returns
    -------
    (int, int)
        Output times (an upper bound: every multiple of the interval and every step end) and time steps
        (fixed steps over the protocol plus one per output time; the output times alone when the steps are
        error-controlled).
    """
    total = float(sum(durations))
    if total > MAX_TOTAL_DURATION:
        raise ActsimInputError(f"protocol: the steps last {total:g} s in all (the sum of protocol[].duration; "
                               f"allowed <= {MAX_TOTAL_DURATION:g} s)")
    if output_interval > total:
        raise ActsimInputError(
            f"time.output_interval: {output_interval:g} s is longer than the whole protocol ({total:g} s)"
        )
    # the ratios are finite: total <= 1e7 s, output_interval >= 1e-6 s, time_step >= 1e-9 s (LIMITS)
    n_outputs = int(math.floor(total / output_interval + 1e-9)) + len(durations)
    if n_outputs > SIZE_LIMITS["output_times"]:
        raise ActsimInputError(
            f"time.output_interval: {output_interval:g} s gives {n_outputs} output times over {total:g} s "
            f"(allowed <= {SIZE_LIMITS['output_times']:g}); use a longer interval"
        )
    if n_outputs * n_cells > SIZE_LIMITS["output_values"]:
        raise ActsimInputError(
            f"time.output_interval: {n_outputs} output times x {n_cells} cells is too large to keep "
            f"(allowed <= {SIZE_LIMITS['output_values']:g} values per field); use a longer interval or fewer cells"
        )
    n_steps = n_outputs
    if fixed:
        n_steps += sum(math.ceil(d / time_step - 1e-9) for d in durations)
        if n_steps > SIZE_LIMITS["time_steps"]:
            raise ActsimInputError(
                f"time.step: {time_step:g} s gives {n_steps} steps over {total:g} s "
                f"(allowed <= {SIZE_LIMITS['time_steps']:g}); use a longer step"
            )
    return n_outputs, n_steps


def work_estimate(scenario) -> tuple[float, str]:
    """Cells x time steps of a scenario's run, and the field that sets the steps.

    Fixed steps (``time.step``): their number over the protocol (plus one per output time).
    Error-controlled steps: the output times, a lower bound of the steps taken.
    """
    durations = [s.duration for s in scenario.protocol]
    n_cells = sum(layer.cells for layer in scenario.layers)
    fixed = not scenario.time_tolerance
    _, n_steps = check_time_counts(durations=durations, output_interval=scenario.output_interval,
                                   time_step=scenario.time_step, fixed=fixed, n_cells=n_cells)
    return float(n_steps) * n_cells, ("time.step" if fixed else "time.output_interval")


def check_work(scenario, *, allow_large: bool = False) -> float:
    """Refuse a run whose work estimate (:func:`work_estimate`) is above :data:`WORK_LIMIT`, unless allowed.

    Raises
    ------
    ActsimInputError
        One line naming the field that sets the number of steps, the estimate and the limit.
    """
    work, field = work_estimate(scenario)
    if work > WORK_LIMIT and not allow_large:
        n_cells = sum(layer.cells for layer in scenario.layers)
        raise ActsimInputError(
            f"{field}: the run would take about {work / n_cells:.3g} time steps x {n_cells} cells = {work:.3g} "
            f"cell-steps (allowed <= {WORK_LIMIT:g} without asking, about a minute); use a longer step or fewer "
            "layers[].cells, or allow it (actsim run --yes; simulate(..., allow_large=True))"
        )
    return work


def _fmt(v, kind):
    from ..units import SI_UNITS

    if kind == "integer":
        return f"{int(v)}"
    unit = "" if kind is None else " " + SI_UNITS[kind][0]
    return f"{v:g}{unit}"


def limits_markdown() -> str:
    """The table of :data:`LIMITS` as it appears in ``docs/scenario.md`` (generated, so it cannot drift)."""
    rows = ["| field | kind | lowest | highest | why |", "|---|---|---|---|---|"]
    for path, lim in LIMITS.items():
        kind = {None: "dimensionless", "integer": "integer"}.get(lim.kind, lim.kind and lim.kind.replace("_", " "))
        lo = ("> " if lim.lo_open else ">= ") + _fmt(lim.lo, lim.kind)
        hi = ("< " if lim.hi_open else "<= ") + _fmt(lim.hi, lim.kind)
        rows.append(f"| `{path}` | {kind} | {lo} | {hi} | {lim.reason} |")
    rows += ["", "| size | allowed at most |", "|---|---|"]
    rows += [f"| {what.replace('_', ' ')} | {most:,} |" for what, most in SIZE_LIMITS.items()]
    rows.append(f"| protocol duration in all | {MAX_TOTAL_DURATION:g} s |")
    rows.append(f"| work estimate (cells x time steps) without `--yes` / `allow_large=True` | {WORK_LIMIT:g} |")
    return "\n".join(rows)


if __name__ == "__main__":  # pragma: no cover
    print(limits_markdown())

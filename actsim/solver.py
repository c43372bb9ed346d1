"""Thin orchestrator: scenario -> arrays -> time loop -> result arrays -> labelled result.

:func:`solve` builds the SI arrays of a scenario (:func:`build_problem`),
runs the time loop (the numba kernel, or the readable reference path built
from the stage functions), applies the layered-beam mechanics to every output
time (vectorised over time) and returns a :class:`actsim.solution.Solution` of
NumPy arrays; :func:`simulate` labels it as an :class:`xarray.Dataset` whose
every variable carries ``units`` and ``long_name``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from . import kinetics, material, mechanics, optics, thermal
from ._kernels import RawOutput, allocate_output, run_design
from .errors import ActsimInputError, ActsimSimulationError
from .grid import Grid, build_grid, cell_centres
from .liquid_crystal import has_liquid_crystal, plate_outputs
from .scenario import Scenario
from .scenario.limits import check_work
from .schedule import Schedule, build_schedule, incident_dose
from .solution import Solution

if TYPE_CHECKING:
    import xarray as xr


@dataclass(frozen=True)
class Problem:
    """One design as the stages' parameter objects, SI (cells bottom to top; beams = (source, band) pairs)."""

    grid: Grid
    light: optics.LightParams
    photo: kinetics.PhotoParams
    heat: thermal.HeatParams
    material: material.MaterialParams
    schedule: Schedule

    @property
    def times(self) -> np.ndarray:
        """Output times [s]."""
        return self.schedule.times

    def kernel_inputs(self) -> tuple:
        """The arguments of :func:`actsim._kernels.run_design` before the outputs, in order."""
        return (self.grid, self.light, self.photo, self.heat, self.material, self.schedule)

    def allocate_output(self) -> RawOutput:
        """Zeroed output arrays of this design (temperature and network strain only where modelled)."""
        skip = (() if self.heat.mode else ("T",)) + (() if np.any(self.material.network_mod > 0) else ("S",))
        return allocate_output(self.times.size, self.grid.dz.size, skip=skip)


def build_problem(scenario: Scenario) -> Problem:
    """Turn a scenario into the parameter objects of every stage (each built by its own stage module)."""
    grid = build_grid(scenario)
    light = optics.light_params(scenario, grid)
    photo = kinetics.photo_params(scenario, grid, light)
    schedule = build_schedule(scenario, light)
    heat = thermal.heat_params(scenario, grid, schedule)
    mat = material.material_params(scenario, grid)
    return Problem(grid=grid, light=light, photo=photo, heat=heat, material=mat, schedule=schedule)


#: The scenario fields most likely responsible for a non-finite value of each kind of result.
LIKELY_FIELDS = {
    "conversion": "materials.NAME.chromophore_concentration, reactant_absorptivity, forward_quantum_yield, "
                  "thermal_back_rate, sources[].irradiance, protocol[].light, time.step or time.tolerance",
    "temperature": "sources[].irradiance, protocol[].light, heat.ambient_temperature, heat.*_heat_transfer, "
                   "materials.NAME.conductivity, density, specific_heat, back_reaction_activation_energy, "
                   "layers[].thickness",
    "network strain": "materials.NAME.network_modulus, protocol[].strain or curvature",
    "curvature": "materials.NAME.modulus (or its temperature law), photo_strain, thermal_expansion, "
                 "layers[].thickness, protocol[].strain or curvature",
    "stress": "materials.NAME.modulus (or its temperature law), photo_strain, thermal_expansion, layers[].thickness",
    "strip response": "strip.free_length, strip.width, materials.NAME.modulus, layers[].thickness",
}


#: Highest temperature a run may reach [K]: the upper limit of the scenario's temperatures (LIMITS).
_HOTTEST = 2000.0


def _non_finite(what: str, where: str = "") -> ActsimSimulationError:
    """The one-line error for a non-finite ``what`` (a key of :data:`LIKELY_FIELDS`)."""
    return ActsimSimulationError(
        f"non-finite {what} in the result{where}; nothing was written. The fields most likely responsible: "
        f"{LIKELY_FIELDS[what]}"
    )


def run_kernel(p: Problem) -> RawOutput:
    """Run the numba time loop; returns the raw output arrays."""
    o = p.allocate_output()
    bad = run_design(*p.kernel_inputs(), o)
    if bad >= 0:
        row = min(bad + 1, o.x.shape[0] - 1)
        what = "curvature"
        for name, arr in (("conversion", o.x), ("temperature", o.T), ("network strain", o.S)):
            if not np.all(np.isfinite(arr[min(row, arr.shape[0] - 1)])):
                what = name
                break
        raise _non_finite(what, f" (state at t = {p.times[bad + 1]:g} s, protocol[{p.schedule.seg_step[bad]}])")
    return o


def fixed_step_equivalent(scenario: Scenario) -> Scenario:
    """The scenario with fixed steps that are as fine as its error-controlled run needs on average.

    An error-controlled run's step sequence jumps when a parameter changes a little, so its outputs are
    not smooth in the parameters; fits that take finite-difference derivatives use fixed steps instead:
    half the mean accepted step of the error-controlled run at the scenario's own parameters. A scenario
    with fixed steps is returned unchanged.
    """
    if not scenario.time_tolerance:
        return scenario
    o = run_kernel(build_problem(scenario))
    n = max(int(o.steps[-1, 0]), 1)
    return scenario.replace(time_step=scenario.duration / (2 * n), time_tolerance=0.0)


def grid_error_estimate(scenario: Scenario, ds: xr.Dataset | None = None) -> float | None:
    """Estimated relative discretisation error of the bend angle due to the cell grid.

    Richardson's estimate for a second-order scheme from a second run with half the cells in every
    layer (at least one):

    .. math:: \\epsilon \\approx \\frac{\\max_t |\\theta_N(t) - \\theta_{N/2}(t)|}{(2^2 - 1)\\,\\max_t |\\theta_N(t)|}

    Parameters
    ----------
    scenario : Scenario
        The scenario as run.
    ds : xarray.Dataset, optional
        Its result (simulated here when not given).

    Returns
    -------
    float or None
        The estimate [1]; None when no layer can be halved or the strip does not bend.

    References
    ----------
    .. [1] Richardson, L. F. "The approximate arithmetical solution by finite differences of physical
       problems." Phil. Trans. R. Soc. A 210 (1911) 307–357.
    """
    import dataclasses

    if all(layer.cells < 2 for layer in scenario.layers):
        return None
    if ds is None:
        ds = simulate(scenario)
    layers = tuple(dataclasses.replace(layer, cells=max(1, layer.cells // 2)) for layer in scenario.layers)
    coarse = scenario.replace(layers=layers,
                              optics=dataclasses.replace(scenario.optics, max_cell_optical_depth=float("inf")))
    p = build_problem(coarse)
    o = run_kernel(p)
    theta_c = o.mech[:, 1] * scenario.strip.free_length
    theta = ds["bend_angle"].values
    scale = float(np.max(np.abs(theta)))
    if scale == 0.0 or theta_c.shape != theta.shape:
        return None
    return float(np.max(np.abs(theta - theta_c))) / 3.0 / scale


def solve(scenario: Scenario, *, engine: str = "kernel", allow_large: bool = False) -> Solution:
    """Simulate a scenario over its whole protocol; the result as NumPy arrays (no xarray).

    Parameters
    ----------
    scenario : Scenario
        From :func:`actsim.load_scenario`.
    engine : {"kernel", "reference"}
        The numba kernel (fast) or the readable stage functions (slow, for checking).
    allow_large : bool
        Run even when the work estimate (cells x time steps) is above
        :data:`actsim.scenario.limits.WORK_LIMIT` (otherwise refused before any work).

    Returns
    -------
    actsim.solution.Solution
        ``time`` [s], ``z`` [m], (time, z) fields bottom cell first and (time,)
        strip responses, SI; the variables and their units are in
        :data:`actsim.solution.VARIABLES`. Raw kernel outputs a run does not
        report (temperature without heat, network strain without a network)
        are released before the mechanics are assembled.

    Raises
    ------
    ActsimInputError
        A work estimate above the limit (without ``allow_large``).
    ActsimSimulationError
        A non-finite result, naming the fields most likely responsible; floating-point
        warnings of the run are not shown (a run either ends finite or raises).
    """
    if engine not in ("kernel", "reference"):
        raise ActsimInputError(f"engine: '{engine}' is not one of 'kernel', 'reference'")
    check_work(scenario, allow_large=allow_large)
    p = build_problem(scenario)
    with np.errstate(all="ignore"):
        if engine == "kernel":
            raw = run_kernel(p)._asdict()
        else:
            from .reference import run_reference

            if has_liquid_crystal(scenario):
                name = next(la.material.name for la in scenario.layers if la.material.liquid_crystal is not None)
                raise ActsimInputError(f"engine: the reference engine has no liquid-crystal layers (materials.{name}."
                                       "liquid_crystal); use engine = 'kernel'")
            if np.any(p.material.strain_law != material.STRAIN_LINEAR):
                hyper = next(la.material.name for la in scenario.layers if la.material.strain_law != "linear")
                raise ActsimInputError(f"engine: the reference engine has no large-strain layers (materials.{hyper}."
                                       "strain_law); use engine = 'kernel'")
            raw = run_reference(p)._asdict()
        return _assemble(scenario, p, raw, reuse=True)


def simulate(scenario: Scenario, *, engine: str = "kernel", allow_large: bool = False) -> xr.Dataset:
    """Simulate a scenario over its whole protocol; the labelled result.

    Parameters
    ----------
    scenario : Scenario
        From :func:`actsim.load_scenario`.
    engine : {"kernel", "reference"}
        The numba kernel (fast) or the readable stage functions (slow, for checking).
    allow_large : bool
        Run even when the work estimate is above the limit (see :func:`solve`).

    Returns
    -------
    xarray.Dataset
        :meth:`actsim.solution.Solution.to_dataset` of :func:`solve`.
        Coordinates ``time`` [s] and ``z`` [m, cell centres]; (time, z) fields
        ``irradiance``, ``conversion``, ``eigenstrain``, ``modulus``, ``stress``,
        ``absorbed_power`` (and ``temperature``, ``network_density``,
        ``network_strain`` where modelled); (time,) strip response
        ``curvature``, ``bend_angle``, ``tip_deflection``, ``tip_position_x``,
        ``axial_strain``, ``blocked_moment``, ``blocked_force``, holding force
        and moment, photon budget and optical dose. Attributes hold the
        scenario text and the actsim version.
    """
    return solve(scenario, engine=engine, allow_large=allow_large).to_dataset()


def assemble_dataset(scenario: Scenario, p: Problem, o: RawOutput) -> xr.Dataset:
    """Mechanics on every output time, and the labelled result (``o`` is left as it is)."""
    return assemble_solution(scenario, p, o).to_dataset()


def assemble_solution(scenario: Scenario, p: Problem, o: RawOutput) -> Solution:
    """Mechanics on every output time from the raw outputs of the time loop (``o`` is left as it is)."""
    with np.errstate(all="ignore"):
        return _assemble(scenario, p, o._asdict(), reuse=False)


def small_strain_warning(scenario: Scenario, p: Problem, *, e0, kappa, eigenstrain) -> str:
    """One line naming the small-strain (linear) layers driven past ``[report] small_strain_limit``, or "".

    A layer's strain is the larger of its total strain along the strip, :math:`|e_0 - \\kappa z|` at its
    faces, and its elastic strain :math:`|e_0 - \\kappa z - e^*|` at its cell centres, over all output times.

    Parameters
    ----------
    scenario : Scenario
    p : Problem
    e0, kappa : numpy.ndarray, shape (n_time,)
        Strain at z = 0 [1] and curvature [m-1].
    eigenstrain : numpy.ndarray, shape (n_time, n_cell)
        [1].
    """
    limit = scenario.small_strain_limit
    z_edges = p.grid.z_edges
    z_c = cell_centres(z_edges)
    worst = []
    face_peaks, centre_peaks = mechanics.strain_peaks(np.ascontiguousarray(e0), np.ascontiguousarray(kappa), z_edges,
                                                      z_c, eigenstrain)
    start = 0
    ordered = False
    for lay in scenario.layers:  # the grid's cells are the layers' cells in order, bottom first
        stop = start + lay.cells
        if lay.material.strain_law == "linear":
            strain = max(face_peaks[start], face_peaks[stop], centre_peaks[start:stop].max())
            if strain > limit:
                worst.append(f"{lay.name} ({lay.material.name}) reaches {100 * strain:.3g} %")
                ordered |= lay.material.liquid_crystal is not None
        start = stop
    if not worst:
        return ""
    fix = ("a liquid-crystal layer's order strain is small-strain only: lower strain_per_order or the light"
           if ordered else "use strain_law = 'neo-hookean' or 'gent' for large strain")
    return (f"warning: small-strain layer(s) driven past the small-strain limit of {100 * limit:g} %: "
            + "; ".join(worst) + f" ({fix}; the limit is [report] small_strain_limit)")


#: Elements of (time, z) work arrays computed at once, so temporaries stay small beside the result.
_CHUNK = 1 << 16


def _assemble(scenario: Scenario, p: Problem, raw: dict, *, reuse: bool) -> Solution:
    """Build the :class:`Solution` from ``raw`` (a dict of the :class:`RawOutput` fields).

    Fields the run does not report are popped from ``raw`` first, so with no
    other reference they are freed before the mechanics; with ``reuse`` the
    eigenstrain is divided into the buffer of ``raw["Ee"]``.
    """
    from .metrics import conversion_front_depth

    strip = scenario.strip
    heat_on = scenario.heat.enabled
    network_on = p.material.network_mod > 0
    has_network = bool(network_on.any())
    has_hyper = bool((p.material.strain_law != material.STRAIN_LINEAR).any())
    # one row when not modelled (the constant value); kept only for a hyperelastic stack, so they are freed otherwise
    hyper_T, hyper_S = (raw["T"], raw["S"]) if has_hyper else (None, None)
    lc_T = raw["T"] if has_liquid_crystal(scenario) else None  # one row when heat is off: the constant field
    if not heat_on:
        raw.pop("T")
    if not has_network:
        raw.pop("S")
    x, E, budget, mech = raw["x"], raw["E"], raw["budget"], raw["mech"]
    z_edges, dz = p.grid.z_edges, p.grid.dz
    sched = p.schedule
    times = p.times
    rows = max(1, _CHUNK // dz.size)  # rows of (time, z) temporaries at once
    h = scenario.thickness
    b, L = strip.width, strip.free_length
    step_of_time = np.concatenate([[sched.seg_step[0]], sched.seg_step])
    for name, arr in (("conversion", x), ("temperature", raw.get("T"))):
        if arr is not None and not np.all(np.isfinite(arr)):
            raise _non_finite(name)
    heat = {}
    if heat_on:
        T = raw["T"]
        env = sched.step_env[step_of_time]  # T_amb_bottom, h_bottom, T_amb_top, h_top
        t_bottom, t_top = thermal.face_temperatures_series(
            temperature=T, dz=dz, conductivity=p.heat.k_cond, h_bottom=env[:, 1], ambient_bottom=env[:, 0],
            h_top=env[:, 3], ambient_top=env[:, 2])
        pabs = raw["pabs"]
        absorbed_total = np.empty(times.size)
        for i in range(0, times.size, rows):
            absorbed_total[i:i + rows] = (pabs[i:i + rows] * dz).sum(axis=1)
        peak = T.max(axis=1)
        if peak.max() > _HOTTEST:
            raise ActsimSimulationError(
                f"the strip reaches {peak.max():.4g} K, above the {_HOTTEST:g} K the models describe (every polymer "
                f"has decomposed far below); nothing was written. The fields most likely responsible: "
                f"{LIKELY_FIELDS['temperature']}")
        heat = dict(temperature=T, peak_temperature=peak, surface_temperature_bottom=t_bottom,
                    surface_temperature_top=t_top, absorbed_power_total=absorbed_total,
                    heat_absorbed=raw["energy"][:, 0], heat_lost_bottom=raw["energy"][:, 1],
                    heat_lost_top=raw["energy"][:, 2])
    Ee = raw.pop("Ee")
    e_star = Ee if reuse else np.empty_like(Ee)
    e0, kappa, n_hold, m_hold = mech.T
    z_c = cell_centres(z_edges)
    stress = np.empty_like(E)
    kappa_free, d_eff, finite = mechanics.section_series(z_edges, z_c, E, Ee, np.ascontiguousarray(e0),
                                                          np.ascontiguousarray(kappa), e_star, stress)
    del Ee
    if has_hyper and finite:
        finite = mechanics.hyper_section_series(z_edges, z_c, x, hyper_T, hyper_S, p.material, p.heat.T_ref, E,
                                                E * e_star, np.ascontiguousarray(e0), np.ascontiguousarray(kappa),
                                                kappa_free, d_eff, stress)
    del hyper_T, hyper_S
    if not finite:
        raise _non_finite("curvature" if not np.all(np.isfinite(kappa)) else "stress")
    x_tip, y_tip = mechanics.arc_tip_series(np.ascontiguousarray(kappa), L)
    if has_hyper:  # large strain: the mid-plane's arc is L (1 + its strain) long; theta = kappa L still holds
        stretch_mid = 1.0 + (e0 - kappa * 0.5 * h)
        x_tip, y_tip = x_tip * stretch_mid, y_tip * stretch_mid
    m_block = mechanics.blocked_moment(bending_stiffness=d_eff, curvature=kappa_free, width=b)
    f_block = mechanics.blocked_tip_force(bending_stiffness=d_eff, curvature=kappa_free, width=b, free_length=L)
    # the strip responses derived after the time loop (the loop checks its own state): a NaN or inf in any of the
    # four makes these two dot products non-finite (inf * 0 is NaN); finite values within the input limits cannot
    # overflow them. About 3 us, against 7 us for np.isfinite on the four joined.
    if not math.isfinite(f_block @ y_tip + m_block @ x_tip):
        raise _non_finite("strip response")
    lit_from_top = not scenario.sources or scenario.sources[0].face == "top"
    front = None
    active = p.light.c0 > 0
    if active.any():
        front = conversion_front_depth(z=z_c, conversion=x, thickness=h, from_top=lit_from_top, active=active, dz=dz,
                                       level=scenario.front_level, full=p.photo.x_max)
    network = {}
    if has_network:
        network = dict(network_density=np.where(network_on, x, 0.0), network_strain=raw["S"])
    holds = [step.hold for step in scenario.protocol]
    cycles = {}
    if any(hd in ("stretch", "bend") for hd in holds):
        from .shape_memory import cycles_from_arrays

        found = cycles_from_arrays(protocol_step=step_of_time, axial_strain=e0 - kappa * 0.5 * h, curvature=kappa,
                                   bend_angle=kappa * L, protocol=scenario.protocol)
        def column(key):
            return np.array([np.nan if c[key] is None else c[key] for c in found], float)

        cycles = dict(cycle=np.arange(1, len(found) + 1), cycle_hold=np.array([c["kind"] for c in found]),
                      fixity_ratio=column("fixity_ratio"), recovery_ratio=column("recovery_ratio"),
                      bend_angle_after_release=column("bend_angle_after_release"))
    warning = small_strain_warning(scenario, p, e0=e0, kappa=kappa, eigenstrain=e_star)
    lc_out = {}
    if lc_T is not None:
        lc_out = plate_outputs(scenario, p, conversion=x, temperature=lc_T, modulus=E, step_of_time=step_of_time)
        for name in ("plate_curvature_x", "plate_curvature_y", "twist_rate"):
            if not np.all(np.isfinite(lc_out[name])):
                raise _non_finite(name)
    del lc_T
    width = max(len(holds[i]) for i in set(step_of_time.tolist()))  # the string width of the holds that occur
    return Solution(
        time=times,
        z=z_c,
        layer=np.array([layer.name for layer in scenario.layers])[p.grid.layer_index],
        irradiance=raw["irr"],
        conversion=x,
        eigenstrain=e_star,
        modulus=E,
        stress=stress,
        absorbed_power=raw["pabs"],
        curvature=kappa,
        free_curvature=kappa_free,
        bend_angle=kappa * L,
        tip_deflection=y_tip,
        tip_position_x=x_tip,
        axial_strain=e0 - kappa * 0.5 * h,
        bending_stiffness=b * d_eff,
        blocked_moment=m_block,
        blocked_force=f_block,
        holding_force=b * n_hold,
        holding_moment=b * (m_hold - n_hold * 0.5 * h),
        photon_flux_incident=budget[:, 0],
        photon_flux_reflected=budget[:, 1],
        photon_flux_absorbed=budget[:, 2],
        photon_flux_transmitted=budget[:, 3],
        incident_irradiance=sched.step_irradiance.sum(axis=1)[step_of_time],
        optical_dose=incident_dose(sched),
        protocol_step=step_of_time.astype(np.int32),
        hold=np.array(holds, dtype=f"<U{width}")[step_of_time],
        title=scenario.title,
        scenario_text=scenario.text,
        scenario_path=scenario.path,
        thickness=scenario.thickness,
        free_length=L,
        width=b,
        heat_modelled=bool(heat_on),
        time_stepping=(f"error-controlled, local error per step <= {scenario.time_tolerance:g} / 2"
                       if scenario.time_tolerance else f"fixed steps of at most {scenario.time_step:g} s"),
        time_steps_accepted=int(raw["steps"][-1, 0]),
        time_steps_rejected=int(raw["steps"][-1, 1]),
        section="plane strain" if strip.section == "plate" else "plane stress",
        lit_face="top" if lit_from_top else "bottom",
        conversion_front_depth=front,
        front_level=scenario.front_level,
        small_strain_warning=warning,
        **cycles,
        **heat,
        **network,
        **lc_out,
    )

"""Thin orchestrator: scenario -> arrays -> time loop -> labelled result.

:func:`simulate` builds the SI arrays of a scenario (:func:`build_problem`),
runs the time loop (the numba kernel, or the readable reference path built
from the stage functions), applies the layered-beam mechanics to every output
time, and returns an :class:`xarray.Dataset` whose every variable carries
``units`` and ``long_name``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import xarray as xr

from . import kinetics, material, mechanics, optics, thermal
from ._kernels import RawOutput, allocate_output, run_design
from .errors import ActsimInputError, ActsimSimulationError
from .grid import Grid, build_grid, cell_centres
from .scenario import Scenario
from .schedule import Schedule, build_schedule, incident_dose


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
        """Zeroed output arrays of this design."""
        return allocate_output(self.times.size, self.grid.dz.size)


def build_problem(scenario: Scenario) -> Problem:
    """Turn a scenario into the parameter objects of every stage (each built by its own stage module)."""
    grid = build_grid(scenario)
    light = optics.light_params(scenario, grid)
    photo = kinetics.photo_params(scenario, grid, light)
    schedule = build_schedule(scenario, light)
    heat = thermal.heat_params(scenario, grid, schedule)
    mat = material.material_params(scenario, grid)
    return Problem(grid=grid, light=light, photo=photo, heat=heat, material=mat, schedule=schedule)


def run_kernel(p: Problem) -> RawOutput:
    """Run the numba time loop; returns the raw output arrays."""
    o = p.allocate_output()
    bad = run_design(*p.kernel_inputs(), o)
    if bad >= 0:
        raise ActsimSimulationError(
            f"non-finite state at t = {p.times[bad + 1]:g} s (protocol[{p.schedule.seg_step[bad]}]); nothing was written. "
            "Check for a runaway temperature or an extreme load"
        )
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


def _var(dims, data, units, long_name, **extra):
    return xr.Variable(dims, data, attrs={"units": units, "long_name": long_name, **extra})


def simulate(scenario: Scenario, *, engine: str = "kernel") -> xr.Dataset:
    """Simulate a scenario over its whole protocol.

    Parameters
    ----------
    scenario : Scenario
        From :func:`actsim.load_scenario`.
    engine : {"kernel", "reference"}
        The numba kernel (fast) or the readable stage functions (slow, for checking).

    Returns
    -------
    xarray.Dataset
        Coordinates ``time`` [s] and ``z`` [m, cell centres]; (time, z) fields
        ``irradiance``, ``conversion``, ``eigenstrain``, ``modulus``, ``stress``,
        ``absorbed_power`` (and ``temperature``, ``network_density``,
        ``network_strain`` where modelled); (time,) strip response
        ``curvature``, ``bend_angle``, ``tip_deflection``, ``tip_position_x``,
        ``axial_strain``, ``blocked_moment``, ``blocked_force``, holding force
        and moment, photon budget and optical dose. Attributes hold the
        scenario text and the actsim version.
    """
    from . import __version__

    if engine not in ("kernel", "reference"):
        raise ActsimInputError(f"engine: '{engine}' is not one of 'kernel', 'reference'")
    p = build_problem(scenario)
    if engine == "kernel":
        o = run_kernel(p)
    else:
        from .reference import run_reference

        o = run_reference(p)
    ds = assemble_dataset(scenario, p, o)
    ds.attrs.update(
        title=scenario.title,
        scenario=scenario.text,
        scenario_path=scenario.path,
        actsim_version=__version__,
        sign_convention="curvature > 0 bends the strip toward +z (top face concave); z = 0 is the bottom face",
        Conventions="CF-1.8",
        thickness=scenario.thickness,
        free_length=scenario.strip.free_length,
        width=scenario.strip.width,
        heat_modelled=int(scenario.heat.enabled),
        time_stepping=(f"error-controlled, local error per step <= {scenario.time_tolerance:g}" if scenario.time_tolerance
                       else f"fixed steps of at most {scenario.time_step:g} s"),
        time_steps_accepted=int(o.steps[-1, 0]),
        time_steps_rejected=int(o.steps[-1, 1]),
    )
    return ds


def assemble_dataset(scenario: Scenario, p: Problem, o: dict) -> xr.Dataset:
    """Mechanics on every output time, and the labelled result."""
    from .metrics import conversion_front_depth

    strip = scenario.strip
    x, E, Ee = o.x, o.E, o.Ee
    e_star = Ee / E
    e0, kappa, n_hold, m_hold = o.mech.T
    z_edges, dz = p.grid.z_edges, p.grid.dz
    sched = p.schedule
    _, kappa_free, d_eff = mechanics.free_strip_response(z_edges=z_edges, modulus=E, eigenstrain=e_star)
    z_c = cell_centres(z_edges)
    stress = mechanics.stress_profile(z_centres=z_c, modulus=E, eigenstrain=e_star, strain_bottom=e0, curvature=kappa)
    x_tip, y_tip = mechanics.arc_tip_position(curvature=kappa, free_length=strip.free_length)
    m_block = mechanics.blocked_moment(bending_stiffness=d_eff, curvature=kappa_free, width=strip.width)
    f_block = mechanics.blocked_tip_force(bending_stiffness=d_eff, curvature=kappa_free, width=strip.width,
                                          free_length=strip.free_length)
    h = scenario.thickness
    times = p.times
    step_of_time = np.concatenate([[sched.seg_step[0]], sched.seg_step])
    incident_power = sched.step_irradiance.sum(axis=1)[step_of_time]
    dose = incident_dose(sched)
    for name, arr in (("conversion", x), ("temperature", o.T), ("curvature", kappa), ("stress", stress)):
        if not np.all(np.isfinite(arr)):
            raise ActsimSimulationError(f"non-finite {name} in the result; nothing was written")
    layer_names = np.array([scenario.layers[i].name for i in p.grid.layer_index])
    lit_from_top = not scenario.sources or scenario.sources[0].face == "top"
    front = conversion_front_depth(z=z_c, conversion=x, thickness=h, from_top=lit_from_top, active=p.light.c0 > 0, dz=dz)
    b, L = strip.width, strip.free_length
    section = "plane strain" if strip.section == "plate" else "plane stress"
    hold_names = np.array([scenario.protocol[i].hold for i in step_of_time])
    data_vars = {
        "irradiance": _var(("time", "z"), o.irr, "W m-2", "cell-mean irradiance (all bands)"),
        "conversion": _var(("time", "z"), x, "1", "fraction of chromophore in the product form"),
        "eigenstrain": _var(("time", "z"), e_star, "1", "effective eigenstrain along the strip (photo, thermal, network)"),
        "modulus": _var(("time", "z"), E, "Pa", f"effective section modulus ({section})"),
        "stress": _var(("time", "z"), stress, "Pa", "axial stress at cell centres"),
        "absorbed_power": _var(("time", "z"), o.pabs, "W m-3", "absorbed optical power density"),
        "curvature": _var(("time",), kappa, "m-1", "curvature (positive bends toward +z)"),
        "free_curvature": _var(("time",), kappa_free, "m-1", "curvature the strip takes when free at this state"),
        "bend_angle": _var(("time",), kappa * L, "rad", "tip rotation of the free length"),
        "tip_deflection": _var(("time",), y_tip, "m", "tip travel normal to the clamped tangent (toward +z)"),
        "tip_position_x": _var(("time",), x_tip, "m", "tip position along the clamped tangent"),
        "axial_strain": _var(("time",), e0 - kappa * 0.5 * h, "1", "axial strain at the mid-thickness"),
        "bending_stiffness": _var(("time",), b * d_eff, "N m2", "bending stiffness EI about the neutral axis"),
        "blocked_moment": _var(("time",), m_block, "N m", "moment that holds the strip flat"),
        "blocked_force": _var(("time",), f_block, "N", "force the tip exerts on a support holding it in place (positive toward +z; free rotation, small deflection)"),
        "holding_force": _var(("time",), b * n_hold, "N", "axial force the grips apply (zero when free)"),
        "holding_moment": _var(("time",), b * (m_hold - n_hold * 0.5 * h), "N m", "moment the grips or mandrel apply about the mid-thickness"),
        "photon_flux_incident": _var(("time",), o.budget[:, 0], "mol m-2 s-1", "incident photon flux (all sources)"),
        "photon_flux_reflected": _var(("time",), o.budget[:, 1], "mol m-2 s-1", "photon flux reflected at the entry faces"),
        "photon_flux_absorbed": _var(("time",), o.budget[:, 2], "mol m-2 s-1", "photon flux absorbed in the stack"),
        "photon_flux_transmitted": _var(("time",), o.budget[:, 3], "mol m-2 s-1", "photon flux leaving through the far faces"),
        "incident_irradiance": _var(("time",), incident_power, "W m-2", "total incident irradiance of the sources on"),
        "optical_dose": _var(("time",), dose, "J m-2", "incident radiant exposure since t = 0"),
        "protocol_step": _var(("time",), step_of_time.astype(np.int32), "1", "index of the protocol step (0-based) that ends at or contains this time"),
        "hold": _var(("time",), hold_names, "1", "mechanical condition of that protocol step"),
    }
    if np.any(p.light.c0 > 0):
        data_vars["conversion_front_depth"] = _var(
            ("time",), front, "m", f"depth below the {'top' if lit_from_top else 'bottom'} face where conversion falls to half its maximum")
    if scenario.heat.enabled:
        from .thermal import face_temperatures

        T = o.T
        env = sched.step_env[step_of_time]  # T_amb_bottom, h_bottom, T_amb_top, h_top
        faces = np.array([face_temperatures(T[i], dz, p.heat.k_cond, env[i, 1], env[i, 0], env[i, 3], env[i, 2])
                          for i in range(times.size)])
        data_vars["temperature"] = _var(("time", "z"), T, "K", "temperature")
        data_vars["peak_temperature"] = _var(("time",), T.max(axis=1), "K", "highest cell temperature")
        data_vars["surface_temperature_bottom"] = _var(("time",), faces[:, 0], "K", "temperature of the bottom face")
        data_vars["surface_temperature_top"] = _var(("time",), faces[:, 1], "K", "temperature of the top face")
        data_vars["absorbed_power_total"] = _var(("time",), (o.pabs * dz).sum(axis=1), "W m-2", "absorbed optical power per unit area")
        data_vars["heat_absorbed"] = _var(("time",), o.energy[:, 0], "J m-2", "heat deposited by absorbed light since t = 0")
        data_vars["heat_lost_bottom"] = _var(("time",), o.energy[:, 1], "J m-2", "heat lost through the bottom face since t = 0")
        data_vars["heat_lost_top"] = _var(("time",), o.energy[:, 2], "J m-2", "heat lost through the top face since t = 0")
    if np.any(p.material.network_mod > 0):
        on = p.material.network_mod > 0
        data_vars["network_density"] = _var(("time", "z"), np.where(on, x, 0.0), "1", "density of the light-formed network (1 = fully formed)")
        data_vars["network_strain"] = _var(("time", "z"), o.S, "1", "network-weighted strain the light-formed network remembers")
    return xr.Dataset(
        data_vars=data_vars,
        coords={
            "time": _var(("time",), times, "s", "time since the start of the protocol"),
            "z": _var(("z",), z_c, "m", "height of the cell centre above the bottom face"),
            "layer": _var(("z",), layer_names, "1", "layer of the cell"),
        },
    )

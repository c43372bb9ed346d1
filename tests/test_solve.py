"""actsim.solve and the Solution it returns; simulate() labels it without changing a bit.

The Dataset of :func:`actsim.simulate` is compared with the assembly as it was written before
:func:`actsim.solve` existed (per-output-time loops, the numba face temperatures one time at a time),
frozen below as ``legacy_dataset``, for every bundled scenario. The vectorised helpers are checked
against the per-time code they replace and against hand calculations.
"""

from __future__ import annotations

import dataclasses
import tracemalloc
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import actsim
from actsim import mechanics, metrics, solution, solver, thermal
from actsim.errors import ActsimSimulationError
from actsim.grid import cell_centres
from actsim.scenario import load_scenario, parse_scenario
from actsim.schedule import incident_dose
from actsim.solution import COORDS, VARIABLES, Solution
from actsim.thermal import face_temperatures

from conftest import film_toml

SCENARIOS = sorted((Path(__file__).resolve().parents[1] / "scenarios").glob("*.toml"))


# ---------------------------------------------------------------------------------------------
# The assembly before solve(), frozen (the reference the Dataset must stay identical to)
# ---------------------------------------------------------------------------------------------


def _var(dims, data, units, long_name, **extra):
    return xr.Variable(dims, data, attrs={"units": units, "long_name": long_name, **extra})


def legacy_front_depth(*, z, conversion, thickness, from_top=True, active=None, dz=None, level=None, full=None):
    x = np.asarray(conversion, float)
    if full is not None:
        x = x / np.asarray(full, float)  # the converted share of what can convert
    depth = thickness - z if from_top else z
    if active is not None:
        sel = np.asarray(active, bool)
        if not sel.any():
            return np.zeros(x.shape[0])
        far = depth[sel] + (0.5 * np.asarray(dz)[sel] if dz is not None else 0.0)
        x, depth = x[:, sel], depth[sel]
        deepest = float(far.max())
    else:
        deepest = float(depth.max())
    order = np.argsort(depth)
    d = depth[order]
    out = np.zeros(x.shape[0])
    for t in range(x.shape[0]):
        row = x[t, order]
        xmax = row.max()
        if xmax <= 1e-12:
            continue
        if level is not None and xmax < level:
            continue  # an absolute level never reached: no front
        lv = 0.5 * xmax if level is None else level
        imax = int(np.argmax(row))
        below = np.nonzero(row[imax:] < lv)[0]
        if below.size == 0:
            out[t] = deepest
            continue
        j = imax + int(below[0])
        x0, x1 = row[j - 1], row[j]
        out[t] = d[j - 1] + (x0 - lv) * (d[j] - d[j - 1]) / (x0 - x1)
    return out



def legacy_dataset(scenario, p, o):
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
    front = legacy_front_depth(z=z_c, conversion=x, thickness=h, from_top=lit_from_top, active=p.light.c0 > 0, dz=dz,
                               level=scenario.front_level, full=p.photo.x_max)
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
            ("time",), front, "m", f"depth below the {'top' if lit_from_top else 'bottom'} face where conversion falls to "
            f"{100 * scenario.front_level:g} % of full conversion (0: no front)")
        data_vars["conversion_front_depth"].attrs["front_conversion"] = scenario.front_level
    if scenario.heat.enabled:
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
    coords_cycle = {}
    if any(step.hold in ("stretch", "bend") for step in scenario.protocol):
        from actsim.shape_memory import shape_memory_cycles

        probe = xr.Dataset({k: data_vars[k] for k in ("protocol_step", "axial_strain", "curvature", "bend_angle")})
        cycles = shape_memory_cycles(probe, scenario.protocol)
        col = lambda key: np.array([np.nan if c[key] is None else c[key] for c in cycles])  # noqa: E731
        data_vars["cycle_hold"] = _var(("cycle",), np.array([c["kind"] for c in cycles]), "1",
                                       "programming hold of the cycle (stretch: strain; bend: curvature)")
        for key, unit, text in (("fixity_ratio", "1", "shape fixity ratio R_f of the cycle (Lendlein and Kelch 2002)"),
                                ("recovery_ratio", "1", "shape recovery ratio R_r of the cycle (Lendlein and Kelch 2002)"),
                                ("bend_angle_after_release", "rad", "bend angle at the end of the first free step after the hold")):
            data_vars[key] = _var(("cycle",), col(key), unit, text)
            data_vars[key].attrs["missing_means"] = solution.MISSING_MEANS[key]
        coords_cycle["cycle"] = _var(("cycle",), np.arange(1, len(cycles) + 1), "1", "programming cycle (1 = first)")
    ds = xr.Dataset(
        data_vars=data_vars,
        coords={
            "time": _var(("time",), times, "s", "time since the start of the protocol"),
            "z": _var(("z",), z_c, "m", "height of the cell centre above the bottom face"),
            "layer": _var(("z",), layer_names, "1", "layer of the cell"),
            **coords_cycle,
        },
    )
    ds.attrs.update(
        title=scenario.title,
        scenario=scenario.text,
        scenario_path=scenario.path,
        actsim_version=actsim.__version__,
        sign_convention="curvature > 0 bends the strip toward +z (top face concave); z = 0 is the bottom face",
        Conventions="CF-1.8",
        thickness=scenario.thickness,
        free_length=scenario.strip.free_length,
        width=scenario.strip.width,
        heat_modelled=int(scenario.heat.enabled),
        time_stepping=(f"error-controlled, local error per step <= {scenario.time_tolerance:g} / 2"
                       if scenario.time_tolerance else f"fixed steps of at most {scenario.time_step:g} s"),
        time_steps_accepted=int(o.steps[-1, 0]),
        time_steps_rejected=int(o.steps[-1, 1]),
    )
    warning = solver.small_strain_warning(scenario, p, e0=e0, kappa=kappa, eigenstrain=e_star)
    if warning:
        ds.attrs["small_strain_warning"] = warning
    return ds


# ---------------------------------------------------------------------------------------------
# simulate() = solve().to_dataset(), identical to the frozen assembly
# ---------------------------------------------------------------------------------------------


def assert_matches_assembly(ds, before):
    """Same variables, order, dtypes, attributes and non-float values; floats to 1e-12 of each variable's scale.

    The mechanics are summed cell by cell in one fused loop (``mechanics.section_series``) where the frozen
    assembly used matrix products, so sums may differ in the last bits (rounding only).
    """
    assert list(ds.variables) == list(before.variables)
    assert ds.attrs == before.attrs
    for name, v in before.variables.items():
        assert ds[name].dtype == v.dtype, name
        assert ds[name].dims == v.dims and ds[name].attrs == v.attrs, name
        a, b = ds[name].values, v.values
        if a.dtype.kind == "f":
            scale = max(float(np.max(np.abs(b))) if b.size else 0.0, 1e-300)
            np.testing.assert_allclose(a, b, rtol=0, atol=1e-12 * scale, err_msg=name)
        else:
            assert np.array_equal(a, b), name


@pytest.mark.parametrize("path", SCENARIOS, ids=[p.stem for p in SCENARIOS])
def test_simulate_matches_the_assembly_before_solve(path, monkeypatch):
    sc = load_scenario(path)
    if any(layer.material.strain_law != "linear" for layer in sc.layers):
        pytest.skip("hyperelastic layers: the small-strain assembly does not apply (tests/test_large_strain.py)")
    monkeypatch.setattr(solver, "_CHUNK", 1000)  # the (time, z) work in several chunks of rows
    p = solver.build_problem(sc)
    o = solver.run_kernel(p)
    kept = {name: a.copy() for name, a in o._asdict().items()}
    before = legacy_dataset(sc, p, o)
    # liquid-crystal outputs (plate, ribbon, order) came after the frozen assembly: tests/test_liquid_crystal.py
    lc = [n for n in ("order_parameter", "plate_curvature_x", "plate_curvature_y", "twist_rate", "ribbon_shape",
                      "ribbon_curvature", "ribbon_curvature_across", "ribbon_twist_rate", "ribbon_helix_radius",
                      "ribbon_helix_pitch", "polarisation_rotation")]

    def legacy_part(ds):
        ds = ds.drop_vars([n for n in lc if n in ds])
        ds.attrs.pop("ribbon_width_parameter", None)
        return ds

    assert_matches_assembly(legacy_part(actsim.simulate(sc)), before)
    assert_matches_assembly(legacy_part(solver.assemble_dataset(sc, p, o)), before)
    for name, a in o._asdict().items():  # assemble_dataset leaves the raw outputs as they were
        assert np.array_equal(a, kept[name]), name


@pytest.mark.parametrize("name", ["vent_flap", "shape_memory_two_colour"])
def test_to_dataset_matches_the_public_constructor(name):
    # to_dataset() builds the Dataset without xarray's merge; the public constructor must give the same
    s = actsim.solve(load_scenario(next(p for p in SCENARIOS if p.stem == name)))
    ds = s.to_dataset()
    coords = {n: ds[n].variable for n in COORDS if getattr(s, n) is not None}
    public = xr.Dataset(data_vars={n: ds[n].variable for n in s.names}, coords=coords, attrs=s.attrs)
    xr.testing.assert_identical(ds, public)
    assert list(ds.variables) == list(public.variables) and dict(ds.sizes) == dict(public.sizes)
    dims = {"time", "z"} | ({"cycle"} if s.cycle is not None else set())
    assert set(ds.xindexes) == dims and float(ds.bend_angle.sel(time=ds.time[2])) == s.bend_angle[2]
    assert (s.cycle is not None) == (name == "shape_memory_two_colour")


def test_solution_holds_every_variable_with_its_table_entry():
    array_fields = {"time", "z", "layer", "cycle", *VARIABLES}
    names = {f.name for f in dataclasses.fields(Solution)}
    assert array_fields <= names
    assert names - array_fields == {"title", "scenario_text", "scenario_path", "thickness", "free_length", "width",
                                    "heat_modelled", "section", "lit_face", "time_stepping", "time_steps_accepted",
                                    "time_steps_rejected", "front_level", "small_strain_warning",
                                    "ribbon_width_parameter", "polarisation_source"}
    sc = load_scenario(next(p for p in SCENARIOS if p.stem == "vent_flap"))
    s = actsim.solve(sc)
    ds = s.to_dataset()
    assert s.names == list(ds.data_vars)
    for name in [*(c for c in COORDS if getattr(s, c) is not None), *s.names]:
        a = getattr(s, name)
        assert type(a) is np.ndarray, name  # plain arrays, no xarray
        extra = {"front_conversion": 0.5} if name == "conversion_front_depth" else {}
        assert ds[name].attrs == {"units": s.units(name), "long_name": s.long_name(name), **extra}, name
        assert ds[name].dims == s.dims(name), name
    assert s.conversion.shape == (s.time.size, s.z.size) and np.all(np.diff(s.z) > 0)  # bottom cell first
    assert s.attrs == ds.attrs and s.nbytes > 0
    with pytest.raises(KeyError, match="not an output"):
        s.units("bend")


def test_unmodelled_outputs_are_none(make_scenario):
    s = actsim.solve(make_scenario(cells=4, duration="2 s", output="1 s", step="0.5 s", face="bottom"))
    for name in ("temperature", "peak_temperature", "surface_temperature_top", "heat_absorbed", "network_density",
                 "network_strain"):
        assert getattr(s, name) is None, name
    assert s.conversion_front_depth is not None and s.lit_face == "bottom"
    assert "depth below the bottom face" in s.long_name("conversion_front_depth")
    assert s.long_name("modulus") == "effective section modulus (plane stress)"
    with pytest.raises(actsim.ActsimInputError, match="engine"):
        actsim.solve(make_scenario(cells=4), engine="fast")


def test_solve_reference_engine_matches_kernel(make_scenario):
    sc = make_scenario(cells=6, duration="2 s", output="1 s", step="0.25 s")
    a, b = actsim.solve(sc), actsim.solve(sc, engine="reference")
    for name in a.names:  # kernel against the readable loop (tests/test_kernels.py holds them to 1e-12)
        if a.dims(name) and getattr(a, name).dtype.kind == "f":
            np.testing.assert_allclose(getattr(b, name), getattr(a, name), rtol=1e-10, atol=1e-14, err_msg=name)


# ---------------------------------------------------------------------------------------------
# The vectorised helpers
# ---------------------------------------------------------------------------------------------


def test_face_temperatures_series_equals_the_per_time_kernel_function():
    rng = np.random.default_rng(3)
    n_time, n = 200, 5
    T = 290.0 + 40.0 * rng.random((n_time, n))
    dz = 1e-5 * (1 + rng.random(n))
    k = 0.1 + rng.random(n)
    h_b, h_t = 100.0 * rng.random(n_time), 100.0 * rng.random(n_time)
    h_b[::7], h_t[::5], h_b[3], h_t[4] = 0.0, 0.0, np.inf, np.inf  # insulated faces and faces held at the ambient
    a_b, a_t = 280.0 + 30.0 * rng.random(n_time), 280.0 + 30.0 * rng.random(n_time)
    sb, st = thermal.face_temperatures_series(temperature=T, dz=dz, conductivity=k, h_bottom=h_b, ambient_bottom=a_b,
                                              h_top=h_t, ambient_top=a_t)
    one = np.array([face_temperatures(T[i], dz, k, h_b[i], a_b[i], h_t[i], a_t[i]) for i in range(n_time)])
    np.testing.assert_allclose(sb, one[:, 0], rtol=1e-15, atol=0)
    np.testing.assert_allclose(st, one[:, 1], rtol=1e-15, atol=0)
    # hand calculation, series resistances 1/h and dz/(2k) (Incropera et al., Fundamentals of Heat and Mass
    # Transfer, 6th ed., 2007, sec. 3.1): the face sits on the divider between cell and ambient
    r_half = 0.5 * dz[0] / k[0]
    i = 1
    expect = T[i, 0] - (T[i, 0] - a_b[i]) * r_half / (1.0 / h_b[i] + r_half)
    assert sb[i] == pytest.approx(expect, rel=1e-14)
    assert sb[0] == T[0, 0] and sb[3] == pytest.approx(a_b[3], rel=1e-14)  # insulated; held at the ambient


@pytest.mark.parametrize("from_top", [True, False])
def test_front_depth_of_a_linear_profile(from_top):
    # x falls linearly with depth, x = a (1 - s d / H): linear interpolation between centres is exact, so the
    # front (half the maximum, which sits at the shallowest centre d0) is at depth H (1 - x_max / (2 a)) / s with
    # x_max = a (1 - s d0 / H), whatever the scale a (hand calculation)
    H, n = 100e-6, 20
    z = (np.arange(n) + 0.5) * H / n
    depth = H - z if from_top else z
    d0 = 0.5 * H / n
    x = np.array([0.0 * depth, 0.5 * (1.0 - depth / H), 1.0 - 1.5 * depth / H])
    front = metrics.conversion_front_depth(z=z, conversion=x, thickness=H, from_top=from_top)
    expect = [0.0, H * (1 - 0.5 * (1 - d0 / H)), H * (1 - 0.5 * (1 - 1.5 * d0 / H)) / 1.5]
    np.testing.assert_allclose(front, expect, rtol=1e-12)


def test_front_depth_equals_the_per_time_loop(monkeypatch):
    rng = np.random.default_rng(7)
    n_time, n = 300, 12
    z = np.sort(rng.random(n)) * 1e-4
    dz = np.full(n, 1e-4 / n)
    x = np.cumsum(rng.random((n_time, n)), axis=1)[:, ::-1] / n  # mostly falling away from the top
    x[5] = 0.0  # nothing converted
    x[6] = 0.7  # flat: fully converted region
    x[7, :] = rng.random(n)  # peak somewhere inside
    x[8] = 1e-13  # below the converted threshold
    active = rng.random(n) > 0.3
    for kw in (dict(), dict(from_top=False), dict(active=active, dz=dz), dict(active=active, dz=dz, from_top=False),
               dict(active=np.zeros(n, bool), dz=dz)):
        got = metrics.conversion_front_depth(z=z, conversion=x, thickness=1e-4, **kw)
        want = legacy_front_depth(z=z, conversion=x, thickness=1e-4, **kw)
        np.testing.assert_array_equal(got, want)


# ---------------------------------------------------------------------------------------------
# Memory: outputs a run does not report are released before the mechanics
# ---------------------------------------------------------------------------------------------


def test_peak_memory_per_output_and_cell():
    n_out, n_cell = 4000, 50
    sc = parse_scenario(film_toml(cells=n_cell, duration=f"{n_out} s", output="1 s", step="1 s"))
    actsim.solve(parse_scenario(film_toml(cells=2)))  # imports and caches outside the measurement
    tracemalloc.start()
    try:
        s = actsim.solve(sc)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    per = peak / (n_out * n_cell)
    # The kernel writes 7 (time, cell) float64 fields (56 B) and 11 numbers per time (1.8 B here); without heat
    # and network the result keeps 6 fields (48 B: irradiance, conversion, eigenstrain, modulus, stress, absorbed
    # power) and ~25 numbers per time. Measured: 58.6 B (84.3 B before solve(): temperature and network strain
    # kept to the end, full-size temporaries of the stress and the front depth).
    print(f"peak {per:.1f} B per (output x cell), result {s.nbytes / (n_out * n_cell):.1f} B")
    assert s.temperature is None and s.network_strain is None
    assert per < 62

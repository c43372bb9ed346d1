"""The result of one simulation as plain NumPy arrays: :class:`Solution`.

:func:`actsim.solve` returns a :class:`Solution`; :func:`actsim.simulate`
labels the same arrays as an :class:`xarray.Dataset`
(:meth:`Solution.to_dataset`). :data:`VARIABLES` is the one table of the
output variables: name -> (units, long name, dimensions), in the order of the
Dataset. Every array is SI; (time, z) fields have cells bottom first.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

#: Output variables: name -> (units, long_name, dims). A long name may hold ``{section}`` (plane stress or
#: plane strain) or ``{lit_face}`` (top or bottom), filled from the :class:`Solution`.
VARIABLES: dict[str, tuple[str, str, tuple[str, ...]]] = {
    "irradiance": ("W m-2", "cell-mean irradiance (all bands)", ("time", "z")),
    "conversion": ("1", "fraction of chromophore in the product form", ("time", "z")),
    "eigenstrain": ("1", "effective eigenstrain along the strip (photo, thermal, network)", ("time", "z")),
    "modulus": ("Pa", "effective section modulus ({section})", ("time", "z")),
    "stress": ("Pa", "axial stress at cell centres", ("time", "z")),
    "absorbed_power": ("W m-3", "absorbed optical power density", ("time", "z")),
    "curvature": ("m-1", "curvature (positive bends toward +z)", ("time",)),
    "free_curvature": ("m-1", "curvature the strip takes when free at this state", ("time",)),
    "bend_angle": ("rad", "tip rotation of the free length", ("time",)),
    "tip_deflection": ("m", "tip travel normal to the clamped tangent (toward +z)", ("time",)),
    "tip_position_x": ("m", "tip position along the clamped tangent", ("time",)),
    "axial_strain": ("1", "axial strain at the mid-thickness", ("time",)),
    "bending_stiffness": ("N m2", "bending stiffness EI about the neutral axis", ("time",)),
    "blocked_moment": ("N m", "moment that holds the strip flat", ("time",)),
    "blocked_force": ("N", "force the tip exerts on a support holding it in place (positive toward +z; free rotation, "
                           "small deflection)", ("time",)),
    "holding_force": ("N", "axial force the grips apply (zero when free)", ("time",)),
    "holding_moment": ("N m", "moment the grips or mandrel apply about the mid-thickness", ("time",)),
    "photon_flux_incident": ("mol m-2 s-1", "incident photon flux (all sources)", ("time",)),
    "photon_flux_reflected": ("mol m-2 s-1", "photon flux reflected at the entry faces", ("time",)),
    "photon_flux_absorbed": ("mol m-2 s-1", "photon flux absorbed in the stack", ("time",)),
    "photon_flux_transmitted": ("mol m-2 s-1", "photon flux leaving through the far faces", ("time",)),
    "incident_irradiance": ("W m-2", "total incident irradiance of the sources on", ("time",)),
    "optical_dose": ("J m-2", "incident radiant exposure since t = 0", ("time",)),
    "protocol_step": ("1", "index of the protocol step (0-based) that ends at or contains this time", ("time",)),
    "hold": ("1", "mechanical condition of that protocol step", ("time",)),
    # only with a chromophore
    "conversion_front_depth": ("m", "depth below the {lit_face} face where conversion falls to {front_percent} of "
                                    "full conversion (0: no front)", ("time",)),
    # only with heat
    "temperature": ("K", "temperature", ("time", "z")),
    "peak_temperature": ("K", "highest cell temperature", ("time",)),
    "surface_temperature_bottom": ("K", "temperature of the bottom face", ("time",)),
    "surface_temperature_top": ("K", "temperature of the top face", ("time",)),
    "absorbed_power_total": ("W m-2", "absorbed optical power per unit area", ("time",)),
    "heat_absorbed": ("J m-2", "heat deposited by absorbed light since t = 0", ("time",)),
    "heat_lost_bottom": ("J m-2", "heat lost through the bottom face since t = 0", ("time",)),
    "heat_lost_top": ("J m-2", "heat lost through the top face since t = 0", ("time",)),
    # only with a light-formed network
    "network_density": ("1", "density of the light-formed network (1 = fully formed)", ("time", "z")),
    "network_strain": ("1", "network-weighted strain the light-formed network remembers", ("time", "z")),
    # only with programming holds (shape memory): one entry per programming cycle
    "cycle_hold": ("1", "programming hold of the cycle (stretch: strain; bend: curvature)", ("cycle",)),
    "fixity_ratio": ("1", "shape fixity ratio R_f of the cycle (Lendlein and Kelch 2002)", ("cycle",)),
    "recovery_ratio": ("1", "shape recovery ratio R_r of the cycle (Lendlein and Kelch 2002)", ("cycle",)),
    "bend_angle_after_release": ("rad", "bend angle at the end of the first free step after the hold", ("cycle",)),
    # only with a liquid-crystal layer
    "order_parameter": ("1", "nematic order parameter Q (0 in isotropic cells)", ("time", "z")),
    "plate_curvature_x": ("m-1", "curvature along the strip of the free plate (laminate section)", ("time",)),
    "plate_curvature_y": ("m-1", "curvature across the strip of the free plate (laminate section)", ("time",)),
    "twist_rate": ("rad m-1", "twist of the free plate, d2w/dxdy (rotation of the section per length)", ("time",)),
    "ribbon_shape": ("1", "shape the free ribbon of the strip's width takes", ("time",)),
    "ribbon_curvature": ("m-1", "bend of the free ribbon's centre line (its normal curvature)", ("time",)),
    "ribbon_curvature_across": ("m-1", "curvature of the free ribbon across its width", ("time",)),
    "ribbon_twist_rate": ("rad m-1", "twist of the free ribbon (geodesic torsion of its centre line)", ("time",)),
    "ribbon_helix_radius": ("m", "radius of the helix the free ribbon's centre line follows (0: straight axis)",
                            ("time",)),
    "ribbon_helix_pitch": ("m", "length along the helix axis per turn of the free ribbon", ("time",)),
    "polarisation_rotation": ("rad", "turn of the polarisation of {polarisation_source} across the film",
                              ("time",)),
}

#: What a missing (NaN, written as the fill value) entry of a per-cycle variable means.
MISSING_MEANS: dict[str, str] = {
    "fixity_ratio": "no free step follows the hold, or the programmed value equals the value before it",
    "recovery_ratio": "fewer than two free steps follow the hold, or the programmed value equals the value before it",
    "bend_angle_after_release": "no free step follows the hold",
    "ribbon_helix_radius": "the ribbon is flat (no bend, no twist)",
    "ribbon_helix_pitch": "the ribbon is flat (no bend, no twist)",
}

#: Coordinates: name -> (units, long_name, dims).
COORDS: dict[str, tuple[str, str, tuple[str, ...]]] = {
    "time": ("s", "time since the start of the protocol", ("time",)),
    "z": ("m", "height of the cell centre above the bottom face", ("z",)),
    "layer": ("1", "layer of the cell", ("z",)),
    "cycle": ("1", "programming cycle (1 = first)", ("cycle",)),
}

#: Meaning of the sign of the curvature, stored with every result.
SIGN_CONVENTION = "curvature > 0 bends the strip toward +z (top face concave); z = 0 is the bottom face"


@dataclass(frozen=True, eq=False)
class Solution:
    """One simulation as NumPy arrays, SI; built by :func:`actsim.solve`.

    Every array named in :data:`COORDS` and :data:`VARIABLES` is a field of
    the same name: ``time`` (n_time,) [s]; ``z`` (n_cell,) cell centres [m]
    and ``layer`` (n_cell,) layer names, bottom cell first; (n_time, n_cell)
    fields such as ``conversion`` and ``stress``; (n_time,) strip responses
    such as ``curvature`` [m-1], ``bend_angle`` [rad], ``tip_deflection``
    [m] and ``blocked_force`` [N]. Variables a run does not model are None:
    ``conversion_front_depth`` without a chromophore, the temperature fields
    without heat, ``network_density`` and ``network_strain`` without a
    light-formed network. :meth:`units`, :meth:`long_name` and :meth:`dims`
    describe each; :meth:`to_dataset` labels them as an
    :class:`xarray.Dataset` (what :func:`actsim.simulate` returns).

    The remaining fields come from the scenario: ``title``, ``scenario_text``,
    ``scenario_path``, ``thickness`` [m], ``free_length`` [m], ``width`` [m],
    ``heat_modelled``, ``section`` ("plane stress" or "plane strain") and
    ``lit_face`` ("top" or "bottom", the face the front depth is measured from);
    from the time loop ``time_stepping`` (how the steps were chosen) and
    ``time_steps_accepted``, ``time_steps_rejected``.
    """

    time: np.ndarray
    z: np.ndarray
    layer: np.ndarray
    irradiance: np.ndarray
    conversion: np.ndarray
    eigenstrain: np.ndarray
    modulus: np.ndarray
    stress: np.ndarray
    absorbed_power: np.ndarray
    curvature: np.ndarray
    free_curvature: np.ndarray
    bend_angle: np.ndarray
    tip_deflection: np.ndarray
    tip_position_x: np.ndarray
    axial_strain: np.ndarray
    bending_stiffness: np.ndarray
    blocked_moment: np.ndarray
    blocked_force: np.ndarray
    holding_force: np.ndarray
    holding_moment: np.ndarray
    photon_flux_incident: np.ndarray
    photon_flux_reflected: np.ndarray
    photon_flux_absorbed: np.ndarray
    photon_flux_transmitted: np.ndarray
    incident_irradiance: np.ndarray
    optical_dose: np.ndarray
    protocol_step: np.ndarray
    hold: np.ndarray
    title: str
    scenario_text: str
    scenario_path: str
    thickness: float
    free_length: float
    width: float
    heat_modelled: bool
    time_stepping: str
    time_steps_accepted: int
    time_steps_rejected: int
    section: str
    lit_face: str
    conversion_front_depth: np.ndarray | None = None
    temperature: np.ndarray | None = None
    peak_temperature: np.ndarray | None = None
    surface_temperature_bottom: np.ndarray | None = None
    surface_temperature_top: np.ndarray | None = None
    absorbed_power_total: np.ndarray | None = None
    heat_absorbed: np.ndarray | None = None
    heat_lost_bottom: np.ndarray | None = None
    heat_lost_top: np.ndarray | None = None
    network_density: np.ndarray | None = None
    network_strain: np.ndarray | None = None
    cycle: np.ndarray | None = None
    cycle_hold: np.ndarray | None = None
    fixity_ratio: np.ndarray | None = None
    recovery_ratio: np.ndarray | None = None
    bend_angle_after_release: np.ndarray | None = None
    order_parameter: np.ndarray | None = None
    plate_curvature_x: np.ndarray | None = None
    plate_curvature_y: np.ndarray | None = None
    twist_rate: np.ndarray | None = None
    ribbon_shape: np.ndarray | None = None
    ribbon_curvature: np.ndarray | None = None
    ribbon_curvature_across: np.ndarray | None = None
    ribbon_twist_rate: np.ndarray | None = None
    ribbon_helix_radius: np.ndarray | None = None
    ribbon_helix_pitch: np.ndarray | None = None
    polarisation_rotation: np.ndarray | None = None
    ribbon_width_parameter: float | None = None
    polarisation_source: str = ""
    front_level: float = 0.5
    small_strain_warning: str = ""

    @property
    def names(self) -> list[str]:
        """The output variables this run holds, in the order of :data:`VARIABLES`."""
        return [name for name in VARIABLES if getattr(self, name) is not None]

    @staticmethod
    def units(name: str) -> str:
        """Units of a variable or coordinate (``"1"`` for dimensionless)."""
        return _entry(name)[0]

    def long_name(self, name: str) -> str:
        """Long name of a variable or coordinate, as the Dataset carries it."""
        return _entry(name)[1].format(section=self.section, lit_face=self.lit_face,
                                      polarisation_source=f"source '{self.polarisation_source}'",
                                      front_percent=f"{100 * self.front_level:g} %")

    @staticmethod
    def dims(name: str) -> tuple[str, ...]:
        """Dimensions of a variable or coordinate: ("time",), ("z",), ("time", "z") or ("cycle",)."""
        return _entry(name)[2]

    @property
    def attrs(self) -> dict:
        """The Dataset attributes: scenario text and path, actsim version, sign convention, sizes."""
        from . import __version__

        return {
            "title": self.title,
            "scenario": self.scenario_text,
            "scenario_path": self.scenario_path,
            "actsim_version": __version__,
            "sign_convention": SIGN_CONVENTION,
            "Conventions": "CF-1.8",
            "thickness": self.thickness,
            "free_length": self.free_length,
            "width": self.width,
            "heat_modelled": int(self.heat_modelled),
            "time_stepping": self.time_stepping,
            "time_steps_accepted": self.time_steps_accepted,
            "time_steps_rejected": self.time_steps_rejected,
        } | ({"small_strain_warning": self.small_strain_warning} if self.small_strain_warning else {}) \
          | ({"ribbon_width_parameter": self.ribbon_width_parameter} if self.ribbon_width_parameter is not None
             else {})

    @property
    def nbytes(self) -> int:
        """Bytes held by the arrays."""
        return sum(v.nbytes for f in fields(self) if isinstance(v := getattr(self, f.name), np.ndarray))

    def to_dataset(self):
        """The labelled result: an :class:`xarray.Dataset` sharing these arrays, every variable with
        ``units`` and ``long_name``, the attributes of :attr:`attrs`.

        Notes
        -----
        The arrays are consistent by construction, so the Dataset is put together directly (default
        indexes on ``time`` and ``z``), skipping xarray's merge and alignment (about 0.4 ms of a
        sub-millisecond run); where that internal route is missing, the public constructor builds the
        same Dataset (``tests/test_solve.py`` checks they are identical).
        """
        import xarray as xr

        coords = {name: self._variable(xr, name) for name in COORDS if getattr(self, name) is not None}
        data_vars = {name: self._variable(xr, name) for name in self.names}
        try:
            return _direct_dataset(xr, coords, data_vars, self.attrs)
        except (AttributeError, ImportError, TypeError):  # pragma: no cover - another xarray's internals
            return xr.Dataset(data_vars=data_vars, coords=coords, attrs=self.attrs)

    def _variable(self, xr, name):
        units, _, dims = _entry(name)
        attrs = {"units": units, "long_name": self.long_name(name)}
        if name in MISSING_MEANS:
            attrs["missing_means"] = MISSING_MEANS[name]
        if name == "conversion_front_depth":
            attrs["front_conversion"] = self.front_level
        if name == "polarisation_rotation":
            attrs["source"] = self.polarisation_source
        return xr.Variable(dims, getattr(self, name), attrs=attrs)


def _direct_dataset(xr, coords, data_vars, attrs):
    """``xr.Dataset(data_vars=data_vars, coords=coords, attrs=attrs)`` without merge and alignment."""
    from xarray.core.indexes import PandasIndex

    variables, indexes = dict(data_vars), {}
    variables.update(coords)
    dims = [dim for dim in ("time", "z", "cycle") if dim in coords]
    for dim in dims:
        index = PandasIndex.from_variables({dim: coords[dim]}, options={})
        indexes[dim] = index
        variables.update(index.create_variables({dim: coords[dim]}))
    sizes = {dim: coords[dim].size for dim in dims}
    return xr.Dataset._construct_direct(variables, set(coords), dims=sizes, attrs=attrs, indexes=indexes)


def _entry(name: str) -> tuple[str, str, tuple[str, ...]]:
    try:
        return VARIABLES[name] if name in VARIABLES else COORDS[name]
    except KeyError:
        raise KeyError(f"{name!r} is not an output of actsim.solve; outputs: {', '.join([*COORDS, *VARIABLES])}") \
            from None

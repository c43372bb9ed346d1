"""The scenario as frozen SI dataclasses: :class:`Scenario` and its parts.

Built by :func:`actsim.scenario.parse_scenario`; every number is SI (m, s, K, Pa, W m-2,
mol m-3). Job sections (``[checks]``, ``[mask]``, ...) are kept as the TOML tables the
file gave (:attr:`Scenario.sections`); each job parses its own with
:func:`actsim.scenario.section_settings`.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from ..spectra import LightSource, SpectralFunction

__all__ = ["Relaxation", "LiquidCrystal", "Director", "Material", "Layer", "Strip", "HOLDS", "Step", "HeatSettings", "OpticsSettings", "Scenario",
           "LightSource", "SpectralFunction"]


@dataclass(frozen=True)
class Relaxation:
    """Linear viscoelasticity of a material's primary network: a Prony series and its time-temperature shift, SI.

    The relaxation modulus is ``E(xi) = modulus + sum_k moduli[k] exp(-xi / times[k])`` in the reduced time
    ``d xi = dt / a_T(T)`` (the material's ``modulus`` is the long-term, fully relaxed one); ``shift`` is
    ``"none"``, ``"wlf"`` (``wlf_c1`` [1], ``wlf_c2`` [K] about ``reference_temperature`` [K]) or
    ``"arrhenius"`` (``activation_energy`` [J/mol] about ``reference_temperature``) or ``"table"``
    (``log10 a_T`` at ``shift_table_temperatures`` [K], strictly increasing, piecewise linear in between and
    clamped at the end values).
    """

    moduli: tuple  # Pa, one per term
    times: tuple  # s, at the reference temperature
    shift: str = "none"
    reference_temperature: float = 293.15  # K
    wlf_c1: float = 17.44  # 1
    wlf_c2: float = 51.6  # K
    activation_energy: float = 0.0  # J/mol
    shift_table_temperatures: tuple = ()  # K, strictly increasing (shift = "table")
    shift_table_log10: tuple = ()  # log10 a_T at those temperatures, 1


@dataclass(frozen=True)
class LiquidCrystal:
    """Nematic order of a liquid-crystal network and the spontaneous strain it sets, SI (see actsim.order).

    The order parameter Q follows ``order_law`` ("maier-saupe" or "haller") of the reduced temperature
    T / T_NI(x), with T_NI(x) = ``clearing_temperature`` - ``clearing_shift`` x lowered by the converted (cis)
    fraction x. The strain along / across the director is ``strain_per_order`` (Q - Q_ref) and
    ``strain_across_per_order`` (Q - Q_ref) for a glassy network, or the Warner–Terentjev step-length result for an
    elastomer, relative to the order Q_ref at ``preparation_temperature`` and x = 0. The absorbing species follow
    the order by ``reactant_order`` and ``product_order`` (fractions of Q); their transition moments absorb
    ``absorption_ratio_*`` as much across as along. ``birefringence`` is n_e - n_o at Q_ref (scaled with Q).
    """

    network: str = "glassy"  # "glassy" or "elastomer"
    order_law: str = "maier-saupe"  # or "haller"
    clearing_temperature: float = 368.15  # K, T_NI of the unconverted network
    clearing_shift: float = 0.0  # K, drop of T_NI at full conversion
    haller_exponent: float = 0.2  # 1
    preparation_temperature: float = 293.15  # K
    strain_per_order: float = 0.0  # 1, along the director per unit Q (glassy)
    strain_across_per_order: float = 0.0  # 1, across the director per unit Q (glassy)
    birefringence: float = 0.0  # 1, at the preparation order
    reactant_order: float = 1.0  # 1
    product_order: float = 0.0  # 1
    absorption_ratio_reactant: float = 0.0  # 1
    absorption_ratio_product: float = 0.0  # 1


@dataclass(frozen=True)
class Director:
    """Director profile of a layer through its thickness (angles in rad; see actsim.order.director_profile).

    ``kind`` is "planar" (in-plane at ``angle`` from the strip axis), "homeotropic", "splay" (tilt from
    ``tilt_bottom`` to ``tilt_top``), "twisted" (in-plane angle from ``angle`` to ``angle_top``), "hybrid" (both)
    or "table" (``table``: rows of normalised height, in-plane angle, tilt), or "polydomain" (directors in the plane
    spread over ``families`` equally spaced angles, cycling cell by cell: a fine laminate of domains).
    """

    kind: str = "planar"
    angle: float = 0.0
    angle_top: float = 0.0
    tilt_bottom: float = 0.0
    tilt_top: float = 0.0
    table: tuple = ()
    families: int = 0


@dataclass(frozen=True, eq=False)
class Material:
    """Material of one layer, SI units.

    ``modulus`` is the Young's modulus of the unconverted (reactant) form and
    ``product_modulus`` that of the fully converted form; in between the
    modulus is linear in conversion. A passive material has zero chromophore
    concentration. With ``relaxation`` (a :class:`Relaxation`) the primary
    network is viscoelastic and ``modulus`` is its long-term (relaxed) modulus.
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
    # linear viscoelasticity of the primary network (None: elastic); ``modulus`` is then the long-term modulus
    relaxation: Relaxation | None = None
    # large strain: "linear" (small strain), "neo-hookean" or "gent" (incompressible, shear modulus = modulus / 3);
    # Gent's finite extensibility J_m [1] (0 unless "gent")
    strain_law: str = "linear"
    extensibility: float = 0.0
    # nematic order and its spontaneous strain (None: an isotropic material)
    liquid_crystal: LiquidCrystal | None = None

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
    director: Director | None = None  # liquid-crystal layers only (None: planar along the strip)


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
    time_step: float  # s (fixed steps; inf when the step is error-controlled)
    time_tolerance: float = 0.0  # local error bound of one step (see docs/scenario.md); 0: fixed steps
    text: str = ""
    path: str = ""
    description: str = ""
    target_bend_angle: float | None = None  # rad
    front_level: float = 0.5  # converted fraction of full conversion that marks the conversion front [1]
    small_strain_limit: float = 0.05  # strain past which a small-strain (linear) layer draws a warning [1]
    #: job sections as the file gave them: name (one of JOB_SECTIONS) -> TOML table (plain data, not parsed
    #: here; a job reads its own with actsim.scenario.section_settings). Treat as read-only.
    sections: dict = field(default_factory=dict)
    base_dir: str = ""  # folder against which the scenario's data files were resolved
    material_names: tuple = ()  # every [materials] name in file order (a material need not be in a layer)
    # parsed job sections, filled by section_settings; a copy made by replace() starts empty
    _settings: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    @property
    def thickness(self) -> float:
        return float(sum(layer.thickness for layer in self.layers))

    @property
    def duration(self) -> float:
        return float(sum(step.duration for step in self.protocol))

    def replace(self, **changes) -> "Scenario":
        """A copy with some top-level fields changed (dataclasses.replace)."""
        return replace(self, **changes)

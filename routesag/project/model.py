"""A validated project as dataclasses, every value in SI units."""
from __future__ import annotations

from dataclasses import dataclass, field

#: line_id of structures from a file without that field.
DEFAULT_LINE_ID = "line"
#: Name of the one wire of a project without [[wires]] whose structures have no line_id.
DEFAULT_WIRE = "conductor"


def line_prefix(line_id) -> str:
    """Prefix of span and section ids: ``"A:"`` for line A, nothing for a file without line_id."""
    return "" if str(line_id) == DEFAULT_LINE_ID else f"{line_id}:"


def line_label(line_id) -> str:
    """A line in a message: ``line A``, or ``the line`` for a file without line_id."""
    return "the line" if str(line_id) == DEFAULT_LINE_ID else f"line {line_id}"
from pathlib import Path

from routesag.errors import ProjectError
from routesag.physics.thermal import ThermalConductor, Weather, conductor_temperature_c
from routesag.physics.two_material import LinearLaw, TwoMaterialConductor
from routesag.physics.clearance_rules import (
    DEFAULT_ADDER_ABOVE_KV, DEFAULT_ADDER_PER_KV_M, DEFAULT_REQUIRED_M, phase_to_ground_kv, voltage_adder_m,
)


@dataclass(frozen=True)
class Conductor:
    """Conductor properties in SI units."""

    diameter_m: float
    area_m2: float
    mass_kg_m: float
    rated_strength_n: float
    modulus_pa: float
    expansion_per_c: float
    name: str = "conductor"
    source: str = "project file"
    resistance_25c_ohm_m: float | None = None
    resistance_75c_ohm_m: float | None = None
    two_material: TwoMaterialConductor | None = None   # model = "two_material": aluminium and core members

    @property
    def model(self) -> str:
        """Stretch model used: ``"two_material"`` (aluminium and core members) or ``"linear"``."""
        return "linear" if self.two_material is None else "two_material"

    def law(self, reference_temperature_c: float, creep_strain: float = 0.0, final: bool = False):
        """Stretch law (:mod:`routesag.physics.two_material`): linear composite, or the two members.

        ``creep_strain`` (the aluminium's, final condition) needs the two-material model.
        """
        if self.two_material is not None:
            return self.two_material.law(creep_strain, reference_temperature_c, final)
        if creep_strain:
            raise ValueError("a creep strain needs the two-material model")
        return LinearLaw(self.modulus_pa * self.area_m2, self.expansion_per_c, reference_temperature_c)

    def thermal(self) -> ThermalConductor | None:
        """The conductor as the heat balance sees it, or None without both resistances."""
        if self.resistance_25c_ohm_m is None or self.resistance_75c_ohm_m is None:
            return None
        return ThermalConductor(self.diameter_m, self.resistance_25c_ohm_m, self.resistance_75c_ohm_m)


@dataclass(frozen=True)
class LoadCase:
    """One design load case: conductor temperature, ice and wind."""

    name: str
    temperature_c: float | None      # None when given by current_a
    ice_m: float = 0.0
    wind_pa: float = 0.0
    constant_n_m: float = 0.0
    wind_side: str = "right"
    condition: str = "initial"
    current_a: float | None = None
    weather: Weather | None = None      # with current_a: the heat balance's weather

    def conductor_temperature_c(self, conductor: Conductor) -> float:
        """The case's conductor temperature [degC]: given, or from ``current_a`` by the IEEE 738 heat balance.

        Raises
        ------
        ProjectError
            With ``current_a`` on a conductor without AC resistances.
        """
        if self.current_a is None:
            return self.temperature_c
        thermal = conductor.thermal()
        if thermal is None:
            raise ProjectError(f"load case {self.name!r}: current_a needs the conductor's AC resistances "
                               f"(resistance_25c_ohm_km and resistance_75c_ohm_km in [conductor]); "
                               f"{conductor.name} has none")
        return conductor_temperature_c(self.current_a, self.weather, thermal)

    @property
    def side_sign(self) -> float:
        return 1.0 if self.wind_side == "right" else -1.0


@dataclass(frozen=True)
class TensionLimit:
    """Largest tension (as % of rated strength) and/or catenary constant allowed in one load case."""

    load_case: str
    max_percent_rts: float | None = None
    max_catenary_m: float | None = None
    applies_to: str = "horizontal"

    def describe(self) -> str:
        parts = []
        if self.max_percent_rts is not None:
            parts.append(f"{self.max_percent_rts:g} % RTS {self.applies_to}")
        if self.max_catenary_m is not None:
            parts.append(f"H/w {self.max_catenary_m:g} m")
        return " and ".join(parts)


@dataclass(frozen=True)
class Stringing:
    """The known state of the conductor: temperature and one tension key."""

    temperature_c: float
    horizontal_tension_kn: float | None = None
    tension_percent_rts: float | None = None
    catenary_m: float | None = None
    creep_allowance_c: float | None = None
    creep_strain: float | None = None
    final_horizontal_tension_kn: float | None = None
    from_limits: bool = False
    method: str = "section"
    source: str = "design"      # "as_found": load cases start from the section's fitted survey state

    def state_temperature_c(self, temperature_c: float, condition: str) -> float:
        """Temperature at which the initial state stands for ``condition`` [degC].

        The final (crept) state at T is the initial state at T + creep allowance.

        Raises
        ------
        ValueError
            For the final condition without an allowance: no creep is never
            assumed silently (project validation refuses such a project first).
        """
        if condition != "final":
            return temperature_c
        if self.creep_allowance_c is None:
            raise ValueError("the final condition needs creep_allowance_c (0 for a wire that does not creep)")
        return temperature_c + self.creep_allowance_c

    def horizontal_tension_n(self, conductor: Conductor, bare_weight_n_m: float) -> float:
        """Horizontal tension of the known state [N]."""
        if self.horizontal_tension_kn is not None:
            return self.horizontal_tension_kn * 1e3
        if self.tension_percent_rts is not None:
            return self.tension_percent_rts / 100.0 * conductor.rated_strength_n
        return self.catenary_m * bare_weight_n_m


@dataclass(frozen=True)
class Wire:
    """One wire strung along the line: a phase conductor or an earth wire.

    ``offset_m`` is horizontal, perpendicular to the line (along the bisector
    at an angle structure), positive to the right looking along increasing
    seq; ``dz_m`` is vertical from the structure's attachment height.
    """

    name: str
    conductor: Conductor
    stringing: Stringing
    offset_m: float = 0.0
    dz_m: float = 0.0
    insulated: bool = True


@dataclass(frozen=True)
class ClearanceRules:
    """Required clearances by category, the voltage adder and the clearance options.

    ``base_m`` holds the values before the adder; :attr:`required_m` after it.
    """

    base_m: dict = field(default_factory=lambda: dict(DEFAULT_REQUIRED_M))
    voltage_kv: float | None = None
    max_voltage_kv: float | None = None
    adder_per_kv_m: float = DEFAULT_ADDER_PER_KV_M
    adder_above_kv: float = DEFAULT_ADDER_ABOVE_KV
    cases: tuple[str, ...] | None = None
    hotspot_merge_m: float = 10.0
    surface_min_height_m: float = 0.5
    crossing_width_m: float = 10.0

    @property
    def phase_to_ground_kv(self) -> float | None:
        if self.voltage_kv is None:
            return None
        return float(phase_to_ground_kv(self.voltage_kv, self.max_voltage_kv))

    @property
    def adder_m(self) -> float:
        """Clearance added to every base value for the voltage [m] (0 without a voltage)."""
        if self.voltage_kv is None:
            return 0.0
        return float(voltage_adder_m(self.phase_to_ground_kv, self.adder_per_kv_m, self.adder_above_kv))

    @property
    def required_m(self) -> dict[str, float]:
        """Required clearance by category after the adder [m]."""
        return {name: base + self.adder_m for name, base in self.base_m.items()}

    def checks(self, load_case: str) -> bool:
        """Whether a load case is checked for clearance."""
        return self.cases is None or load_case in self.cases


@dataclass(frozen=True)
class PointCloudSettings:
    """The ``[point_cloud]`` and ``[survey]`` settings, in SI units."""

    path: Path
    layer: str | None = None
    crs: str | None = None
    corridor_m: float | None = None
    wire_classes: tuple[int, ...] = (14,)
    surface_classes: tuple[int, ...] = (3, 4, 5, 6)
    structure_gap_m: float = 5.0
    wire_search_m: float = 1.5
    fit_attachments: str = "free"
    write_points: bool = False
    survey_temperature_c: float | None = None
    wire_temperature_c: dict = field(default_factory=dict)
    survey_current: LoadCase | None = None      # [survey] current_a and weather, as a heat balance case
    span_temperature_c: dict = field(default_factory=dict)

    def temperature_of(self, wire: str, conductor: Conductor | None = None, span_id=None) -> float | None:
        """Survey conductor temperature of a wire [degC] (None: not given): the span's own, else the
        wire's, else the line's, else from [survey] current_a by the heat balance of ``conductor``."""
        if span_id is not None and str(span_id) in self.span_temperature_c:
            return self.span_temperature_c[str(span_id)]
        if wire in self.wire_temperature_c or self.survey_current is None or conductor is None:
            return self.wire_temperature_c.get(wire, self.survey_temperature_c)
        return self.survey_current.conductor_temperature_c(conductor)


@dataclass
class Project:
    """A validated project: every setting in SI units, paths resolved."""

    path: Path
    structures_path: Path
    structures_layer: str | None
    terrain_path: Path
    structures_crs: str | None
    terrain_z_units: str
    attach_height_m: float | None
    conductor: Conductor
    stringing: Stringing
    load_cases: list[LoadCase]
    station_m: float
    ice_density_kg_m3: float
    output_path: Path
    pipeline_stages: list[str]
    settings: dict = field(default_factory=dict)
    wires: list[Wire] = field(default_factory=list)
    insulator_weight_n: float = 0.0
    insulator_wind_area_m2: float = 0.0
    insulator_max_swing_deg: float = 60.0
    limits: list[TensionLimit] = field(default_factory=list)
    crossings_path: Path | None = None
    crossings_layer: str | None = None
    surface_path: Path | None = None
    surface_values: str = "elevation"
    clearance: ClearanceRules = field(default_factory=ClearanceRules)
    point_cloud: PointCloudSettings | None = None

    @property
    def base_dir(self) -> Path:
        return self.path.parent

    def line_wires(self, line_id) -> list[Wire]:
        """The wires of a line: the ``[[wires]]`` entries, or one wire at offset 0 named after the line
        (``conductor`` for a structures file without line_id)."""
        if self.wires:
            return list(self.wires)
        name = DEFAULT_WIRE if str(line_id) == DEFAULT_LINE_ID else str(line_id)
        return [Wire(name=name, conductor=self.conductor, stringing=self.stringing)]

    def input_paths(self) -> dict[str, Path]:
        """Every input file by role, for provenance."""
        paths = {"project": self.path, "structures": self.structures_path, "terrain": self.terrain_path,
                 "crossings": self.crossings_path, "surface": self.surface_path,
                 "point_cloud": self.point_cloud.path if self.point_cloud else None}
        return {role: path for role, path in paths.items() if path is not None}



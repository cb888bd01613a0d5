"""The case file's schema: quantity types (strings with units in, SI floats out, with the
messages a user sees) and one pydantic model a section. ``CaseModel`` is the whole file."""

from __future__ import annotations

import math
from typing import Annotated, Any, Literal, Union

from pydantic import AfterValidator, BaseModel, BeforeValidator, ConfigDict, Field
from pydantic_core import PydanticCustomError

from ..names import OUTLET_KINDS
from ..solvers import SOLVERS
from ..units import UnitError, flow_rate_kind, to_si

DEFAULT_AMBIENT = 101325.0
MAX_CASE_BYTES = 1_000_000  # a case file is a page of text; anything larger is not one

OPERATING_POINTS = ('Allowed for a liquid: outlet.kind = "pipe": two of inlet.pressure, inlet.flow_rate and '
                    'outlet.pressure (default 0 gauge); "exit-plane" or "free-jet": inlet.pressure or inlet.flow_rate.')


# ---------------------------------------------------------------------------------------------
# quantity types


# a bare temperature below this is almost surely meant in degC, not kelvin
BARE_TEMPERATURE_HINT_K = 200.0


def _quantity(dimension: str, reference: str | None = None):
    def convert(value: Any) -> float:
        if dimension == "temperature" and isinstance(value, (int, float)) and not isinstance(value, bool) \
                and 0 < value < BARE_TEMPERATURE_HINT_K:
            raise PydanticCustomError("quantity", f'expected a temperature; a bare number is read as kelvin ({value:g} K): '
                                      f'write e.g. "{value:g} degC"')
        try:
            return to_si(value, dimension, reference)
        except UnitError as exc:
            raise PydanticCustomError("quantity", str(exc)) from None

    convert.dimension = dimension  # read back when the resolved case is written with units
    return BeforeValidator(convert)


MAX_LENGTH = 1.0e4  # m: no bore of this tool is longer or wider
MAX_PRESSURE = 1.0e10  # Pa


def _plausible_length(value: float) -> float:
    if abs(value) > MAX_LENGTH:
        raise PydanticCustomError("plausible", f"expected a length below {MAX_LENGTH:g} m, got {value:.6g} m")
    return value


def _plausible_pressure(value: float) -> float:
    if abs(value) > MAX_PRESSURE:
        raise PydanticCustomError("plausible", f"expected a pressure below {MAX_PRESSURE / 1e9:g} GPa, got {value:.6g} Pa")
    return value


def _positive_in(unit: str):
    """Values above zero; the message gives the value in ``unit`` (the SI unit the input was read into)."""
    def check(value: float) -> float:
        if not value > 0.0:
            raise PydanticCustomError("positive", f"expected a value greater than zero, got {value:.6g} {unit}".rstrip())
        return value

    return AfterValidator(check)


def _non_negative_in(unit: str):
    def check(value: float) -> float:
        if value < 0.0:
            raise PydanticCustomError("non_negative", f"expected a value of zero or more, got {value:.6g} {unit}".rstrip())
        return value

    return AfterValidator(check)


def _half_angle(value: float) -> float:
    if not 0.0 < value < math.pi / 2:
        hint = ' (a bare number is read as radians: write e.g. "12 deg")' if value >= math.pi / 2 else ""
        raise PydanticCustomError("angle_range", f"expected an angle between 0 and 90 deg, got {math.degrees(value):.4g} deg{hint}")
    return value


Length = Annotated[float, _quantity("length"), AfterValidator(_plausible_length)]
PosLength = Annotated[float, _quantity("length"), AfterValidator(_plausible_length), _positive_in("m")]
NonNegLength = Annotated[float, _quantity("length"), AfterValidator(_plausible_length), _non_negative_in("m")]
Pressure = Annotated[float, _quantity("pressure", "gauge"), AfterValidator(_plausible_pressure)]  # gauge unless the key says absolute
AbsPressure = Annotated[float, _quantity("pressure", "absolute"), AfterValidator(_plausible_pressure), _positive_in("Pa (absolute)")]
Temperature = Annotated[float, _quantity("temperature"), _positive_in("K")]
Density = Annotated[float, _quantity("density"), _positive_in("kg/m^3")]
HalfAngle = Annotated[float, _quantity("angle"), AfterValidator(_half_angle)]
GasConstant = Annotated[float, _quantity("specific_gas_constant"), _positive_in("J/(kg K)")]
# A liquid's dynamic viscosity, bounded by physics: from 1e-6 Pa s (below liquid helium's, about 3e-6 Pa s,
# the thinnest liquid) to 1e4 Pa s (a molten polymer or bitumen; a thicker fluid in a bore of some centimetres
# flows at a Reynolds number far below one, where no thin wall layer and no inviscid core exist)
VISCOSITY_MIN, VISCOSITY_MAX = 1e-6, 1e4


def _plausible_viscosity(value: float) -> float:
    if not VISCOSITY_MIN <= value <= VISCOSITY_MAX:
        raise PydanticCustomError("plausible", f"expected a dynamic viscosity from {VISCOSITY_MIN:g} to {VISCOSITY_MAX:g} Pa s "
                                  f"(the thinnest to the thickest liquids a wall layer can describe), got {value:.6g} Pa s")
    return value


Viscosity = Annotated[float, _quantity("dynamic_viscosity"), _positive_in("Pa s"), AfterValidator(_plausible_viscosity)]


def _flow_rate(value: Any) -> tuple[str, float]:
    try:
        kind = flow_rate_kind(value)
        return kind, to_si(value, "volume_flow" if kind == "volume" else "mass_flow")
    except UnitError as exc:
        raise PydanticCustomError("quantity", str(exc)) from None


def _positive_flow(value: tuple[str, float]) -> tuple[str, float]:
    if not value[1] > 0:
        raise PydanticCustomError("positive", "expected a flow rate greater than zero")
    return value


FlowRate = Annotated[tuple[str, float], BeforeValidator(_flow_rate), AfterValidator(_positive_flow)]
Point = tuple[Length, Length]


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


# ---------------------------------------------------------------------------------------------
# sections


class FluidSpec(_Section):
    kind: Literal["water", "seawater", "liquid", "ideal-gas"]
    temperature: Temperature | None = None
    density: Density | None = None
    vapour_pressure: Annotated[float, _quantity("pressure", "absolute"), _non_negative_in("Pa (absolute)")] | None = None
    gas: Literal["air", "nitrogen"] | None = None
    gas_constant: GasConstant | None = None
    gamma: Annotated[float, _quantity("dimensionless")] | None = None
    viscosity: Viscosity | None = None  # dynamic, of a given liquid (the wall layer of [viscous])


class SegmentSpec(_Section):
    to: Point
    radius: Length | None = None


class CenterbodySpec(_Section):
    start: Point
    segment: list[SegmentSpec] = Field(min_length=1)


class ConicalBore(_Section):
    template: Literal["conical"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    inlet_diameter: PosLength
    exit_diameter: PosLength
    half_angle: HalfAngle | None = None  # the cone by its half angle ...
    length: PosLength | None = None  # ... or by its axial length (one of the two)
    inlet_length: NonNegLength  # 0: the cone starts at the inlet plane
    tip_length: NonNegLength  # 0: the cone ends at the exit plane
    lip_radius: NonNegLength = 0.0
    centerbody: CenterbodySpec | None = None


class ContouredBore(_Section):
    template: Literal["contoured"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    inlet_diameter: PosLength
    exit_diameter: PosLength
    contraction_length: PosLength
    inlet_length: NonNegLength  # 0: the contraction starts at the inlet plane
    tip_length: NonNegLength  # 0: the contraction ends at the exit plane
    centerbody: CenterbodySpec | None = None


class ReducerBore(_Section):
    template: Literal["reducer"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    inlet_diameter: PosLength
    outlet_diameter: PosLength
    half_angle: HalfAngle
    inlet_length: NonNegLength
    outlet_length: PosLength
    knuckle_radius: NonNegLength = 0.0
    centerbody: CenterbodySpec | None = None


class SpearBore(_Section):
    template: Literal["spear"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    inlet_diameter: PosLength
    orifice_diameter: PosLength
    half_angle: HalfAngle
    inlet_length: NonNegLength
    tip_length: NonNegLength  # 0: the orifice edge is the exit (the lip of a free jet)
    needle_diameter: PosLength
    needle_half_angle: HalfAngle
    stroke: NonNegLength
    lip_radius: NonNegLength = 0.0


class SegmentsBore(_Section):
    template: Literal["segments"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    start: Point
    segment: list[SegmentSpec] = Field(min_length=1)
    centerbody: CenterbodySpec | None = None


class PointsBore(_Section):
    template: Literal["points"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    file: str
    smooth: Annotated[bool, Field(strict=True)] = False
    unit: Literal["m", "mm", "cm", "in"] | None = None  # of the file's x and r (else from its header, else metres)
    centerbody: CenterbodySpec | None = None


BoreSpec = Annotated[
    Union[ConicalBore, ContouredBore, ReducerBore, SpearBore, SegmentsBore, PointsBore],
    Field(discriminator="template"),
]
BORE_TEMPLATES = ("conical", "contoured", "reducer", "spear", "segments", "points")


class InletSpec(_Section):
    pressure: Pressure | None = None
    flow_rate: FlowRate | None = None
    total_pressure: Pressure | None = None
    total_temperature: Temperature | None = None


class OutletSpec(_Section):
    kind: Literal[OUTLET_KINDS] = "pipe"
    pressure: Pressure | None = None
    ambient_pressure: AbsPressure = DEFAULT_AMBIENT
    # free jet: also solve the same bore with the exit-plane model, for comparison
    compare_exit_plane: Annotated[bool, Field(strict=True)] = True


MAX_LEVEL = 12


class MeshSpec(_Section):
    size: Annotated[float, Field(gt=0.0, le=0.5, strict=True)] = 0.05  # at least two cells across the narrowest section
    level: Annotated[int, Field(ge=0, le=MAX_LEVEL, strict=True)] = 0
    cells: Literal["triangles", "quads"] = "quads"


def _registered_solver(value: Any) -> Any:
    if value is not None and value not in SOLVERS:
        raise PydanticCustomError("solver_kind", f"expected one of the solvers of this version: {', '.join(SOLVERS)}; got {value!r}")
    return value


class SolverSpec(_Section):
    """[solver]: which registered solver; its other keys belong to that solver and are validated by
    the model on its registry entry (``SolverEntry.settings``)."""

    model_config = ConfigDict(extra="allow", frozen=True)
    kind: Annotated[str | None, AfterValidator(_registered_solver)] = None


def _transition(value: Any) -> Any:
    if isinstance(value, str) and value.strip().lower() in ("michel", "none"):
        return value.strip().lower()
    try:
        return to_si(value, "length")
    except UnitError as exc:
        raise PydanticCustomError("quantity", f'expected "michel", "none" or an axial position x where transition is '
                                  f'forced (a length): {exc}') from None


class ViscousSpec(_Section):
    """The wall layer (viscous/stage.py): integral boundary layer on every wall chain."""

    model: Literal["integral", "none"] | None = None  # None: "integral" where the fluid's viscosity is known
    start: Literal["laminar", "turbulent"] | None = None  # None: from zero thickness at the inlet plane, turbulent above Re 2300 (viscous/stage.py)
    start_momentum_thickness: PosLength | None = None
    upstream_length: NonNegLength | None = None
    transition: Annotated[Union[str, float], BeforeValidator(_transition)] = "michel"
    separation_shape_factor: Annotated[float, Field(gt=1.6, le=4.0)] = 2.4
    displacement: Literal["none", "one-pass", "iterate"] = "none"
    displacement_tolerance: Annotated[float, Field(gt=0.0, le=0.1)] = 1e-3
    taps: tuple[Length, Length] | None = None  # wall pressure tappings (x) of the discharge coefficient
    coupling: Literal["blockage", "none"] = "blockage"  # edge speed raised by the section's displacement blockage


class OneDimSpec(_Section):
    threshold: Annotated[float, Field(gt=0.0, lt=1.0)] = 0.02


def _joint_position(value: Any) -> Any:
    if value in ("inlet", "outlet"):
        return value
    if isinstance(value, str) and value.strip().lower() in ("inlet", "outlet"):
        return value.strip().lower()
    try:
        return to_si(value, "length")
    except UnitError as exc:
        raise PydanticCustomError("quantity", f'expected "inlet", "outlet" or an axial position x (a length): {exc}') from None


JointPosition = Annotated[Union[str, float], BeforeValidator(_joint_position)]


class JointSpec(_Section):
    """A bolted joint: where it is, the gasket reaction diameter G and the bolt count."""

    name: str | None = None
    at: JointPosition = "inlet"
    gasket_diameter: PosLength | None = None
    bolts: Annotated[int, Field(ge=1, le=1000, strict=True)] | None = None


class FlangeSpec(JointSpec):
    """The single joint of a simple case ([flange]); several joints go in [[joint]] tables."""


class SweepSpec(_Section):
    """A parameter sweep of the case (``axibore sweep``): dotted key -> values, as on the command line."""

    vary: dict[str, Union[str, list[Union[Annotated[bool, Field(strict=True)], int, float, str]]]] = Field(default_factory=dict)
    zip: Annotated[bool, Field(strict=True)] = False  # pair the lists (equal lengths) instead of their product


class CaseModel(_Section):
    title: str = "untitled case"
    fluid: FluidSpec
    bore: BoreSpec
    inlet: InletSpec = InletSpec()
    outlet: OutletSpec = OutletSpec()
    mesh: MeshSpec = MeshSpec()
    solver: SolverSpec = SolverSpec()
    onedim: OneDimSpec = OneDimSpec()
    viscous: ViscousSpec = ViscousSpec()
    flange: FlangeSpec = FlangeSpec()
    joint: list[JointSpec] = Field(default_factory=list)
    sweep: SweepSpec | None = None  # read by `axibore sweep`; not part of a run
    # read by `axibore uncertainty`: dotted key -> standard uncertainty ("0.1 bar", "1 %"); not part of a run
    uncertainty: dict[str, str] | None = None



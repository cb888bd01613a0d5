"""Case files: TOML with units in, a validated ``Case`` of SI floats out.

``load_case(path)`` reads and validates a case file and raises ``CaseError`` listing every
problem as ``file: key.path: what was expected``. Unknown keys are errors. All pressures are
gauge (relative to ambient) unless the key says absolute.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Annotated, Any, Literal, Union

from pydantic import (
    AfterValidator,
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Field,
    ValidationError,
)
from pydantic_core import PydanticCustomError

from . import fluids
from .units import UnitError, flow_rate_kind, to_si

DEFAULT_AMBIENT = 101325.0


class CaseError(Exception):
    """Problems found in a case file; ``problems`` is a list of (key path, message)."""

    def __init__(self, source: str, problems: list[tuple[str, str]]):
        self.source = source
        self.problems = problems
        super().__init__("\n".join(self.lines()))

    def lines(self) -> list[str]:
        return [f"{self.source}: {path}: {msg}" if path else f"{self.source}: {msg}" for path, msg in self.problems]


# ---------------------------------------------------------------------------------------------
# quantity types


def _quantity(dimension: str):
    def convert(value: Any) -> float:
        try:
            return to_si(value, dimension)
        except UnitError as exc:
            raise PydanticCustomError("quantity", str(exc)) from None

    return BeforeValidator(convert)


def _positive(value: float) -> float:
    if not value > 0.0:
        raise PydanticCustomError("positive", f"expected a value greater than zero, got {value:.6g} (SI)")
    return value


def _non_negative(value: float) -> float:
    if value < 0.0:
        raise PydanticCustomError("non_negative", f"expected a value of zero or more, got {value:.6g} (SI)")
    return value


def _half_angle(value: float) -> float:
    if not 0.0 < value < math.pi / 2:
        hint = ' (a bare number is read as radians: write e.g. "12 deg")' if value >= math.pi / 2 else ""
        raise PydanticCustomError("angle_range", f"expected an angle between 0 and 90 deg, got {math.degrees(value):.4g} deg{hint}")
    return value


Length = Annotated[float, _quantity("length")]
PosLength = Annotated[float, _quantity("length"), AfterValidator(_positive)]
NonNegLength = Annotated[float, _quantity("length"), AfterValidator(_non_negative)]
Pressure = Annotated[float, _quantity("pressure")]
PosPressure = Annotated[float, _quantity("pressure"), AfterValidator(_positive)]
Temperature = Annotated[float, _quantity("temperature"), AfterValidator(_positive)]
Density = Annotated[float, _quantity("density"), AfterValidator(_positive)]
HalfAngle = Annotated[float, _quantity("angle"), AfterValidator(_half_angle)]
GasConstant = Annotated[float, _quantity("specific_gas_constant"), AfterValidator(_positive)]


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
    vapour_pressure: Annotated[float, _quantity("pressure"), AfterValidator(_non_negative)] | None = None
    gas: Literal["air", "nitrogen"] | None = None
    gas_constant: GasConstant | None = None
    gamma: Annotated[float, _quantity("dimensionless")] | None = None


class SegmentSpec(_Section):
    to: Point
    radius: Length | None = None


class CenterbodySpec(_Section):
    start: Point
    segment: list[SegmentSpec] = Field(min_length=1)


class ConicalBore(_Section):
    template: Literal["conical"]
    inlet_diameter: PosLength
    exit_diameter: PosLength
    half_angle: HalfAngle
    inlet_length: PosLength
    tip_length: PosLength
    lip_radius: NonNegLength = 0.0
    centerbody: CenterbodySpec | None = None


class ContouredBore(_Section):
    template: Literal["contoured"]
    inlet_diameter: PosLength
    exit_diameter: PosLength
    contraction_length: PosLength
    inlet_length: PosLength
    tip_length: PosLength
    centerbody: CenterbodySpec | None = None


class ReducerBore(_Section):
    template: Literal["reducer"]
    inlet_diameter: PosLength
    outlet_diameter: PosLength
    half_angle: HalfAngle
    inlet_length: PosLength
    outlet_length: PosLength
    knuckle_radius: NonNegLength = 0.0
    centerbody: CenterbodySpec | None = None


class SpearBore(_Section):
    template: Literal["spear"]
    inlet_diameter: PosLength
    orifice_diameter: PosLength
    half_angle: HalfAngle
    inlet_length: PosLength
    tip_length: PosLength
    needle_diameter: PosLength
    needle_half_angle: HalfAngle
    stroke: NonNegLength
    lip_radius: NonNegLength = 0.0


class SegmentsBore(_Section):
    template: Literal["segments"]
    start: Point
    segment: list[SegmentSpec] = Field(min_length=1)
    centerbody: CenterbodySpec | None = None


class PointsBore(_Section):
    template: Literal["points"]
    file: str
    smooth: bool = False
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
    kind: Literal["pipe", "exit-plane", "free-jet"] = "pipe"
    pressure: Pressure | None = None
    ambient_pressure: PosPressure = DEFAULT_AMBIENT


class MeshSpec(_Section):
    size: Annotated[float, Field(gt=0.0, le=1.0)] = 0.05
    level: Annotated[int, Field(ge=0, le=12)] = 0
    cells: Literal["triangles", "quads"] = "quads"


class SolverSpec(_Section):
    kind: Literal["potential", "euler"] | None = None
    tolerance: Annotated[float, Field(gt=0.0, lt=1e-3)] = 1e-10


class OneDimSpec(_Section):
    threshold: Annotated[float, Field(gt=0.0, lt=1.0)] = 0.02


class FlangeSpec(_Section):
    bolts: Annotated[int, Field(ge=1, le=1000)] | None = None


class CaseModel(_Section):
    title: str = "untitled case"
    fluid: FluidSpec
    bore: BoreSpec
    inlet: InletSpec = InletSpec()
    outlet: OutletSpec = OutletSpec()
    mesh: MeshSpec = MeshSpec()
    solver: SolverSpec = SolverSpec()
    onedim: OneDimSpec = OneDimSpec()
    flange: FlangeSpec = FlangeSpec()


# ---------------------------------------------------------------------------------------------
# the validated case


@dataclass(frozen=True)
class Case:
    """A validated case: every quantity a float in SI (pressures gauge unless named absolute)."""

    title: str
    fluid: fluids.Fluid
    bore: ConicalBore | ContouredBore | ReducerBore | SpearBore | SegmentsBore | PointsBore
    inlet: InletSpec
    outlet: OutletSpec
    mesh: MeshSpec
    solver_kind: str
    solver: SolverSpec
    onedim: OneDimSpec
    flange: FlangeSpec
    source: str = "<memory>"
    base_dir: Path = field(default_factory=Path.cwd)
    model: CaseModel | None = None

    @property
    def ambient_pressure(self) -> float:
        return self.outlet.ambient_pressure

    def resolve_path(self, name: str) -> Path:
        p = Path(name)
        return p if p.is_absolute() else (self.base_dir / p)

    def with_level(self, level: int) -> "Case":
        from dataclasses import replace

        return replace(self, mesh=self.mesh.model_copy(update={"level": level}))

    def unsupported(self) -> list[str]:
        """Capabilities the case asks for that this version cannot run (refused by ``run``)."""
        out = []
        if self.solver_kind == "euler":
            out.append('solver.kind = "euler": the compressible solver is not available yet')
        if not self.fluid.is_liquid:
            out.append('fluid.kind = "ideal-gas": gas runs need the compressible solver, not available yet')
        if self.outlet.kind == "free-jet":
            out.append('outlet.kind = "free-jet": the free-jet boundary is not available yet')
        return out


def _format_validation(exc: ValidationError, data: dict) -> list[tuple[str, str]]:
    problems = []
    template = data.get("bore", {}).get("template") if isinstance(data.get("bore"), dict) else None
    for err in exc.errors():
        loc = list(err["loc"])
        # drop the discriminator tag pydantic inserts for the bore template
        if len(loc) > 1 and loc[0] == "bore" and loc[1] == template:
            del loc[1]
        parts = []
        for item in loc:
            if isinstance(item, int):  # list positions count from 1, as in profile errors
                parts[-1] = f"{parts[-1]}[{item + 1}]" if parts else f"[{item + 1}]"
            else:
                parts.append(str(item))
        path = ".".join(parts)
        kind = err["type"]
        given = err.get("input")
        if kind == "extra_forbidden":
            msg = f"unknown key (a typo?): {parts[-1]!r} is not a case-file key here"
        elif kind == "missing":
            msg = "missing: this key is required" + (f' for template "{template}"' if loc[0] == "bore" and template else "")
        elif kind == "union_tag_invalid":
            msg = f"expected template one of {', '.join(BORE_TEMPLATES)}, got {given.get('template')!r}" if isinstance(given, dict) else err["msg"]
            path = "bore.template"
        elif kind == "union_tag_not_found":
            msg = f"missing: bore.template (one of {', '.join(BORE_TEMPLATES)})"
            path = "bore.template"
        elif kind == "literal_error":
            msg = f"expected {err['ctx']['expected']}, got {given!r}"
        else:
            msg = err["msg"]
            if msg.startswith("Value error, "):
                msg = msg[len("Value error, ") :]
            if kind not in ("quantity", "positive", "non_negative", "angle_range") and given is not None and not isinstance(given, (dict, list)):
                msg = f"{msg} (got {given!r})"
        problems.append((path, msg))
    return problems


def _cross_checks(m: CaseModel) -> list[tuple[str, str]]:
    problems = []
    f = m.fluid
    allowed = {
        "water": {"temperature"},
        "seawater": {"temperature", "density"},
        "liquid": {"density", "vapour_pressure", "temperature"},
        "ideal-gas": {"gas", "gas_constant", "gamma"},
    }[f.kind]
    for key in ("temperature", "density", "vapour_pressure", "gas", "gas_constant", "gamma"):
        if getattr(f, key) is not None and key not in allowed:
            problems.append((f"fluid.{key}", f'not used with fluid.kind = "{f.kind}" (keys for it: {", ".join(sorted(allowed))})'))
    if f.kind in ("water", "seawater") and f.temperature is None:
        problems.append(("fluid.temperature", f'missing: required for fluid.kind = "{f.kind}", e.g. "15 degC"'))
    if f.kind == "water" and f.temperature is not None and not fluids.WATER_T_MIN <= f.temperature <= fluids.WATER_T_MAX:
        problems.append(("fluid.temperature", f"expected 0.01 to 200 degC for water, got {f.temperature - 273.15:.4g} degC"))
    if f.kind == "liquid":
        for key in ("density", "vapour_pressure"):
            if getattr(f, key) is None:
                problems.append((f"fluid.{key}", 'missing: required for fluid.kind = "liquid"'))
    if f.kind == "ideal-gas":
        if f.gas is None and (f.gas_constant is None or f.gamma is None):
            problems.append(("fluid.gas", 'missing: give gas = "air" | "nitrogen", or both gas_constant and gamma'))
        if f.gas is not None and (f.gas_constant is not None or f.gamma is not None):
            problems.append(("fluid.gas", "give gas or gas_constant + gamma, not both"))
        if f.gamma is not None and not 1.0 < f.gamma <= 5.0 / 3.0:
            problems.append(("fluid.gamma", f"expected 1 < gamma <= 5/3, got {f.gamma}"))

    i, o = m.inlet, m.outlet
    if f.kind == "ideal-gas":
        for key in ("total_pressure", "total_temperature"):
            if getattr(i, key) is None:
                problems.append((f"inlet.{key}", "missing: required for an ideal-gas case"))
        for key in ("pressure", "flow_rate"):
            if getattr(i, key) is not None:
                problems.append((f"inlet.{key}", "not used for an ideal-gas case (give total_pressure and total_temperature)"))
    else:
        for key in ("total_pressure", "total_temperature"):
            if getattr(i, key) is not None:
                problems.append((f"inlet.{key}", "only for ideal-gas cases (a liquid takes inlet.pressure or inlet.flow_rate)"))
        if i.pressure is None and i.flow_rate is None:
            problems.append(("inlet", "missing: give inlet.pressure (gauge) or inlet.flow_rate"))
        if i.pressure is not None and i.flow_rate is not None and o.pressure is not None:
            problems.append(("outlet.pressure", "over-determined: inlet.pressure and inlet.flow_rate already fix the outlet pressure"))
        if i.pressure is not None and i.flow_rate is None:
            p_out = o.pressure if o.pressure is not None else 0.0
            if not i.pressure > p_out:
                problems.append(("inlet.pressure", f"expected more than the outlet pressure ({p_out:.6g} Pa gauge) so that the fluid flows in +x, got {i.pressure:.6g} Pa"))
    if m.solver.kind == "potential" and f.kind == "ideal-gas":
        problems.append(("solver.kind", '"potential" is for liquids; an ideal gas takes "euler"'))
    if m.bore.template == "spear" and getattr(m.bore, "centerbody", None) is not None:
        problems.append(("bore.centerbody", "the spear template builds its own needle"))
    return problems


def _resolve_fluid(spec: FluidSpec, ambient: float) -> fluids.Fluid:
    if spec.kind == "water":
        return fluids.resolve_water(spec.temperature, ambient)
    if spec.kind == "seawater":
        return fluids.resolve_seawater(spec.temperature, spec.density)
    if spec.kind == "liquid":
        return fluids.Fluid(kind="liquid", name="liquid", density=spec.density, vapour_pressure=spec.vapour_pressure,
                            temperature=spec.temperature, source="given")
    if spec.gas is not None:
        r, g = fluids.GASES[spec.gas]
        return fluids.Fluid(kind="ideal-gas", name=spec.gas, gas_constant=r, gamma=g, source="built-in constants")
    return fluids.Fluid(kind="ideal-gas", name="gas", gas_constant=spec.gas_constant, gamma=spec.gamma, source="given")


def case_from_dict(data: dict, source: str = "<memory>", base_dir: Path | None = None) -> Case:
    """Validate a case given as a dict (the parsed TOML)."""
    try:
        m = CaseModel.model_validate(data)
    except ValidationError as exc:
        raise CaseError(source, _format_validation(exc, data)) from None
    problems = _cross_checks(m)
    if problems:
        raise CaseError(source, problems)
    try:
        fluid = _resolve_fluid(m.fluid, m.outlet.ambient_pressure)
    except ValueError as exc:
        raise CaseError(source, [("fluid", str(exc))]) from None
    solver_kind = m.solver.kind or ("potential" if fluid.is_liquid else "euler")
    case = Case(
        title=m.title,
        fluid=fluid,
        bore=m.bore,
        inlet=m.inlet,
        outlet=m.outlet,
        mesh=m.mesh,
        solver_kind=solver_kind,
        solver=m.solver,
        onedim=m.onedim,
        flange=m.flange,
        source=source,
        base_dir=base_dir or Path.cwd(),
        model=m,
    )
    # the bore must be a valid profile: checked here so `check` reports it with the rest
    from .geometry import ProfileError, build_profile

    try:
        build_profile(case)
    except ProfileError as exc:
        raise CaseError(source, [(exc.key, exc.message)]) from None
    return case


def load_case(path: str | Path) -> Case:
    """Read and validate a TOML case file. Raises CaseError naming the file and every problem."""
    path = Path(path)
    source = str(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise CaseError(source, [("", f"cannot read the case file ({exc.strerror})")]) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(source, [("", f"not valid TOML: {exc}")]) from None
    return case_from_dict(data, source=source, base_dir=path.resolve().parent)


def demo_case_path() -> Path:
    """The built-in demo case shipped inside the package."""
    return Path(__file__).parent / "data" / "demo.toml"


# ---------------------------------------------------------------------------------------------
# writing the resolved case back (SI numbers, loadable again)


def resolved_dict(case: Case) -> dict:
    m = case.model
    data = m.model_dump(exclude_none=True)
    if "flow_rate" in data.get("inlet", {}):
        kind, value = data["inlet"]["flow_rate"]
        data["inlet"]["flow_rate"] = f"{value!r} m^3/s" if kind == "volume" else f"{value!r} kg/s"
    if data["bore"]["template"] == "points":
        data["bore"]["file"] = str(case.resolve_path(data["bore"]["file"]).resolve())
    data.setdefault("solver", {})["kind"] = case.solver_kind
    if case.fluid.kind in ("seawater", "liquid"):  # water takes its density from IAPWS-IF97
        data["fluid"]["density"] = case.fluid.density
    return data

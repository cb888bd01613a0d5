"""Case files: TOML with units in, a validated ``Case`` of SI floats out.

``load_case(path)`` reads and validates a case file and raises ``CaseError`` listing every
problem as ``file: key.path: what was expected``. Unknown keys are errors. All pressures are
gauge (relative to ambient) unless the key says absolute.
"""

from __future__ import annotations

import copy
import math

import numpy as np
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any, Literal, Union

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

if TYPE_CHECKING:
    from .geometry import Profile

DEFAULT_AMBIENT = 101325.0
MAX_CASE_BYTES = 1_000_000  # a case file is a page of text; anything larger is not one

OPERATING_POINTS = ('Allowed for a liquid: outlet.kind = "pipe": two of inlet.pressure, inlet.flow_rate and '
                    'outlet.pressure (default 0 gauge); "exit-plane" or "free-jet": inlet.pressure or inlet.flow_rate.')


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


Length = Annotated[float, _quantity("length"), AfterValidator(_plausible_length)]
PosLength = Annotated[float, _quantity("length"), AfterValidator(_plausible_length), AfterValidator(_positive)]
NonNegLength = Annotated[float, _quantity("length"), AfterValidator(_plausible_length), AfterValidator(_non_negative)]
Pressure = Annotated[float, _quantity("pressure", "gauge"), AfterValidator(_plausible_pressure)]  # gauge unless the key says absolute
AbsPressure = Annotated[float, _quantity("pressure", "absolute"), AfterValidator(_plausible_pressure), AfterValidator(_positive)]
Temperature = Annotated[float, _quantity("temperature"), AfterValidator(_positive)]
Density = Annotated[float, _quantity("density"), AfterValidator(_positive)]
HalfAngle = Annotated[float, _quantity("angle"), AfterValidator(_half_angle)]
GasConstant = Annotated[float, _quantity("specific_gas_constant"), AfterValidator(_positive)]
Viscosity = Annotated[float, _quantity("dynamic_viscosity"), AfterValidator(_positive)]


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
    vapour_pressure: Annotated[float, _quantity("pressure", "absolute"), AfterValidator(_non_negative)] | None = None
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
    half_angle: HalfAngle
    inlet_length: PosLength
    tip_length: NonNegLength  # 0: the cone ends at the exit plane
    lip_radius: NonNegLength = 0.0
    centerbody: CenterbodySpec | None = None


class ContouredBore(_Section):
    template: Literal["contoured"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    inlet_diameter: PosLength
    exit_diameter: PosLength
    contraction_length: PosLength
    inlet_length: PosLength
    tip_length: PosLength
    centerbody: CenterbodySpec | None = None


class ReducerBore(_Section):
    template: Literal["reducer"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    inlet_diameter: PosLength
    outlet_diameter: PosLength
    half_angle: HalfAngle
    inlet_length: PosLength
    outlet_length: PosLength
    knuckle_radius: NonNegLength = 0.0
    centerbody: CenterbodySpec | None = None


class SpearBore(_Section):
    template: Literal["spear"]
    symmetry: Literal["axisymmetric", "planar"] = "axisymmetric"  # planar: a slot or gate, per unit depth
    inlet_diameter: PosLength
    orifice_diameter: PosLength
    half_angle: HalfAngle
    inlet_length: PosLength
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
    kind: Literal["pipe", "exit-plane", "free-jet"] = "pipe"
    pressure: Pressure | None = None
    ambient_pressure: AbsPressure = DEFAULT_AMBIENT


MAX_LEVEL = 12


class MeshSpec(_Section):
    size: Annotated[float, Field(gt=0.0, le=0.5, strict=True)] = 0.05  # at least two cells across the narrowest section
    level: Annotated[int, Field(ge=0, le=MAX_LEVEL, strict=True)] = 0
    cells: Literal["triangles", "quads"] = "quads"


def _registered_solver(value: Any) -> Any:
    from .solvers import SOLVERS

    if value is not None and value not in SOLVERS:
        raise PydanticCustomError("solver_kind", f"expected one of the solvers of this version: {', '.join(SOLVERS)}; got {value!r}")
    return value


class SolverSpec(_Section):
    kind: Annotated[str | None, AfterValidator(_registered_solver)] = None
    tolerance: Annotated[float, Field(gt=0.0, lt=1e-3, strict=True)] = 1e-10
    # linear solves (numerics.linear.LinearSettings)
    linear: Literal["auto", "direct", "iterative"] = "auto"
    direct_max_cells: Annotated[int, Field(ge=0, strict=True)] = 40_000
    gmres_restart: Annotated[int, Field(ge=5, le=1000, strict=True)] = 60
    gmres_max_restarts: Annotated[int, Field(ge=1, le=1000, strict=True)] = 20
    amg: Literal["ruge-stuben", "smoothed-aggregation"] = "ruge-stuben"
    amg_max_coarse: Annotated[int, Field(ge=10, le=100_000, strict=True)] = 500
    # compressible solver: the most nonlinear (pseudo-time) steps before it reports "not converged"
    max_steps: Annotated[int, Field(ge=1, le=10_000, strict=True)] = 150


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
    start: Literal["laminar", "turbulent"] | None = None  # None: turbulent above the pipe-flow Reynolds number 2300
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


# ---------------------------------------------------------------------------------------------
# the validated case


@dataclass(frozen=True, eq=False)
class Case:
    """A validated case: every quantity a float in SI (pressures gauge unless named absolute).

    One source of truth: ``data`` is the case as given (a parsed TOML table), ``model`` its
    validated form; everything else derives from them. ``with_updates`` changes ``data`` and
    validates again, so a changed case can never be stale.
    """

    data: dict
    model: CaseModel
    fluid: fluids.Fluid
    profile: "Profile"
    solver_kind: str | None  # the registered solver that will run (None: none for this fluid)
    source: str = "<memory>"
    base_dir: Path = field(default_factory=Path.cwd)

    title = property(lambda self: self.model.title)
    bore = property(lambda self: self.model.bore)
    inlet = property(lambda self: self.model.inlet)
    outlet = property(lambda self: self.model.outlet)
    mesh = property(lambda self: self.model.mesh)
    solver = property(lambda self: self.model.solver)
    onedim = property(lambda self: self.model.onedim)
    flange = property(lambda self: self.model.flange)
    viscous = property(lambda self: self.model.viscous)

    @property
    def viscous_model(self) -> str:
        """The wall-layer model that runs: the one given, else "integral" where the viscosity is known."""
        from .viscous.viscosity import viscosity_known

        given = self.model.viscous.model
        return given if given is not None else ("integral" if viscosity_known(self.fluid) else "none")

    @property
    def joints(self) -> list[JointSpec]:
        """The bolted joints of the case: the [[joint]] tables, else a [flange] that names bolts or a gasket."""
        if self.model.joint:
            return list(self.model.joint)
        f = self.model.flange
        return [f] if (f.bolts is not None or f.gasket_diameter is not None) else []

    @property
    def ambient_pressure(self) -> float:
        return self.outlet.ambient_pressure

    @property
    def linear_settings(self):
        from .numerics.linear import LinearSettings

        s = self.solver
        return LinearSettings(method=s.linear, tolerance=s.tolerance, direct_max_cells=s.direct_max_cells,
                              restart=s.gmres_restart, max_restarts=s.gmres_max_restarts, amg=s.amg,
                              amg_max_coarse=s.amg_max_coarse)

    def resolve_path(self, name: str) -> Path:
        p = Path(name)
        return p if p.is_absolute() else (self.base_dir / p)

    def with_updates(self, updates: dict[str, Any]) -> "Case":
        """A new case with dotted keys replaced (``{"bore.half_angle": "14 deg", "mesh.level": 2}``),
        values as in a case file; validated again with the same messages as a file.

        A list entry is addressed from 1, as in error messages: ``bore.segment[2].radius``.
        """
        data = copy.deepcopy(self.data)
        for key, value in updates.items():
            _set_dotted(data, key, value, self.source)
        keys = ", ".join(updates)
        source = self.source if not updates else f"{self.source} (updated: {keys})"
        return case_from_dict(data, source=source, base_dir=self.base_dir)

    def with_level(self, level: int) -> "Case":
        return self.with_updates({"mesh.level": level})

    def unsupported(self) -> list[str]:
        """Capabilities the case asks for that this version cannot run (refused by ``run``)."""
        out = []
        if self.solver_kind is None:
            out.append(f'fluid.kind = "{self.fluid.kind}": no solver for {"liquids" if self.fluid.is_liquid else "gases"} '
                       "in this version (the compressible solver is not available yet)")
        if self.outlet.kind == "free-jet" and not self.fluid.is_liquid:
            out.append('outlet.kind = "free-jet" with a gas: the free-jet boundary is solved for liquids only '
                       '(a gas discharging to the surroundings takes "exit-plane")')
        if self.profile.planar and self.solver_kind == "euler":
            out.append('bore.symmetry = "planar" with the compressible solver: planar sections are solved for liquids only')
        return out


_INDEXED = re.compile(r"^([A-Za-z_][A-Za-z0-9_]*)\[(\d+)\]$")


def _set_dotted(data: dict, key: str, value: Any, source: str) -> None:
    """data[a][b]... = value for key "a.b..." (sections created as needed; "name[k]" counts from 1)."""
    parts = key.split(".")
    if not key or any(not p for p in parts):
        raise CaseError(source, [(key, "expected a dotted case key such as mesh.level or bore.half_angle")])
    node: Any = data
    for depth, part in enumerate(parts):
        last = depth == len(parts) - 1
        m = _INDEXED.match(part)
        name, index = (m.group(1), int(m.group(2))) if m else (part, None)
        where = ".".join(parts[: depth + 1])
        if not isinstance(node, dict):
            raise CaseError(source, [(where, "cannot set a key inside a value that is not a table")])
        if index is None:
            if last:
                node[name] = value
            else:
                node = node.setdefault(name, {})
            continue
        items = node.get(name)
        if not isinstance(items, list) or not 1 <= index <= len(items):
            count = len(items) if isinstance(items, list) else 0
            raise CaseError(source, [(where, f"no entry {index} (the case has {count}; entries count from 1)")])
        if last:
            items[index - 1] = value
        else:
            node = items[index - 1]


def _nearest_key(key: str, where: list, data: dict, template) -> str | None:
    """The valid key nearest in spelling to a misspelt one, in the same table."""
    import difflib

    model = CaseModel
    fields = None
    try:
        node = model
        for item in where:
            if isinstance(item, int):
                continue
            f = node.model_fields.get(str(item))
            if f is None:
                return None
            ann = f.annotation
            # the bore section: the template's model; lists and optionals: their element model
            cands = [a for a in getattr(ann, "__args__", ()) if isinstance(a, type) and issubclass(a, BaseModel)]
            if str(item) == "bore" and template:
                cands = [c for c in _bore_models() if c.model_fields["template"].annotation.__args__[0] == template] or cands
            if isinstance(ann, type) and issubclass(ann, BaseModel):
                cands = [ann]
            if not cands:
                args = getattr(ann, "__args__", ())
                for a in args:
                    for b in getattr(a, "__args__", ()):
                        if isinstance(b, type) and issubclass(b, BaseModel):
                            cands.append(b)
            if not cands:
                return None
            node = cands[0]
        fields = list(node.model_fields)
    except Exception:  # a suggestion is a courtesy: never let it hide the real message
        return None
    close = difflib.get_close_matches(key, fields, n=1, cutoff=0.7)
    return close[0] if close else None


def _bore_models():
    return (ConicalBore, ContouredBore, ReducerBore, SpearBore, SegmentsBore, PointsBore)


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
            near = _nearest_key(parts[-1], loc[:-1], data, template)
            if near:
                msg += f"; did you mean {near!r}?"
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
            if kind not in ("quantity", "positive", "non_negative", "angle_range", "solver_kind", "plausible") and given is not None and not isinstance(given, (dict, list)):
                msg = f"{msg} (got {given!r})"
        problems.append((path, msg))
    return problems


def _cross_checks(m: CaseModel) -> list[tuple[str, str]]:
    problems = []
    f = m.fluid
    allowed = {
        "water": {"temperature"},
        "seawater": {"temperature", "density"},
        "liquid": {"density", "vapour_pressure", "temperature", "viscosity"},
        "ideal-gas": {"gas", "gas_constant", "gamma"},
    }[f.kind]
    for key in ("temperature", "density", "vapour_pressure", "gas", "gas_constant", "gamma", "viscosity"):
        if getattr(f, key) is not None and key not in allowed:
            problems.append((f"fluid.{key}", f'not used with fluid.kind = "{f.kind}" (keys for it: {", ".join(sorted(allowed))})'))
    if f.kind in ("water", "seawater") and f.temperature is None:
        problems.append(("fluid.temperature", f'missing: required for fluid.kind = "{f.kind}", e.g. "15 degC"'))
    if f.kind == "water" and f.temperature is not None and not fluids.WATER_T_MIN <= f.temperature <= fluids.WATER_T_MAX:
        problems.append(("fluid.temperature", f"expected 0.01 to 200 degC for water (the range of IAPWS-IF97 liquid water), "
                         f"got {f.temperature - 273.15:.4g} degC"))
    if f.kind == "seawater" and f.temperature is not None and not fluids.SEAWATER_T_MIN <= f.temperature <= fluids.SEAWATER_T_MAX:
        problems.append(("fluid.temperature", f"expected -2 to 40 degC for seawater, got {f.temperature - 273.15:.4g} degC"))
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
        discharge = o.kind in ("exit-plane", "free-jet")
        if discharge and i.pressure is not None and i.flow_rate is not None:
            problems.append(("inlet.flow_rate", f'over-determined: with outlet.kind = "{o.kind}" the jet leaves at the ambient '
                             "pressure, so inlet.pressure fixes the flow rate (and a flow rate fixes the pressure): give "
                             f"inlet.pressure or inlet.flow_rate, not both. {OPERATING_POINTS}"))
        elif discharge and o.pressure is not None and o.pressure != 0.0:
            problems.append(("outlet.pressure", f'not used with outlet.kind = "{o.kind}": the jet leaves at the ambient pressure '
                             f"(0 gauge); set outlet.ambient_pressure for another surrounding pressure. {OPERATING_POINTS}"))
        elif i.pressure is not None and i.flow_rate is not None and o.pressure is not None:
            problems.append(("outlet.pressure", "over-determined: inlet.pressure and inlet.flow_rate already fix the outlet "
                             f"pressure; give two of the three. {OPERATING_POINTS}"))
        if i.pressure is not None and i.flow_rate is None:
            p_out = o.pressure if o.pressure is not None else 0.0
            if not i.pressure > p_out:
                problems.append(("inlet.pressure", f"expected more than the outlet pressure ({p_out:.6g} Pa gauge) so that the fluid flows in +x, got {i.pressure:.6g} Pa"))
    from .solvers import SOLVERS

    if m.solver.kind in SOLVERS:
        entry, cls = SOLVERS[m.solver.kind], ("gas" if f.kind == "ideal-gas" else "liquid")
        if cls not in entry.fluids:
            others = [k for k, e in SOLVERS.items() if cls in e.fluids]
            problems.append(("solver.kind", f'"{m.solver.kind}" is for {" and ".join({"liquid": "liquids", "gas": "gases"}[e] for e in entry.fluids)}; '
                             f"a {'gas' if cls == 'gas' else 'liquid'} takes " + (" or ".join(f'"{k}"' for k in others) or "no solver of this version")))
    problems += _viscous_checks(m)
    if m.bore.symmetry == "planar" and (m.joint or m.flange.gasket_diameter is not None or m.flange.bolts is not None):
        problems.append(("joint" if m.joint else "flange",
                         'not with bore.symmetry = "planar": joint loads use round gaskets (pi G^2 / 4) and bolt circles, '
                         "which a per-metre planar section does not have"))
    if m.bore.template == "spear" and getattr(m.bore, "centerbody", None) is not None:
        problems.append(("bore.centerbody", "the spear template builds its own needle"))
    return problems


def _viscous_checks(m: CaseModel) -> list[tuple[str, str]]:
    from .viscous.viscosity import SUTHERLAND

    v, f = m.viscous, m.fluid
    problems = []
    if v.model == "integral":
        if f.kind == "liquid" and f.viscosity is None:
            problems.append(("fluid.viscosity", 'missing: viscous.model = "integral" needs the viscosity of a given liquid '
                             '(dynamic, e.g. "1.2 mPa*s")'))
        if f.kind == "ideal-gas" and f.gas not in SUTHERLAND:
            problems.append(("viscous.model", f'"integral" needs the viscosity of the gas: Sutherland constants are built in '
                             f'for {", ".join(SUTHERLAND)} (fluid.gas); for another gas set viscous.model = "none"'))
    if v.start_momentum_thickness is not None and v.upstream_length is not None:
        problems.append(("viscous.upstream_length", "give start_momentum_thickness or upstream_length, not both"))
    if v.taps is not None and not v.taps[0] < v.taps[1]:
        problems.append(("viscous.taps", f"expected [upstream x, downstream x] with the first smaller, got "
                         f"{v.taps[0]:.6g} m and {v.taps[1]:.6g} m"))
    return problems


def _viscous_position_checks(m: CaseModel, profile) -> list[tuple[str, str]]:
    v, problems = m.viscous, []
    lo, hi = profile.x_inlet - profile.tol, profile.x_outlet + profile.tol
    for key, xs in (("viscous.taps", v.taps or ()), ("viscous.transition", [v.transition] if isinstance(v.transition, float) else [])):
        for x in xs:
            if not lo <= x <= hi:
                problems.append((key, f"expected a position on the bore, from x = {profile.x_inlet:.6g} m to "
                                 f"{profile.x_outlet:.6g} m, got {x:.6g} m"))
    return problems


def _joint_checks(m: CaseModel, profile) -> list[tuple[str, str]]:
    problems = []
    f = m.flange
    if m.joint and (f.bolts is not None or f.gasket_diameter is not None or f.name is not None):
        problems.append(("flange", "give one joint as [flange] or several as [[joint]] tables, not both"))
    specs = [(f"joint[{i}]", j) for i, j in enumerate(m.joint, 1)] or [("flange", f)]
    for key, j in specs:
        if isinstance(j.at, float) and not profile.x_inlet - profile.tol <= j.at <= profile.x_outlet + profile.tol:
            problems.append((f"{key}.at", f"expected a position on the bore, from x = {profile.x_inlet:.6g} m to "
                             f"{profile.x_outlet:.6g} m, got {j.at:.6g} m"))
        if j.gasket_diameter is not None:
            x = {"inlet": profile.x_inlet, "outlet": profile.x_outlet}.get(j.at, j.at)
            bore = 2 * float(profile.wall_radius(np.array([x]))[0])
            if np.isfinite(bore) and j.gasket_diameter < bore * (1 - 1e-9):
                problems.append((f"{key}.gasket_diameter", f"expected at least the bore diameter at the joint ({bore * 1e3:.6g} mm), "
                                 f"got {j.gasket_diameter * 1e3:.6g} mm"))
    return problems


def _resolve_fluid(spec: FluidSpec, ambient: float) -> fluids.Fluid:
    if spec.kind == "water":
        return fluids.resolve_water(spec.temperature, ambient)
    if spec.kind == "seawater":
        return fluids.resolve_seawater(spec.temperature, spec.density)
    if spec.kind == "liquid":
        return fluids.Fluid(kind="liquid", name="liquid", density=spec.density, vapour_pressure=spec.vapour_pressure,
                            temperature=spec.temperature, source="given", viscosity=spec.viscosity)
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
    from .geometry import ProfileError, build_profile
    from .solvers import default_for

    solver_kind = m.solver.kind or default_for("liquid" if fluid.is_liquid else "gas")
    # the bore must be a valid profile: built once here, so `check` reports it with the rest
    try:
        profile = build_profile(m.bore, base_dir or Path.cwd(), free_jet=m.outlet.kind == "free-jet")
    except ProfileError as exc:
        raise CaseError(source, [(exc.key, exc.message)]) from None
    problems = _joint_checks(m, profile) + _viscous_position_checks(m, profile)
    if problems:
        raise CaseError(source, problems)
    return Case(data=copy.deepcopy(data), model=m, fluid=fluid, profile=profile, solver_kind=solver_kind, source=source,
                base_dir=base_dir or Path.cwd())


def load_case(path: str | Path) -> Case:
    """Read and validate a TOML case file. Raises CaseError naming the file and every problem."""
    from .io.files import InputError, read_input_text

    path = Path(path)
    source = str(path)
    try:
        text = read_input_text(path, "case file", MAX_CASE_BYTES)
    except InputError as exc:
        raise CaseError(source, [("", str(exc))]) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(source, [("", f"not valid TOML: {exc}")]) from None
    except RecursionError:
        raise CaseError(source, [("", "not a case file: its arrays or tables are nested too deeply")]) from None
    return case_from_dict(data, source=source, base_dir=path.resolve().parent)


def demo_case_path() -> Path:
    """The built-in demo case shipped inside the package."""
    return Path(__file__).parent / "data" / "demo.toml"


# ---------------------------------------------------------------------------------------------
# writing the resolved case back (SI numbers, loadable again)


# units the resolved case.toml is written in (as a person would type them); loadable again
_WRITE_UNITS = {"length": ("mm", 1e-3, 0.0), "pressure": ("bar", 1e5, 0.0), "temperature": ("degC", 1.0, 273.15),
                "angle": ("deg", math.pi / 180, 0.0), "density": ("kg/m^3", 1.0, 0.0),
                "specific_gas_constant": ("J/(kg*K)", 1.0, 0.0)}


def _dimension_of(annotation, metadata=()) -> str | None:
    """The quantity dimension of a schema field (its metadata, or through Annotated, unions and tuples)."""
    import typing

    for meta in metadata:
        dim = getattr(getattr(meta, "func", None), "dimension", None)
        if dim is not None:
            return dim
    if typing.get_origin(annotation) is Annotated:
        for meta in annotation.__metadata__:
            dim = getattr(getattr(meta, "func", None), "dimension", None)
            if dim is not None:
                return dim
    for arg in typing.get_args(annotation):
        dim = _dimension_of(arg)
        if dim is not None:
            return dim
    return None


def _with_unit(value: float, dimension: str | None):
    if dimension not in _WRITE_UNITS or not isinstance(value, float):
        return value
    unit, factor, offset = _WRITE_UNITS[dimension]
    if dimension == "length" and abs(value) >= 1.0:
        unit, factor = "m", 1.0
    return f"{(value - offset) / factor:.15g} {unit}"


def _unit_dump(model: BaseModel) -> dict:
    out = {}
    for name, info in type(model).model_fields.items():
        value = getattr(model, name)
        if value is None:
            continue
        if isinstance(value, BaseModel):
            out[name] = _unit_dump(value)
        elif isinstance(value, list) and value and isinstance(value[0], BaseModel):
            out[name] = [_unit_dump(v) for v in value]
        elif name == "flow_rate":
            kind, v = value
            out[name] = f"{v:.15g} m^3/s" if kind == "volume" else f"{v:.15g} kg/s"
        elif isinstance(value, tuple):
            dim = _dimension_of(info.annotation, info.metadata)
            out[name] = [_with_unit(float(v), dim) for v in value]
        else:
            out[name] = _with_unit(value, _dimension_of(info.annotation, info.metadata))
    return out


def resolved_dict(case: Case) -> dict:
    """The case as it ran, every key explicit, quantities with units; loads back to the same case."""
    data = _unit_dump(case.model)
    data.pop("sweep", None)  # a run is one point: the sweep that made it is not part of it
    if data["bore"]["template"] == "points":
        data["bore"]["file"] = str(case.resolve_path(data["bore"]["file"]).resolve())
    if case.solver_kind is not None:
        data.setdefault("solver", {})["kind"] = case.solver_kind
    if case.fluid.kind in ("seawater", "liquid"):  # water takes its density from IAPWS-IF97
        data["fluid"]["density"] = _with_unit(float(case.fluid.density), "density")
    return data

"""The validated case: ``Case`` (the data as given, its validated model, the fluid, the profile
and the solver's settings: one source of truth), ``case_from_dict`` and ``load_case``."""

from __future__ import annotations

import copy
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from .. import fluids
from ..geometry import Profile, ProfileError, build_profile
from ..names import free_jet
from ..numerics.linear import LinearSettings
from ..solvers import SOLVERS, default_for
from ..textin import InputError, read_input_text
from .errors import CaseError
from .messages import format_validation
from .rules import cross_checks, joint_checks, viscous_position_checks
from .schema import MAX_CASE_BYTES, CaseModel, FluidSpec, JointSpec


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
    profile: Profile
    solver_kind: str | None  # the registered solver that will run (None: none for this fluid)
    solver_settings: Any = None  # the solver's own [solver] keys, validated by its registry entry's model
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
        given = self.model.viscous.model
        return given if given is not None else ("integral" if fluids.viscosity_known(self.fluid) else "none")

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
    def linear_settings(self) -> LinearSettings:
        """How linear systems are solved: the solver's settings where it has linear keys, else the defaults."""
        own = getattr(self.solver_settings, "linear_settings", None)
        return own() if callable(own) else LinearSettings()

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
        """Capabilities the case asks for that this version cannot run (refused by ``run``), from the
        solver's registry entry."""
        fluid_class = "liquid" if self.fluid.is_liquid else "gas"
        if self.solver_kind is None:
            return [f'fluid.kind = "{self.fluid.kind}": no registered solver for {fluid_class}s in this version']
        return SOLVERS[self.solver_kind].refusals(fluid_class, self.outlet.kind, self.bore.symmetry)


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


def _solver_settings(m: CaseModel, kind: str | None, data: dict) -> tuple[Any, list[tuple[str, str]]]:
    """The [solver] keys other than ``kind``, validated by the solver's own model."""
    given = {k: v for k, v in (data.get("solver") or {}).items() if k != "kind"}
    model = SOLVERS[kind].load_settings() if kind in SOLVERS else None
    if model is None:
        return None, [(f"solver.{k}", f'not a key of the solver "{kind}" (it has no settings)') for k in given]
    try:
        return model.model_validate(given), []
    except ValidationError as exc:
        problems = format_validation(exc, given, prefix="solver", model=model)
        return None, [(p, msg.replace("is not a case-file key here", f'is not a key of the solver "{kind}" (its keys: '
                                      f'{", ".join(model.model_fields)})')) for p, msg in problems]


def case_from_dict(data: dict, source: str = "<memory>", base_dir: Path | None = None) -> Case:
    """Validate a case given as a dict (the parsed TOML)."""
    try:
        m = CaseModel.model_validate(data)
    except ValidationError as exc:
        raise CaseError(source, format_validation(exc, data)) from None
    problems = cross_checks(m)
    if problems:
        raise CaseError(source, problems)
    try:
        fluid = _resolve_fluid(m.fluid, m.outlet.ambient_pressure)
    except ValueError as exc:
        raise CaseError(source, [("fluid", str(exc))]) from None
    solver_kind = m.solver.kind or default_for("liquid" if fluid.is_liquid else "gas")
    settings, problems = _solver_settings(m, solver_kind, data)
    if problems:
        raise CaseError(source, problems)
    # the bore must be a valid profile: built once here, so `check` reports it with the rest
    try:
        profile = build_profile(m.bore, base_dir or Path.cwd(), free_jet=free_jet(m.outlet.kind))
    except ProfileError as exc:
        raise CaseError(source, [(exc.key, exc.message)]) from None
    problems = joint_checks(m, profile) + viscous_position_checks(m, profile)
    if problems:
        raise CaseError(source, problems)
    return Case(data=copy.deepcopy(data), model=m, fluid=fluid, profile=profile, solver_kind=solver_kind,
                solver_settings=settings, source=source, base_dir=base_dir or Path.cwd())


def load_case(path: str | Path) -> Case:
    """Read and validate a TOML case file. Raises CaseError naming the file and every problem."""
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
    return Path(__file__).parents[1] / "data" / "demo.toml"



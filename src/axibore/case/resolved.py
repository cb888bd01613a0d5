"""The resolved case.toml a run writes: every key explicit, quantities with units as a person
types them; it loads back to the same case."""

from __future__ import annotations

import math
import typing
from typing import Annotated

from pydantic import BaseModel

# units the resolved case.toml is written in (as a person would type them); loadable again
_WRITE_UNITS = {"length": ("mm", 1e-3, 0.0), "pressure": ("bar", 1e5, 0.0), "temperature": ("degC", 1.0, 273.15),
                "angle": ("deg", math.pi / 180, 0.0), "density": ("kg/m^3", 1.0, 0.0),
                "specific_gas_constant": ("J/(kg*K)", 1.0, 0.0)}


def _dimension_of(annotation, metadata=()) -> str | None:
    """The quantity dimension of a schema field (its metadata, or through Annotated, unions and tuples)."""
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


def resolved_dict(case) -> dict:
    """The case as it ran, every key explicit, quantities with units; loads back to the same case."""
    data = _unit_dump(case.model)
    data.pop("sweep", None)  # a run is one point: the sweep that made it is not part of it
    data.pop("uncertainty", None)  # nor the study of its uncertainty
    if data["bore"]["template"] == "points":
        data["bore"]["file"] = str(case.resolve_path(data["bore"]["file"]).resolve())
    if case.solver_kind is not None:
        data["solver"] = {"kind": case.solver_kind}
        if case.solver_settings is not None:
            data["solver"].update(case.solver_settings.model_dump())
    if case.fluid.kind in ("seawater", "liquid"):  # water takes its density from IAPWS-IF97
        data["fluid"]["density"] = _with_unit(float(case.fluid.density), "density")
    return data

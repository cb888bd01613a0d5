"""Quantities with units at the edges: case-file strings to SI floats, SI floats to display strings.

Inside axibore every quantity is a float in SI. This module is the only place that knows
about unit strings. pint is loaded on first use so that ``import axibore`` stays fast.
"""

from __future__ import annotations

import math
from functools import lru_cache

# dimension name -> (pint dimensionality string, SI unit used for conversion, noun for messages)
DIMENSIONS: dict[str, tuple[str, str, str]] = {
    "length": ("[length]", "m", "a length"),
    "pressure": ("[mass] / [length] / [time] ** 2", "Pa", "a pressure"),
    "temperature": ("[temperature]", "K", "a temperature"),
    "density": ("[mass] / [length] ** 3", "kg/m^3", "a density"),
    "angle": ("", "rad", "an angle"),
    "volume_flow": ("[length] ** 3 / [time]", "m^3/s", "a volume flow rate"),
    "mass_flow": ("[mass] / [time]", "kg/s", "a mass flow rate"),
    "specific_gas_constant": ("[length] ** 2 / [time] ** 2 / [temperature]", "J/(kg*K)", "a gas constant"),
    "dimensionless": ("", "", "a plain number"),
}


class UnitError(ValueError):
    """A value could not be read as the expected kind of quantity."""


@lru_cache(maxsize=1)
def registry():
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return ureg


def _parse(text: str):
    ureg = registry()
    try:
        return ureg.Quantity(text.strip().replace("°C", "degC").replace("°", "deg"))
    except Exception as exc:  # pint raises several unrelated exception types
        raise UnitError(f'could not read "{text}" as a number with a unit ({type(exc).__name__})') from None


def to_si(value: object, dimension: str) -> float:
    """Convert a case-file value to a float in SI units of ``dimension``.

    Numbers are taken as SI already. Strings carry a unit ("80 mm", "7 bar", "15 degC").
    Raises UnitError with a message of the form 'expected a length, got "25 kg"'.
    """
    dim, si_unit, noun = DIMENSIONS[dimension]
    if isinstance(value, bool):
        raise UnitError(f"expected {noun}, got {value!r}")
    if isinstance(value, (int, float)):
        out = float(value)
    elif isinstance(value, str):
        try:
            q = _parse(value)
        except UnitError:
            raise UnitError(f'expected {noun}, got "{value}"') from None
        ureg = registry()
        if dimension == "angle":
            if not q.dimensionless:
                raise UnitError(f'expected {noun}, got "{value}"')
            unit_text = str(q.units)
            if unit_text not in ("radian", "degree", "dimensionless", "arcminute", "arcsecond", "turn"):
                raise UnitError(f'expected {noun} (deg or rad), got "{value}"')
            out = float(q.to("radian").magnitude)
        elif dimension == "dimensionless":
            if not q.dimensionless:
                raise UnitError(f'expected {noun}, got "{value}"')
            out = float(q.to("dimensionless").magnitude)
        else:
            if q.dimensionality != ureg.get_dimensionality(dim):
                raise UnitError(f'expected {noun}, got "{value}"')
            out = float(q.to(si_unit).magnitude)
    else:
        raise UnitError(f"expected {noun}, got {value!r}")
    if not math.isfinite(out):
        raise UnitError(f"expected a finite {noun[2:] if noun.startswith('a ') else noun}, got {value!r}")
    return out


def flow_rate_kind(value: object) -> str:
    """'volume' or 'mass' for a flow-rate string; numbers are refused (ambiguous)."""
    if not isinstance(value, str):
        raise UnitError(f'expected a flow rate with a unit ("0.5 m^3/s" or "31 kg/s"), got {value!r}')
    q = _parse(value)
    ureg = registry()
    if q.dimensionality == ureg.get_dimensionality(DIMENSIONS["volume_flow"][0]):
        return "volume"
    if q.dimensionality == ureg.get_dimensionality(DIMENSIONS["mass_flow"][0]):
        return "mass"
    raise UnitError(f'expected a volume or mass flow rate, got "{value}"')


# ---------------------------------------------------------------------------------------------
# display


def show(value: float, dimension: str, digits: int = 4) -> str:
    """Human-readable string for an SI value (used in printed tables, never parsed back)."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    if abs(value) < 1e-9:
        value = 0.0
    if dimension == "length":
        return f"{value * 1e3:.{digits}g} mm" if abs(value) < 1.0 else f"{value:.{digits}g} m"
    if dimension == "pressure":
        return f"{value / 1e5:.{digits}g} bar ({value / 1e3:.{digits}g} kPa)"
    if dimension == "force":
        return f"{value / 1e3:.{digits}g} kN" if abs(value) >= 1e3 else f"{value:.{digits}g} N"
    if dimension == "angle":
        return f"{math.degrees(value):.{digits}g} deg"
    if dimension == "temperature":
        return f"{value:.{digits}g} K ({value - 273.15:.{digits}g} degC)"
    if dimension == "volume_flow":
        return f"{value:.{digits}g} m^3/s ({value * 6e4:.{digits}g} L/min)"
    if dimension == "mass_flow":
        return f"{value:.{digits}g} kg/s"
    if dimension == "density":
        return f"{value:.{digits}g} kg/m^3"
    if dimension == "velocity":
        return f"{value:.{digits}g} m/s"
    return f"{value:.{digits}g}"

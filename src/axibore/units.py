"""Quantities with units at the edges: case-file strings to SI floats, SI floats to display strings.

Inside axibore every quantity is a float in SI. This module is the only place that knows about
unit strings. A value is a number with one unit from a fixed table ("80 mm", "7 bar", "750 L/min",
"15 degC", "12 deg"), read by a bounded grammar (a regular expression and a table look-up): no
expression is ever evaluated, so no input can make parsing slow. Pressure units may say gauge or
absolute (barg, bar(g), psig; bara, bar(a), psia); a key whose meaning is gauge refuses an absolute
unit and the other way round.
"""

from __future__ import annotations

import math
import re

# dimension -> (noun for messages, {unit spelling: (factor, offset)}); SI = factor * value + offset.
# Spellings are matched after removing spaces and mapping ², ³, °, µ and "**" / "^" exponents.
_L = {"m": 1.0, "mm": 1e-3, "cm": 1e-2, "dm": 0.1, "km": 1e3, "um": 1e-6, "µm": 1e-6, "in": 0.0254, "inch": 0.0254,
      "ft": 0.3048}  # inch and foot exact by definition (international yard and pound, 1959)
_P = {"Pa": 1.0, "kPa": 1e3, "MPa": 1e6, "GPa": 1e9, "hPa": 1e2, "bar": 1e5, "mbar": 1e2, "atm": 101325.0,
      "psi": 6894.757293168361,  # 1 lbf/in^2 = 0.45359237 kg * 9.80665 m/s^2 / 0.0254^2 m^2 (exact definitions)
      "N/m2": 1.0, "N/mm2": 1e6}
_PRESSURE_MARK = {"g": "gauge", "(g)": "gauge", "a": "absolute", "(a)": "absolute"}
_T = {"K": (1.0, 0.0), "degC": (1.0, 273.15), "C": (1.0, 273.15), "°C": (1.0, 273.15), "degF": (5 / 9, 273.15 - 32 * 5 / 9),
      "°F": (5 / 9, 273.15 - 32 * 5 / 9), "F": (5 / 9, 273.15 - 32 * 5 / 9)}
_A = {"rad": 1.0, "deg": math.pi / 180, "°": math.pi / 180, "degree": math.pi / 180, "degrees": math.pi / 180}
_RHO = {"kg/m3": 1.0, "g/cm3": 1e3, "g/L": 1.0, "kg/L": 1e3, "lb/ft3": 0.45359237 / 0.3048**3}
_US_GALLON = 231 * 0.0254**3  # 231 cubic inches (exact)
_Q = {"m3/s": 1.0, "m3/min": 1 / 60, "m3/h": 1 / 3600, "L/s": 1e-3, "l/s": 1e-3, "L/min": 1e-3 / 60, "l/min": 1e-3 / 60,
      "L/h": 1e-3 / 3600, "l/h": 1e-3 / 3600, "gpm": _US_GALLON / 60, "USgpm": _US_GALLON / 60, "USgal/min": _US_GALLON / 60,
      "gal/min": _US_GALLON / 60}
_M = {"kg/s": 1.0, "kg/min": 1 / 60, "kg/h": 1 / 3600, "t/h": 1000 / 3600, "g/s": 1e-3, "lb/s": 0.45359237,
      "lb/min": 0.45359237 / 60, "lb/h": 0.45359237 / 3600}
_MU = {"Pa*s": 1.0, "Pas": 1.0, "Pa.s": 1.0, "N*s/m2": 1.0, "mPa*s": 1e-3, "mPas": 1e-3, "mPa.s": 1e-3, "cP": 1e-3,
       "P": 0.1, "uPa*s": 1e-6, "uPas": 1e-6}  # poise: 0.1 Pa s (CGS definition)
_R = {"J/(kg*K)": 1.0, "J/(kgK)": 1.0, "J/kg/K": 1.0, "J/(kg.K)": 1.0, "m2/(s2*K)": 1.0, "kJ/(kg*K)": 1e3, "kJ/kg/K": 1e3}


def _linear(table):
    return {k: (v, 0.0) for k, v in table.items()}


DIMENSIONS: dict[str, tuple[str, dict[str, tuple[float, float]], str]] = {
    # name: (noun, units, examples for messages)
    "length": ("a length", _linear(_L), "mm, m, in"),
    "pressure": ("a pressure", _linear(_P), "Pa, kPa, MPa, bar, psi"),
    "temperature": ("a temperature", _T, "degC, K, degF"),
    "density": ("a density", _linear(_RHO), "kg/m^3, g/cm^3"),
    "angle": ("an angle", _linear(_A), "deg, rad"),
    "volume_flow": ("a volume flow rate", _linear(_Q), "m^3/s, m^3/h, L/s, L/min, gpm (US)"),
    "mass_flow": ("a mass flow rate", _linear(_M), "kg/s, kg/h, t/h, lb/s"),
    "specific_gas_constant": ("a gas constant", _linear(_R), "J/(kg*K)"),
    "dynamic_viscosity": ("a dynamic viscosity", _linear(_MU), "Pa*s, mPa*s, cP"),
    "dimensionless": ("a plain number", {"": (1.0, 0.0)}, "no unit"),
}
_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d{1,3})?)\s*(.{0,40}?)\s*$")
MAX_TEXT = 80


class UnitError(ValueError):
    """A value could not be read as the expected kind of quantity."""


def _normal(unit: str) -> str:
    u = unit.replace(" ", "").replace("²", "2").replace("³", "3").replace("µ", "u").replace("μ", "u")
    u = u.replace("**", "").replace("^", "")
    return u.replace("·", "*")


def _split(text: str) -> tuple[float, str]:
    if len(text) > MAX_TEXT:
        raise UnitError(f"expected a number with a unit, got a text of {len(text)} characters")
    m = _NUMBER.match(text)
    if not m:
        raise UnitError(f'expected a number followed by a unit, such as "80 mm", got "{text}"')
    return float(m.group(1)), m.group(2)


def _lookup(unit: str, dimension: str) -> tuple[float, float] | None:
    units = DIMENSIONS[dimension][1]
    u = _normal(unit)
    if u in units:
        return units[u]
    # "kpa" and "KPa" are read as kPa, but never milli for mega or mega for milli ("mPa", "Mbar", "Mm"):
    # a folded match keeps the case of a leading m or M
    for k, v in units.items():
        key = _normal(k)
        if key.lower() == u.lower() and not (u[:1] in "mM" and key[:1] in "mM" and u[:1] != key[:1]):
            return v
    return None


def _pressure(unit: str) -> tuple[tuple[float, float], str | None] | None:
    """A pressure unit and its gauge/absolute mark (None when it has none)."""
    u = _normal(unit)
    for mark, meaning in sorted(_PRESSURE_MARK.items(), key=lambda kv: -len(kv[0])):
        if u.lower().endswith(mark) and len(u) > len(mark):
            base = _lookup(u[: -len(mark)], "pressure")
            if base is not None:
                return base, meaning
    base = _lookup(u, "pressure")
    return (base, None) if base is not None else None


def to_si(value: object, dimension: str, reference: str | None = None) -> float:
    """Convert a case-file value to a float in SI units of ``dimension``.

    Numbers are taken as SI already. Strings carry a unit ("80 mm", "7 bar", "15 degC").
    ``reference`` ("gauge" or "absolute") is what a pressure key means; a unit marked the other
    way is refused. Raises UnitError with a one-line message (never an exception class name).
    """
    noun, units, examples = DIMENSIONS[dimension]
    if isinstance(value, bool):
        raise UnitError(f"expected {noun}, got {value!r}")
    if isinstance(value, (int, float)):
        out = float(value)
    elif isinstance(value, str):
        number, unit = _split(value)
        if dimension == "pressure":
            hit = _pressure(unit)
            if hit is None:
                raise UnitError(f'expected {noun}, got "{value}" (units: {examples}; barg or psig for gauge, bara or psia for absolute)')
            (factor, offset), mark = hit
            if mark is not None and reference is not None and mark != reference:
                raise UnitError(f'this key is {"a gauge" if reference == "gauge" else "an absolute"} pressure, got the {mark} '
                                f'pressure "{value}"' + (" (subtract the ambient pressure, or write it in bar or barg)"
                                                         if reference == "gauge" else " (add the ambient pressure, or write it in bar or bara)"))
        else:
            hit = _lookup(unit, dimension) if unit or dimension == "dimensionless" else None
            if hit is None:
                if not unit:
                    raise UnitError(f'expected {noun} with a unit ({examples}), got "{value}"')
                raise UnitError(f'expected {noun}, got "{value}" (units: {examples})')
            factor, offset = hit
        out = number * factor + offset
    else:
        raise UnitError(f"expected {noun}, got {value!r}")
    if not math.isfinite(out) or abs(out) > 1e30:
        raise UnitError(f"expected a finite {noun[2:] if noun.startswith('a ') else noun[3:]}, got {value!r}")
    return out


def flow_rate_kind(value: object) -> str:
    """'volume' or 'mass' for a flow-rate string; numbers are refused (ambiguous)."""
    if not isinstance(value, str):
        raise UnitError(f'expected a flow rate with a unit ("0.5 m^3/s", "750 L/min" or "31 kg/s"), got {value!r}')
    _, unit = _split(value)
    if _lookup(unit, "volume_flow") is not None:
        return "volume"
    if _lookup(unit, "mass_flow") is not None:
        return "mass"
    raise UnitError(f'expected a volume or mass flow rate, got "{value}" (units: {DIMENSIONS["volume_flow"][2]}; '
                    f'{DIMENSIONS["mass_flow"][2]})')


# ---------------------------------------------------------------------------------------------
# display

def plain(value: float, digits: int = 4) -> str:
    """``value`` to ``digits`` significant digits without an exponent (5929 not 5.929e+03)."""
    if value == 0 or not math.isfinite(value):
        return "0" if value == 0 else str(value)
    e = math.floor(math.log10(abs(value)))
    if not -5 <= e < 15:
        return f"{value:.{digits}g}"
    dec = max(digits - 1 - e, 0)
    text = f"{round(value, dec):.{dec}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


# pressure units an output can be given in (--units): name -> pascals per unit
PRESSURE_UNITS = {"bar": 1e5, "kPa": 1e3, "MPa": 1e6, "psi": _P["psi"], "Pa": 1.0}
DEFAULT_PRESSURE_UNIT = "bar"


def show(value: float, dimension: str, digits: int = 4, unit: str | None = None) -> str:
    """Human-readable string for an SI value (used in printed tables, never parsed back);
    pressures in ``unit`` (one of PRESSURE_UNITS, default bar)."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    if abs(value) < 1e-6:  # 1 um, 1 uPa, 1 uN: round-off of a zero
        value = 0.0
    if dimension == "length":
        return f"{plain(value * 1e3, digits)} mm" if abs(value) < 1.0 else f"{plain(value, digits)} m"
    if dimension == "pressure":
        u = unit or DEFAULT_PRESSURE_UNIT
        return f"{plain(value / PRESSURE_UNITS[u], digits)} {u}"
    if dimension == "force":
        return f"{plain(value / 1e3, digits)} kN" if abs(value) >= 1e3 else f"{plain(value, digits)} N"
    if dimension == "angle":
        return f"{plain(math.degrees(value), digits)} deg"
    if dimension == "temperature":
        return f"{plain(value, digits)} K ({plain(value - 273.15, digits)} degC)"
    if dimension == "volume_flow":
        return f"{plain(value, digits)} m^3/s ({plain(value * 6e4, digits)} L/min)"
    if dimension == "mass_flow":
        return f"{plain(value, digits)} kg/s"
    if dimension == "density":
        return f"{plain(value, digits)} kg/m^3"
    if dimension == "velocity":
        return f"{plain(value, digits)} m/s"
    return f"{plain(value, digits)}"

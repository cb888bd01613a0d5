"""Dynamic viscosity [Pa s] of the product's fluids.

- Water: the IAPWS 2008 formulation for the viscosity of ordinary water substance (Huber et al.,
  J. Phys. Chem. Ref. Data 38, 2009), through the public ``iapws.IAPWS97`` class (``.mu``), with
  the density of IAPWS-IF97 region 1. Check values: the formulation's Table 4 as documented by
  the ``iapws`` package, mu(298.15 K, 998 kg/m^3) = 889.735100 uPa s; at 20 degC and 0.1 MPa
  mu = 1.0016 mPa s.
- Seawater: pure-water viscosity times the salinity factor of Sharqawy, Lienhard & Zubair
  (Desalination and Water Treatment 16, 2010), mu_sw = mu_w (1 + A S + B S^2),
  A = 1.541 + 1.998e-2 t - 9.52e-5 t^2, B = 7.974 - 7.561e-2 t + 4.724e-4 t^2, S in kg/kg,
  t in degC (valid 0-180 degC, 0-0.15 kg/kg). Salinity 35 g/kg unless given (common practice).
  At 15 degC this gives about 1.22e-3 Pa s (ITTC 7.5-02-01-03, 2011: nu = 1.1892e-6 m^2/s,
  rho = 1025.9 kg/m^3); about 1.08e-3 Pa s is the 20 degC value.
- A given liquid: its viscosity is passed through (the ``given`` argument, or a ``viscosity``
  attribute of the fluid if it has one).
- Gases: Sutherland's law mu = mu0 (T/T0)^1.5 (T0 + S)/(T + S) (White, Viscous Fluid Flow,
  3rd ed. 2006, table 1-2): air mu0 = 1.716e-5 Pa s, T0 = 273.15 K, S = 110.4 K;
  nitrogen mu0 = 1.663e-5 Pa s, T0 = 273.15 K, S = 107 K. Pressure has no effect on an ideal
  gas's viscosity in this law.
"""

from __future__ import annotations

from .properties import WATER_T_MAX, WATER_T_MIN, Fluid, water_vapour_pressure

# Sutherland constants (mu0 [Pa s], T0 [K], S [K]): White, Viscous Fluid Flow, table 1-2
SUTHERLAND: dict[str, tuple[float, float, float]] = {
    "air": (1.716e-5, 273.15, 110.4),
    "nitrogen": (1.663e-5, 273.15, 107.0),
}

# Salinity of open-ocean seawater, kg/kg (common practice)
SEAWATER_SALINITY = 0.035


def sutherland(temperature: float, mu0: float, t0: float, s: float) -> float:
    """Sutherland's law mu = mu0 (T/T0)^1.5 (T0 + S)/(T + S)."""
    if temperature <= 0.0:
        raise ValueError(f"temperature must be positive in kelvin, got {temperature}")
    return mu0 * (temperature / t0) ** 1.5 * (t0 + s) / (temperature + s)


def water_viscosity(temperature: float, pressure_abs: float) -> float:
    """Liquid water [Pa s] by the IAPWS 2008 formulation at ``temperature`` [K] and absolute
    ``pressure_abs`` [Pa]. A pressure below 1.05 times the vapour pressure is raised to it (the
    liquid is meant; viscosity changes by far less than 0.1 % over that range)."""
    from iapws import IAPWS97

    if not WATER_T_MIN - 1e-9 <= temperature <= WATER_T_MAX + 1e-9:  # 0.01 degC in floating point included
        raise ValueError(f"water temperature {temperature:.2f} K outside {WATER_T_MIN}-{WATER_T_MAX} K")
    p = max(pressure_abs, 1.05 * water_vapour_pressure(temperature))
    state = IAPWS97(T=temperature, P=p / 1e6)
    if state.region != 1:
        raise ValueError(
            f"water at {temperature:.2f} K and {p:.0f} Pa is not liquid (IAPWS-IF97 region {state.region})"
        )
    return float(state.mu)


def seawater_factor(temperature: float, salinity: float = SEAWATER_SALINITY) -> float:
    """mu_seawater / mu_water (Sharqawy, Lienhard & Zubair 2010)."""
    if not 0.0 <= salinity <= 0.15:
        raise ValueError(f"salinity {salinity} kg/kg outside 0-0.15")
    t = temperature - 273.15
    a = 1.541 + 1.998e-2 * t - 9.52e-5 * t * t
    b = 7.974 - 7.561e-2 * t + 4.724e-4 * t * t
    return 1.0 + a * salinity + b * salinity * salinity


def viscosity(
    fluid: Fluid,
    temperature: float | None,
    pressure_abs: float,
    *,
    given: float | None = None,
    salinity: float = SEAWATER_SALINITY,
) -> float:
    """Dynamic viscosity [Pa s] of ``fluid`` at ``temperature`` [K] (the fluid's own if None) and
    absolute pressure [Pa]. ``given`` overrides every model (and is required for a plain liquid
    that carries no viscosity)."""
    if given is not None:
        if not given > 0.0:
            raise ValueError(f"viscosity must be positive, got {given}")
        return float(given)
    t = fluid.temperature if temperature is None else temperature
    if fluid.kind == "liquid":
        mu = getattr(fluid, "viscosity", None)
        if mu is None:
            raise ValueError(f"liquid {fluid.name!r} has no viscosity: give it (Pa s)")
        return float(mu)
    if t is None:
        raise ValueError(f"fluid {fluid.name!r}: a temperature is needed for its viscosity")
    if fluid.kind == "water":
        return water_viscosity(t, pressure_abs)
    if fluid.kind == "seawater":
        return water_viscosity(t, pressure_abs) * seawater_factor(t, salinity)
    if fluid.kind == "ideal-gas":
        key = fluid.name.lower()
        if key not in SUTHERLAND:
            raise ValueError(f"no Sutherland constants for gas {fluid.name!r} (known: {', '.join(SUTHERLAND)})")
        return sutherland(t, *SUTHERLAND[key])
    raise ValueError(f"unknown fluid kind {fluid.kind!r}")


def viscosity_known(fluid: Fluid) -> bool:
    """True when ``viscosity`` can give this fluid's viscosity without more input."""
    if fluid.kind in ("water", "seawater"):
        return True
    if fluid.kind == "liquid":
        return getattr(fluid, "viscosity", None) is not None
    return fluid.name.lower() in SUTHERLAND

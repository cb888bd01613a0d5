"""Fluid properties: water (IAPWS-IF97), seawater, a given liquid, ideal gases.

Everything is SI. Water properties come from the IAPWS-IF97 formulation as implemented by the
``iapws`` package (Wagner et al., J. Eng. Gas Turbines Power 122, 2000); tests check it against
the published verification tables.
"""

from __future__ import annotations

from dataclasses import dataclass

# Seawater of practical salinity 35 near 15 degC: 1025 kg/m^3 (common practice in marine
# engineering; UNESCO EOS-80 gives about 1025.9 kg/m^3 at 15 degC, 35 PSU).
SEAWATER_DENSITY = 1025.0

# Specific gas constants and ratio of specific heats, derived: R = R_u / M with R_u = 8.314462618 J/(mol K)
# (CODATA 2018, exact since the 2019 SI), M_air = 28.9647 g/mol (ISO 2533:1975 standard atmosphere),
# M_N2 = 28.0134 g/mol; gamma = 1.4 of a diatomic gas near room temperature (common practice).
GASES: dict[str, tuple[float, float]] = {
    "air": (287.05, 1.4),
    "nitrogen": (296.80, 1.4),
}

WATER_T_MIN = 273.16
WATER_T_MAX = 473.15
# Seawater from its freezing point at 35 g/kg (about -1.9 degC, common practice) to tropical surface water.
SEAWATER_T_MIN = 271.15
SEAWATER_T_MAX = 313.15
TRIPLE_POINT_PRESSURE = 611.657  # Pa (IAPWS-IF97, Wagner et al. 2000)


def water_vapour_pressure(temperature: float) -> float:
    """Saturation pressure of water [Pa] at ``temperature`` [K] (IAPWS-IF97 region 4, the saturated
    liquid state of the iapws package's public IAPWS97 class)."""
    from iapws import IAPWS97

    return float(IAPWS97(T=temperature, x=0.0).P) * 1e6


def water_density(temperature: float, pressure_abs: float) -> float:
    """Density of liquid water [kg/m^3] at ``temperature`` [K] and absolute ``pressure`` [Pa]."""
    from iapws import IAPWS97

    state = IAPWS97(T=temperature, P=pressure_abs / 1e6)
    if state.region != 1:
        raise ValueError(
            f"water at {temperature:.2f} K and {pressure_abs:.0f} Pa is not liquid (IAPWS-IF97 region {state.region})"
        )
    return float(state.rho)


@dataclass(frozen=True)
class Fluid:
    """A resolved fluid. Liquids carry density and vapour pressure; gases R and gamma."""

    kind: str  # "water" | "seawater" | "liquid" | "ideal-gas"
    name: str
    density: float | None = None  # kg/m^3 (liquids)
    vapour_pressure: float | None = None  # Pa absolute (liquids)
    temperature: float | None = None  # K
    gas_constant: float | None = None  # J/(kg K) (gases)
    gamma: float | None = None  # (gases)
    source: str = ""
    viscosity: float | None = None  # Pa s, a given liquid's (others: fluids.viscosity computes it)

    @property
    def is_liquid(self) -> bool:
        return self.kind != "ideal-gas"


def resolve_water(temperature: float, reference_pressure_abs: float) -> Fluid:
    pv = water_vapour_pressure(temperature)
    p = max(reference_pressure_abs, 1.05 * pv)
    return Fluid(
        kind="water",
        name="water",
        density=water_density(temperature, p),
        vapour_pressure=pv,
        temperature=temperature,
        source="IAPWS-IF97 (iapws package)",
    )


def resolve_seawater(temperature: float, density: float | None) -> Fluid:
    # Vapour pressure of seawater is about 2 % below that of pure water; pure water's is used,
    # which errs towards predicting cavitation (common practice). Below 0.01 degC (seawater stays
    # liquid down to about -1.9 degC) the triple-point pressure is used: a little above the
    # vapour pressure of the cold brine, so it also errs towards predicting cavitation.
    pv = water_vapour_pressure(temperature) if temperature >= WATER_T_MIN else TRIPLE_POINT_PRESSURE
    return Fluid(
        kind="seawater",
        name="seawater",
        density=SEAWATER_DENSITY if density is None else density,
        vapour_pressure=pv,
        temperature=temperature,
        source="given density" if density is not None else "1025 kg/m^3 default (common practice)",
    )

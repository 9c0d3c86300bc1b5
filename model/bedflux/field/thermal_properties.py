"""Thermal properties of water and of saturated streambed sediment, with their sources.

Heat moves through a saturated bed by conduction in the bulk sediment and by advection with the
water. The water's volumetric heat capacity turns a Darcy flux into the velocity of the thermal
front; the bulk conductivity and heat capacity of the bed give its thermal diffusivity.
"""
from __future__ import annotations

from dataclasses import dataclass

#: Density of water (kg/m^3): the project's convention (999.7 at 10 degC, 998.2 at 20 degC:
#: Kell 1975 values as tabulated in handbooks, from memory).
WATER_DENSITY = 1000.0
#: Specific heat of liquid water (J kg-1 K-1) near 15 degC: 4186 (CRC Handbook of Chemistry and
#: Physics, table of the properties of water; 4192 at 10 degC, 4182 at 20 degC; from memory).
WATER_SPECIFIC_HEAT = 4186.0
#: Volumetric heat capacity of water, rho_w c_w (J m-3 K-1).
WATER_HEAT_CAPACITY = WATER_DENSITY * WATER_SPECIFIC_HEAT
#: Volumetric heat capacity of quartz-rich sediment grains (J m-3 K-1): 2650 kg/m^3 times about
#: 750 J kg-1 K-1 (Stonestrom & Constantz 2003, USGS Circular 1260, appendix tables; from memory).
GRAIN_HEAT_CAPACITY = 2.0e6

#: Implied effective thermal diffusivity of streambed sediment that is plausible (m^2/s):
#: 0.028 to 0.180 m^2/d (Irvine et al. 2015, J. Hydrol., experimental evaluation of the
#: amplitude, phase and combined methods).
PLAUSIBLE_DIFFUSIVITY = (0.028 / 86400.0, 0.180 / 86400.0)


@dataclass(frozen=True)
class BedThermal:
    """Bulk thermal properties of a saturated bed with the range that stands for their uncertainty.

    Parameters
    ----------
    thermal_conductivity
        Bulk conductivity of the saturated sediment, W m-1 K-1.
    heat_capacity
        Bulk volumetric heat capacity of the saturated sediment, J m-3 K-1.
    porosity
        Porosity (for the record and for a bulk heat capacity built from grains and water).
    conductivity_range, heat_capacity_range
        (low, high) bounds sampled uniformly for the uncertainty.
    source
        Where the values come from.
    """

    thermal_conductivity: float
    heat_capacity: float
    porosity: float
    conductivity_range: tuple[float, float]
    heat_capacity_range: tuple[float, float]
    source: str

    @property
    def diffusivity(self) -> float:
        """Thermal diffusivity lambda / (rho c), m^2/s."""
        return self.thermal_conductivity / self.heat_capacity


def bulk_heat_capacity(porosity: float, grain_heat_capacity: float = GRAIN_HEAT_CAPACITY) -> float:
    """Volumetric heat capacity of a saturated sediment: n rho_w c_w + (1 - n) rho_s c_s (J m-3 K-1)."""
    return porosity * WATER_HEAT_CAPACITY + (1.0 - porosity) * grain_heat_capacity


#: Relative half-width of the band sampled about a user's own property value (project rule:
#: about the scatter of measured values within one sediment class).
USER_PROPERTY_SPREAD = 0.15

_DEFAULTS_SOURCE = ("conductivity: saturated sand 2.14-2.69 W/(m K) in a sand and gravel aquifer (Markle et al. "
                    "2006, USGS pubs 70205983), 0.55-2.96 measured in sandy and peaty beds (Sebok & Mueller "
                    "2019, HESS 23:3305); the sand and silt values chosen here from those and from "
                    "Stonestrom & Constantz (2003, USGS Circular 1260; from memory). Heat capacity: "
                    "n rho_w c_w + (1 - n) rho_s c_s over the porosity range")


def _sediment(conductivity: float, conductivity_range: tuple[float, float], porosity: float,
              porosity_range: tuple[float, float]) -> BedThermal:
    return BedThermal(conductivity, bulk_heat_capacity(porosity), porosity, conductivity_range,
                      (bulk_heat_capacity(porosity_range[0]), bulk_heat_capacity(porosity_range[1])),
                      _DEFAULTS_SOURCE)


#: Defaults for saturated bed sediments: sand 2.0 (1.5-2.6) W/(m K), porosity 0.35 (0.25-0.45);
#: silt 1.4 (1.0-1.9) W/(m K), porosity 0.45 (0.35-0.55) (porosity ranges common practice).
SEDIMENTS: dict[str, BedThermal] = {
    "sand": _sediment(2.0, (1.5, 2.6), 0.35, (0.25, 0.45)),
    "silt": _sediment(1.4, (1.0, 1.9), 0.45, (0.35, 0.55)),
}


def user_properties(thermal_conductivity: float, heat_capacity: float | None, porosity: float | None,
                    sediment: str = "sand") -> BedThermal:
    """Properties given by a user, with the band of :data:`USER_PROPERTY_SPREAD` about them.

    A missing heat capacity is built from the porosity (:func:`bulk_heat_capacity`); a missing
    porosity takes the sediment class's.
    """
    base = SEDIMENTS[sediment]
    n = base.porosity if porosity is None else float(porosity)
    rc = bulk_heat_capacity(n) if heat_capacity is None else float(heat_capacity)
    lam = float(thermal_conductivity)
    s = USER_PROPERTY_SPREAD
    return BedThermal(lam, rc, n, (lam * (1 - s), lam * (1 + s)), (rc * (1 - s), rc * (1 + s)),
                      "given" + ("" if heat_capacity is not None else "; heat capacity from the porosity"))

"""The sheet kinds a field campaign folder may hold, with every column and its dimension.

docs/field.md documents the same columns for users; keep the two together.
"""
from __future__ import annotations

from bedflux.field.sheets import Column, SheetSpec
from bedflux.scenario.units import SECONDS_PER_DAY as _DAY

#: Belanger & Montgomery (1992): measured/actual inseepage 0.77 in tank tests at < 20 mm/h.
DEFAULT_EFFICIENCY = 0.77
#: Density of water used when a sheet gives none (kg/m^3).
WATER_DENSITY = 1000.0
#: A graduated cylinder read to 10 mL (common practice) when a sheet gives no resolution.
DEFAULT_VOLUME_RESOLUTION = 10e-6
#: A manometer scale read to the millimetre when a sheet gives no resolution.
DEFAULT_READING_RESOLUTION = 1e-3

# Plausible ranges (SI). A value outside one is a slip of unit or column, never a reading, so
# it stops the run (docs/field.md lists them). They are generous on purpose.
_YEAR = 365.25 * _DAY
#: Elevations on the Earth's surface: the deepest ocean trench (about -11 km) to the highest
#: peak (about 8.85 km), rounded outward.
ELEVATION = (-11000.0, 9000.0)
#: Times since the campaign origin: within ten years either side.
CAMPAIGN_TIME = (-10 * _YEAR, 10 * _YEAR)
#: Elapsed times within one test or one bag attachment: up to 30 days.
TEST_TIME = (0.0, 30 * _DAY)
#: Water (fresh to brine) and manometer fluids (air to water), kg/m^3.
WATER_DENSITIES = (950.0, 1250.0)
#: Anisotropy sqrt(Kh/Kv): Kh/Kv from 1e-4 to 1e4.
ANISOTROPY = (0.01, 100.0)

SITES = SheetSpec(
    "sites",
    (
        Column("site", None, meaning="site id"),
        Column("x", "length", meaning="distance along the reach", plausible=(-1e5, 1e5)),
        Column("y", "length", meaning="distance across the channel", plausible=(-1e4, 1e4)),
        Column("bed_elevation", "length", meaning="elevation of the bed surface", plausible=ELEVATION),
        Column("transect", None, required=False, meaning="transect label"),
        Column("station", None, required=False, meaning="station label"),
        Column("sediment", None, required=False, meaning="bed sediment for its thermal properties: sand or silt"),
        Column("thermal_conductivity", "thermal_conductivity", required=False, low=0.0, low_inclusive=False,
               meaning="bulk thermal conductivity of the saturated bed", plausible=(0.1, 10.0)),
        Column("heat_capacity", "heat_capacity", required=False, low=0.0, low_inclusive=False,
               meaning="bulk volumetric heat capacity of the saturated bed", plausible=(1.0e6, 5.0e6)),
        Column("porosity", "dimensionless", required=False, low=0.0, low_inclusive=False,
               meaning="porosity of the bed", plausible=(0.01, 0.95)),
        Column("note", None, required=False),
    ),
)

SEEPAGE = SheetSpec(
    "seepage",
    (
        Column("site", None, meaning="site id of the meter"),
        Column("time", "time", meaning="start of the bag attachment since the campaign origin",
               plausible=CAMPAIGN_TIME),
        Column("duration", "time", low=0.0, low_inclusive=False, meaning="bag attachment time",
               plausible=TEST_TIME),
        Column("volume_start", "volume", required=False, low=0.0, meaning="water in the bag when attached",
               plausible=(0.0, 0.1)),
        Column("volume_end", "volume", required=False, low=0.0, meaning="water in the bag when removed",
               plausible=(0.0, 0.1)),
        Column("mass_start", "mass", required=False, low=0.0, meaning="mass of water in the bag when attached",
               plausible=(0.0, 100.0)),
        Column("mass_end", "mass", required=False, low=0.0, meaning="mass of water in the bag when removed",
               plausible=(0.0, 100.0)),
        Column("water_density", "density", required=False, default=WATER_DENSITY, low=0.0,
               low_inclusive=False, meaning="density of the bag water", plausible=WATER_DENSITIES),
        Column("pan_diameter", "length", required=False, low=0.0, low_inclusive=False,
               meaning="inner diameter of the pan", plausible=(0.0, 3.0)),
        Column("pan_area", "area", required=False, low=0.0, low_inclusive=False, meaning="bed area covered",
               plausible=(0.0, 7.0)),
        Column("efficiency", "dimensionless", required=False, default=DEFAULT_EFFICIENCY, low=0.0,
               low_inclusive=False, meaning="fraction of the true flux the meter captures"),
        Column("bag_capacity", "volume", required=False, low=0.0, low_inclusive=False,
               meaning="volume of a full bag", plausible=(0.0, 0.1)),
        Column("volume_resolution", "volume", required=False, default=DEFAULT_VOLUME_RESOLUTION,
               low=0.0, low_inclusive=False, meaning="resolution of a bag volume reading",
               plausible=(0.0, 1e-3)),
        Column("note", None, required=False),
    ),
    one_of=(("pan_diameter", "pan_area"),),
)

MANOMETER = SheetSpec(
    "manometer",
    (
        Column("site", None, meaning="site id of the piezometer"),
        Column("time", "time", meaning="time of the reading since the campaign origin",
               plausible=CAMPAIGN_TIME),
        Column("depth", "length", low=0.0, low_inclusive=False,
               meaning="depth of the piezometer opening below the bed", plausible=(0.0, 10.0)),
        Column("reading", "length",
               meaning="interface level in the piezometer leg minus that in the stream leg",
               plausible=(-5.0, 5.0)),
        Column("fluid_density", "density", low=0.0, meaning="density of the fluid in the bend (air or oil)",
               plausible=(0.0, WATER_DENSITIES[1])),
        Column("water_density", "density", required=False, default=WATER_DENSITY, low=0.0,
               low_inclusive=False, meaning="density of the water", plausible=WATER_DENSITIES),
        Column("resolution", "length", required=False, default=DEFAULT_READING_RESOLUTION, low=0.0,
               low_inclusive=False, meaning="resolution of the reading", plausible=(0.0, 0.1)),
        Column("stage", "length", required=False, meaning="stream stage elevation at the reading",
               plausible=ELEVATION),
        Column("note", None, required=False),
    ),
)

SLUG = SheetSpec(
    "slug",
    (
        Column("test", None, meaning="test id"),
        Column("site", None, meaning="site id of the piezometer"),
        Column("time", "time", low=0.0, meaning="time since the start of the test", plausible=TEST_TIME),
        Column("displacement", "length", meaning="head displacement from the static level",
               plausible=(-50.0, 50.0)),
        Column("casing_radius", "length", required=False, low=0.0, low_inclusive=False,
               meaning="inner radius of the casing where the level moves", plausible=(0.0, 1.0)),
        Column("screen_radius", "length", required=False, low=0.0, low_inclusive=False,
               meaning="radius of the screen (or borehole)", plausible=(0.0, 2.0)),
        Column("screen_length", "length", required=False, low=0.0, low_inclusive=False,
               meaning="length of the screen", plausible=(0.0, 200.0)),
        Column("anisotropy", "dimensionless", required=False, low=0.0, low_inclusive=False,
               meaning="sqrt(Kh/Kv)", plausible=ANISOTROPY),
        Column("well_depth", "length", required=False, low=0.0, low_inclusive=False,
               meaning="depth of the well bottom below the static level (Bouwer & Rice)",
               plausible=(0.0, 2000.0)),
        Column("saturated_thickness", "length", required=False, low=0.0, low_inclusive=False,
               meaning="saturated thickness (Bouwer & Rice)", plausible=(0.0, 5000.0)),
        Column("screen_depth", "length", required=False,
               meaning="depth of the screen midpoint below the bed", plausible=(0.0, 10.0)),
        Column("water_depth", "length", required=False,
               meaning="height of the static level above the bed at the test (negative: below it)",
               plausible=(-10.0, 20.0)),
        Column("note", None, required=False),
    ),
)

PERMEAMETER = SheetSpec(
    "permeameter",
    (
        Column("test", None, meaning="test id"),
        Column("site", None, meaning="site id of the standpipe"),
        Column("time", "time", low=0.0, meaning="time since the start of the test", plausible=TEST_TIME),
        Column("head", "length", low=0.0, low_inclusive=False, meaning="water height in the pipe above the stage",
               plausible=(0.0, 10.0)),
        Column("diameter", "length", required=False, low=0.0, low_inclusive=False,
               meaning="inner diameter of the pipe", plausible=(0.0, 1.0)),
        Column("sediment_length", "length", required=False, low=0.0, low_inclusive=False,
               meaning="length of the sediment column in the pipe", plausible=(0.0, 10.0)),
        Column("anisotropy", "dimensionless", required=False, low=0.0, low_inclusive=False,
               meaning="sqrt(Kh/Kv)", plausible=ANISOTROPY),
        Column("sample_depth", "length", required=False,
               meaning="depth below the bed of the middle of the tested sediment", plausible=(0.0, 10.0)),
        Column("note", None, required=False),
    ),
)

VELOCITY = SheetSpec(
    "velocity",
    (
        Column("site", None, meaning="site id"),
        Column("time", "time", meaning="time of the reading since the campaign origin", plausible=CAMPAIGN_TIME),
        Column("head_difference", "length", low=0.0, meaning="velocity head read on the pitot-style manometer",
               plausible=(0.0, 2.0)),
        Column("note", None, required=False),
    ),
)

#: Stream and bed temperatures, degC: from below freezing (supercooled or saline water) to the
#: hottest streams outside geothermal areas, rounded outward.
WATER_TEMPERATURE = (-10.0, 50.0)

TEMPERATURE = SheetSpec(
    "temperature",
    (
        Column("site", None, meaning="site id of the sensor rod"),
        Column("time", "time", required=False, meaning="time of the reading since the campaign origin",
               plausible=CAMPAIGN_TIME),
        Column("datetime", None, required=False,
               meaning="date and time of the reading, ISO 8601 (2026-07-01 14:00)"),
        Column("depth", "length", low=0.0, meaning="depth of the sensor below the bed (0: on the bed)",
               plausible=(0.0, 10.0)),
        Column("temperature", "temperature", meaning="temperature read", plausible=WATER_TEMPERATURE),
        Column("accuracy", "temperature_difference", required=False, low=0.0, low_inclusive=False,
               meaning="accuracy of the sensor (+/-)", plausible=(0.0, 5.0)),
        Column("note", None, required=False),
    ),
    one_of=(("time", "datetime"),),
)

#: Single temperature loggers in the bed (columns of the temperature sheet): each reading becomes a
#: ``temperature`` observation that a scenario with ``[heat]`` predicts.
LOGGER = SheetSpec(
    "logger",
    (Column("site", None, meaning="site id of the logger"),) + TEMPERATURE.columns[1:],
    one_of=(("time", "datetime"),),
)

#: File name in the sheets folder -> sheet kind.
SHEET_FILES: dict[str, SheetSpec] = {
    "sites.csv": SITES,
    "seepage.csv": SEEPAGE,
    "manometer.csv": MANOMETER,
    "slug.csv": SLUG,
    "permeameter.csv": PERMEAMETER,
    "velocity.csv": VELOCITY,
    "temperature.csv": TEMPERATURE,
    "logger.csv": LOGGER,
}

"""The sheet kinds a field campaign folder may hold, with every column and its dimension.

docs/field.md documents the same columns for users; keep the two together.
"""
from __future__ import annotations

from .sheets import Column, SheetSpec

#: Belanger & Montgomery (1992): measured/actual inseepage 0.77 in tank tests at < 20 mm/h.
DEFAULT_EFFICIENCY = 0.77
#: Density of water used when a sheet gives none (kg/m^3).
WATER_DENSITY = 1000.0
#: A graduated cylinder read to 10 mL (common practice) when a sheet gives no resolution.
DEFAULT_VOLUME_RESOLUTION = 10e-6
#: A manometer scale read to the millimetre when a sheet gives no resolution.
DEFAULT_READING_RESOLUTION = 1e-3

SITES = SheetSpec(
    "sites",
    (
        Column("site", None, meaning="site id"),
        Column("x", "length", meaning="distance along the reach"),
        Column("y", "length", meaning="distance across the channel"),
        Column("bed_elevation", "length", meaning="elevation of the bed surface"),
        Column("transect", None, required=False, meaning="transect label"),
        Column("station", None, required=False, meaning="station label"),
        Column("note", None, required=False),
    ),
)

SEEPAGE = SheetSpec(
    "seepage",
    (
        Column("site", None, meaning="site id of the meter"),
        Column("time", "time", meaning="start of the bag attachment since the campaign origin"),
        Column("duration", "time", low=0.0, low_inclusive=False, meaning="bag attachment time"),
        Column("volume_start", "volume", required=False, low=0.0, meaning="water in the bag when attached"),
        Column("volume_end", "volume", required=False, low=0.0, meaning="water in the bag when removed"),
        Column("mass_start", "mass", required=False, low=0.0, meaning="mass of water in the bag when attached"),
        Column("mass_end", "mass", required=False, low=0.0, meaning="mass of water in the bag when removed"),
        Column("water_density", "density", required=False, default=WATER_DENSITY, low=0.0,
               low_inclusive=False, meaning="density of the bag water"),
        Column("pan_diameter", "length", required=False, low=0.0, low_inclusive=False,
               meaning="inner diameter of the pan"),
        Column("pan_area", "area", required=False, low=0.0, low_inclusive=False, meaning="bed area covered"),
        Column("efficiency", "dimensionless", required=False, default=DEFAULT_EFFICIENCY, low=0.0,
               low_inclusive=False, meaning="fraction of the true flux the meter captures"),
        Column("bag_capacity", "volume", required=False, low=0.0, low_inclusive=False,
               meaning="volume of a full bag"),
        Column("volume_resolution", "volume", required=False, default=DEFAULT_VOLUME_RESOLUTION,
               low=0.0, low_inclusive=False, meaning="resolution of a bag volume reading"),
        Column("note", None, required=False),
    ),
    one_of=(("pan_diameter", "pan_area"),),
)

MANOMETER = SheetSpec(
    "manometer",
    (
        Column("site", None, meaning="site id of the piezometer"),
        Column("time", "time", meaning="time of the reading since the campaign origin"),
        Column("depth", "length", low=0.0, low_inclusive=False,
               meaning="depth of the piezometer opening below the bed"),
        Column("reading", "length",
               meaning="interface level in the piezometer leg minus that in the stream leg"),
        Column("fluid_density", "density", low=0.0, meaning="density of the fluid in the bend (air or oil)"),
        Column("water_density", "density", required=False, default=WATER_DENSITY, low=0.0,
               low_inclusive=False, meaning="density of the water"),
        Column("resolution", "length", required=False, default=DEFAULT_READING_RESOLUTION, low=0.0,
               low_inclusive=False, meaning="resolution of the reading"),
        Column("stage", "length", required=False, meaning="stream stage elevation at the reading"),
        Column("note", None, required=False),
    ),
)

SLUG = SheetSpec(
    "slug",
    (
        Column("test", None, meaning="test id"),
        Column("site", None, meaning="site id of the piezometer"),
        Column("time", "time", low=0.0, meaning="time since the start of the test"),
        Column("displacement", "length", meaning="head displacement from the static level"),
        Column("casing_radius", "length", required=False, low=0.0, low_inclusive=False,
               meaning="inner radius of the casing where the level moves"),
        Column("screen_radius", "length", required=False, low=0.0, low_inclusive=False,
               meaning="radius of the screen (or borehole)"),
        Column("screen_length", "length", required=False, low=0.0, low_inclusive=False,
               meaning="length of the screen"),
        Column("anisotropy", "dimensionless", required=False, low=0.0, low_inclusive=False,
               meaning="sqrt(Kh/Kv)"),
        Column("well_depth", "length", required=False, low=0.0, low_inclusive=False,
               meaning="depth of the well bottom below the static level (Bouwer & Rice)"),
        Column("saturated_thickness", "length", required=False, low=0.0, low_inclusive=False,
               meaning="saturated thickness (Bouwer & Rice)"),
        Column("note", None, required=False),
    ),
)

PERMEAMETER = SheetSpec(
    "permeameter",
    (
        Column("test", None, meaning="test id"),
        Column("site", None, meaning="site id of the standpipe"),
        Column("time", "time", low=0.0, meaning="time since the start of the test"),
        Column("head", "length", low=0.0, low_inclusive=False, meaning="water height in the pipe above the stage"),
        Column("diameter", "length", required=False, low=0.0, low_inclusive=False,
               meaning="inner diameter of the pipe"),
        Column("sediment_length", "length", required=False, low=0.0, low_inclusive=False,
               meaning="length of the sediment column in the pipe"),
        Column("anisotropy", "dimensionless", required=False, low=0.0, low_inclusive=False,
               meaning="sqrt(Kh/Kv)"),
        Column("note", None, required=False),
    ),
)

VELOCITY = SheetSpec(
    "velocity",
    (
        Column("site", None, meaning="site id"),
        Column("time", "time", meaning="time of the reading since the campaign origin"),
        Column("head_difference", "length", low=0.0, meaning="velocity head read on the pitot-style manometer"),
        Column("note", None, required=False),
    ),
)

#: File name in the sheets folder -> sheet kind.
SHEET_FILES: dict[str, SheetSpec] = {
    "sites.csv": SITES,
    "seepage.csv": SEEPAGE,
    "manometer.csv": MANOMETER,
    "slug.csv": SLUG,
    "permeameter.csv": PERMEAMETER,
    "velocity.csv": VELOCITY,
}

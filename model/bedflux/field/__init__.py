"""Field sheets to checked observations: seepage meters, manometers, slug tests, permeameters,
velocity head, temperature records.

Knows nothing of the model. Functions take and return SI values and accept arrays; fluxes and
gradients are positive upward (groundwater discharging into the stream). :func:`run_field`
reduces a folder of sheets and writes tables, ``observations.csv`` and figures.
"""
from __future__ import annotations

from bedflux.field.consistency import darcy_flux, implied_conductivity
from bedflux.field.manometer import (amplification, gradient_sigma, head_resolution, manometer_head_difference, vertical_gradient)
from bedflux.field.mapping import BedMap, krige_bed_flux
from bedflux.field.run import FieldReduction, reduce_field, run_field
from bedflux.field.seepage import detection_flux, pan_area, seepage_flux, volume_from_mass
from bedflux.field.slug import (RecoveryFit, bouwer_rice_coefficients, bouwer_rice_k, bouwer_rice_shape, falling_head_fit, fit_recovery, hvorslev_k, hvorslev_k_from_lag, permeameter_kv, permeameter_kv_from_lag)
from bedflux.field.thermal import flux_from_temperature
from bedflux.field.stats import Summary, modified_z, robust_outliers, repeat_statistics
from bedflux.field.velocity import head_from_velocity, velocity_from_head

__all__ = [
    "BedMap", "RecoveryFit", "Summary", "amplification", "bouwer_rice_coefficients", "bouwer_rice_k",
    "bouwer_rice_shape", "darcy_flux", "detection_flux", "falling_head_fit", "fit_recovery", "flux_from_temperature",
    "gradient_sigma", "head_from_velocity", "head_resolution", "hvorslev_k", "hvorslev_k_from_lag",
    "implied_conductivity", "krige_bed_flux", "manometer_head_difference", "modified_z", "pan_area",
    "permeameter_kv", "permeameter_kv_from_lag", "repeat_statistics", "robust_outliers", "run_field", "reduce_field",
    "FieldReduction", "seepage_flux", "velocity_from_head", "vertical_gradient", "volume_from_mass",
]

"""Oxygen-bomb calorimetry: certificate and Jessup factor, buoyancy, corrections, bomb
contents, Washburn reduction to standard states, calibration series (statistics in
:mod:`calwork.core.statistics`), the run/series chain and
fuel outputs.

Safety: see :data:`calwork.core.safety.SAFETY_NOTE`.
"""

from calwork.bomb.buoyancy import buoyancy_factor, mass_in_vacuum_g
from calwork.bomb.certificate import (
    ReferenceMaterial,
    certified_massic_energy_J_per_g,
    jessup_factor,
    load_reference_material,
)
from calwork.bomb.chain import bomb_conditions, reduce_calibration_run, reduce_combustion_run
from calwork.bomb.contents import contents_energy_equivalents_J_per_K, contents_referral_J
from calwork.bomb.corrections import (
    cotton_energy_J,
    fuse_energy_J,
    nitric_acid_energy_J,
    nitric_acid_mol,
    soot_energy_J,
    sulfuric_acid_energy_J,
)
from calwork.bomb.fuels import (
    convert_basis,
    convert_calorific_value,
    fuel_outputs,
    gross_calorific_value_J_per_g,
    net_calorific_value_J_per_g,
    net_from_gross_astm_d240_J_per_g,
)
from calwork.bomb.series import (
    calibration_series,
    formation_enthalpies,
    sample_covariance,
    sample_series,
)
from calwork.bomb.washburn import Combustible, WashburnResult, bomb_states, washburn_correction

__all__ = [
    "Combustible",
    "ReferenceMaterial",
    "WashburnResult",
    "bomb_conditions",
    "bomb_states",
    "buoyancy_factor",
    "calibration_series",
    "certified_massic_energy_J_per_g",
    "contents_energy_equivalents_J_per_K",
    "contents_referral_J",
    "convert_basis",
    "convert_calorific_value",
    "cotton_energy_J",
    "formation_enthalpies",
    "fuel_outputs",
    "fuse_energy_J",
    "gross_calorific_value_J_per_g",
    "jessup_factor",
    "load_reference_material",
    "mass_in_vacuum_g",
    "net_calorific_value_J_per_g",
    "net_from_gross_astm_d240_J_per_g",
    "nitric_acid_energy_J",
    "nitric_acid_mol",
    "reduce_calibration_run",
    "reduce_combustion_run",
    "sample_covariance",
    "sample_series",
    "soot_energy_J",
    "sulfuric_acid_energy_J",
    "washburn_correction",
]

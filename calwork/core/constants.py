"""Physical constants and conventions used throughout calwork, each with its source.

Reference *data* (key values, certificates, property tables) live in ``calwork/data/*.toml``;
only universal constants and fixed conventions live here.
"""

from __future__ import annotations

__all__ = [
    "CELSIUS_ZERO_K",
    "CONSTANTS_SOURCE",
    "ELEMENTARY_CHARGE_C",
    "T_REF_K",
    "AVOGADRO_per_mol",
    "BOLTZMANN_J_per_K",
    "R_J_per_mol_K",
    "STANDARD_ATMOSPHERE_Pa",
    "STANDARD_PRESSURE_Pa",
    "VACUUM_PERMITTIVITY_F_per_m",
]

#: Avogadro constant, exact in the 2019 SI (CODATA 2018).
AVOGADRO_per_mol = 6.02214076e23
#: Boltzmann constant, exact in the 2019 SI (CODATA 2018).
BOLTZMANN_J_per_K = 1.380649e-23
#: Elementary charge, exact in the 2019 SI (CODATA 2018).
ELEMENTARY_CHARGE_C = 1.602176634e-19
#: Vacuum electric permittivity ε0 (CODATA 2018 recommended value; relative u 1.5e-10).
VACUUM_PERMITTIVITY_F_per_m = 8.8541878128e-12
#: Molar gas constant R = N_A k, exact in the 2019 SI (CODATA 2018; scipy.constants agrees).
R_J_per_mol_K = AVOGADRO_per_mol * BOLTZMANN_J_per_K
#: Kelvin at 0 °C (ITS-90 / SI definition of the Celsius scale).
CELSIUS_ZERO_K = 273.15
#: Standard pressure p° = 1 bar (IUPAC; the convention of the CODATA Key Values, 1989).
STANDARD_PRESSURE_Pa = 100_000.0
#: Standard atmosphere, exact by definition (used by older thermochemistry, "30 atm" bombs).
STANDARD_ATMOSPHERE_Pa = 101_325.0
#: Thermochemical reference temperature, 25 °C.
T_REF_K = 298.15

CONSTANTS_SOURCE = {
    "R_J_per_mol_K": "CODATA 2018 (exact, N_A k)",
    "ELEMENTARY_CHARGE_C": "CODATA 2018 (exact)",
    "VACUUM_PERMITTIVITY_F_per_m": "CODATA 2018 (recommended)",
    "STANDARD_PRESSURE_Pa": "IUPAC standard pressure, 1 bar (CODATA Key Values 1989)",
    "T_REF_K": "thermochemical reference temperature 298.15 K (common practice)",
}

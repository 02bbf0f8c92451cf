"""Properties of liquid water that the solution chain needs: the Debye–Hückel slopes.

The Debye–Hückel osmotic slope (Pitzer convention)

    A_φ = (1/3) (2π N_A ρ_w)^½ (e² / (4π ε0 ε_r k_B T))^{3/2}

with ρ_w the density of water (kg/m³) and ε_r its relative permittivity, and the enthalpy
slope A_H = 4RT² (∂A_φ/∂T)_p (Pitzer, Activity Coefficients in Electrolyte Solutions, 2nd ed.
1991, ch. 3; docs/methods.md §2.5) are computed at the run's temperature from the IAPWS
formulations: IAPWS-95 for the density (Wagner & Pruß, J. Phys. Chem. Ref. Data 31 (2002)
387) and the IAPWS 1997 release on the static dielectric constant (Fernández et al., J. Phys.
Chem. Ref. Data 26 (1997) 1125), as implemented by the ``chemicals`` library. The derivative
is a central difference over ±0.01 K (relative truncation error below 1e-8).
"""

from __future__ import annotations

import math
from functools import cache

from calwork.core.constants import (
    ELEMENTARY_CHARGE_C,
    AVOGADRO_per_mol,
    BOLTZMANN_J_per_K,
    R_J_per_mol_K,
    STANDARD_ATMOSPHERE_Pa,
    VACUUM_PERMITTIVITY_F_per_m,
)
from calwork.core.errors import RunError

__all__ = ["debye_huckel_slopes", "water_density_kg_per_m3", "water_permittivity"]

#: Liquid range at 0.1 MPa over which the slopes are computed, K.
T_RANGE_K = (273.16, 372.0)
_STEP_K = 0.01


def _check(temperature_K: float) -> float:
    t = float(temperature_K)
    if not (T_RANGE_K[0] <= t <= T_RANGE_K[1]):
        raise RunError("temperature outside the liquid range of water at 0.1 MPa",
                       column="temperature_K", found=t,
                       expected=f"{T_RANGE_K[0]} K to {T_RANGE_K[1]} K")
    return t


@cache
def water_density_kg_per_m3(temperature_K: float,
                            pressure_Pa: float = STANDARD_ATMOSPHERE_Pa) -> float:
    """Density of liquid water (IAPWS-95), kg/m³."""
    from chemicals.iapws import iapws95_properties

    return float(iapws95_properties(_check(temperature_K), float(pressure_Pa))[0])


@cache
def water_permittivity(temperature_K: float,
                       pressure_Pa: float = STANDARD_ATMOSPHERE_Pa) -> float:
    """Relative permittivity of liquid water (IAPWS 1997), dimensionless."""
    from chemicals.permittivity import permittivity_IAPWS

    rho = water_density_kg_per_m3(temperature_K, pressure_Pa)
    return float(permittivity_IAPWS(_check(temperature_K), rho))


def _A_phi(temperature_K: float, pressure_Pa: float) -> float:
    rho = water_density_kg_per_m3(temperature_K, pressure_Pa)
    eps_r = water_permittivity(temperature_K, pressure_Pa)
    bjerrum = ELEMENTARY_CHARGE_C**2 / (4 * math.pi * VACUUM_PERMITTIVITY_F_per_m * eps_r
                                        * BOLTZMANN_J_per_K * temperature_K)
    return math.sqrt(2 * math.pi * AVOGADRO_per_mol * rho) / 3.0 * bjerrum**1.5


@cache
def debye_huckel_slopes(temperature_K: float,
                        pressure_Pa: float = STANDARD_ATMOSPHERE_Pa) -> tuple[float, float]:
    """``(A_φ, A_H)`` of water: kg^½ mol^−½ and J kg^½ mol^−3/2 (Pitzer convention).

    Examples
    --------
    >>> a_phi, a_h = debye_huckel_slopes(298.15)
    >>> round(a_phi, 4), round(a_h)
    (0.3913, 1972)
    """
    t = _check(temperature_K)
    lo, hi = max(t - _STEP_K, T_RANGE_K[0]), min(t + _STEP_K, T_RANGE_K[1])
    slope = (_A_phi(hi, pressure_Pa) - _A_phi(lo, pressure_Pa)) / (hi - lo)
    return _A_phi(t, pressure_Pa), 4.0 * R_J_per_mol_K * t * t * slope

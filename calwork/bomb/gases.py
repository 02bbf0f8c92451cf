"""Real-gas properties of the bomb gas: second virial coefficients, mixtures, fugacity.

The bomb gas (O2, CO2, N2) at about 3 MPa is described by the virial equation truncated after
the second coefficient, in the pressure form ``pV = nRT + nBp`` (so ``p = nRT/(V − nB)``).
Then per mole the residual internal energy is ``U − U° = −p T dB/dT`` and the fugacity
coefficient of component i is ``ln φ_i = (2 Σ_j y_j B_ij − B_mix) p/(RT)`` with
``B_mix = Σ_i Σ_j y_i y_j B_ij`` (standard virial thermodynamics).

B(T) comes from the corresponding-states correlation of Tsonopoulos (AIChE J. 20 (1974) 263)
with critical data from ``washburn_properties.toml`` and the Prausnitz combining rules for the
cross coefficients with a binary parameter k_ij per pair; the derivative dB/dT is analytic.
Two sets of k_ij (``CROSS_MODELS``) are fitted to the reference mixture model GERG-2008:
``'gerg-dBdT'`` (recommended: the gas energy is −n p T dB/dT) and ``'gerg-B'``; the spread
between them is the cross-virial model uncertainty of the Washburn correction.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from functools import cache

from calwork.core.constants import R_J_per_mol_K
from calwork.core.errors import DataFileError, RunError, check_choice
from calwork.data import load_data

__all__ = [
    "CROSS_MODELS",
    "GASES",
    "binary_parameter",
    "cross_critical_constants",
    "fugacity_coefficients",
    "mixture_virial_m3_per_mol",
    "tsonopoulos_B_m3_per_mol",
    "virial_B_m3_per_mol",
]

#: The gases of the bomb described by the property file.
GASES = ("O2", "CO2", "N2")
#: Cross-virial models → the key of their k_ij in ``[binary_parameters]``.
CROSS_MODELS = {"gerg-dBdT": "k_ij", "gerg-B": "k_ij_B"}
RECOMMENDED_CROSS_MODEL = "gerg-dBdT"


@cache
def _gas(name: str) -> Mapping[str, float]:
    table = load_data("washburn_properties.toml")["gases"]
    if name not in table:
        raise DataFileError(f"no property data for gas {name!r}", path="washburn_properties.toml")
    return table[name]


def _critical(name: str) -> tuple[float, float, float, float]:
    g = _gas(name)
    return (
        float(g["critical_temperature_K"]),
        float(g["critical_pressure_Pa"]),
        float(g["critical_volume_cm3_per_mol"]) * 1e-6,
        float(g["acentric_factor"]),
    )


@cache
def binary_parameter(a: str, b: str, cross_model: str = RECOMMENDED_CROSS_MODEL) -> float:
    """The binary interaction parameter k_ij of the pair (0 for a pure gas).

    From ``[binary_parameters]`` in ``washburn_properties.toml`` (sources there); a pair
    without an entry is an error, never a silent k_ij = 0.
    """
    field = CROSS_MODELS[check_choice("cross_model", cross_model, tuple(CROSS_MODELS))]
    if a == b:
        return 0.0
    table = load_data("washburn_properties.toml")["binary_parameters"]
    key = "-".join(sorted((a, b)))
    if key not in table:
        raise DataFileError(f"no binary interaction parameter for the pair {key}",
                            path="washburn_properties.toml", expected=f"one of {sorted(table)}")
    return float(table[key][field])


def cross_critical_constants(a: str, b: str, k_ij: float | None = None, *,
                             cross_model: str = RECOMMENDED_CROSS_MODEL
                             ) -> tuple[float, float, float]:
    """``(T_c, P_c, ω)`` of the pair ``a``–``b`` from the Prausnitz combining rules.

    ``T_c,ij = sqrt(T_c,i T_c,j) (1 − k_ij)`` with the pair's k_ij from the data file unless
    ``k_ij`` is given. Returns the pure-component values when ``a == b``.
    """
    tca, pca, vca, wa = _critical(a)
    if a == b:
        return tca, pca, wa
    if k_ij is None:
        k_ij = binary_parameter(a, b, cross_model)
    tcb, pcb, vcb, wb = _critical(b)
    tc = math.sqrt(tca * tcb) * (1.0 - k_ij)
    vc = ((vca ** (1 / 3) + vcb ** (1 / 3)) / 2) ** 3
    zc = (pca * vca / (R_J_per_mol_K * tca) + pcb * vcb / (R_J_per_mol_K * tcb)) / 2
    pc = zc * R_J_per_mol_K * tc / vc
    return tc, pc, (wa + wb) / 2


def tsonopoulos_B_m3_per_mol(
    temperature_K: float, critical_temperature_K: float, critical_pressure_Pa: float,
    acentric_factor: float,
) -> tuple[float, float]:
    """Second virial coefficient of a non-polar gas and its T-derivative (Tsonopoulos 1974).

    ``B P_c/(R T_c) = f0(T_r) + ω f1(T_r)`` with
    ``f0 = 0.1445 − 0.330/T_r − 0.1385/T_r² − 0.0121/T_r³ − 0.000607/T_r⁸`` and
    ``f1 = 0.0637 + 0.331/T_r² − 0.423/T_r³ − 0.008/T_r⁸``.

    Parameters
    ----------
    temperature_K, critical_temperature_K
        Temperature and critical temperature, K.
    critical_pressure_Pa
        Critical pressure, Pa.
    acentric_factor
        Pitzer acentric factor, dimensionless.

    Returns
    -------
    (B, dB/dT)
        m³/mol and m³/(mol K).
    """
    tr = temperature_K / critical_temperature_K
    f0 = 0.1445 - 0.330 / tr - 0.1385 / tr**2 - 0.0121 / tr**3 - 0.000607 / tr**8
    f1 = 0.0637 + 0.331 / tr**2 - 0.423 / tr**3 - 0.008 / tr**8
    df0 = 0.330 / tr**2 + 2 * 0.1385 / tr**3 + 3 * 0.0121 / tr**4 + 8 * 0.000607 / tr**9
    df1 = -2 * 0.331 / tr**3 + 3 * 0.423 / tr**4 + 8 * 0.008 / tr**9
    scale = R_J_per_mol_K * critical_temperature_K / critical_pressure_Pa
    B = scale * (f0 + acentric_factor * f1)
    dB = scale * (df0 + acentric_factor * df1) / critical_temperature_K
    return B, dB


@cache
def virial_B_m3_per_mol(a: str, b: str, temperature_K: float,
                        cross_model: str = RECOMMENDED_CROSS_MODEL) -> tuple[float, float]:
    """``(B_ab, dB_ab/dT)`` for the gases ``a`` and ``b`` (equal for a pure gas), SI units.

    Examples
    --------
    Oxygen at 298.15 K: B ≈ −16 cm³/mol (Dymond & Smith compilation, recalled).

    >>> round(float(virial_B_m3_per_mol("O2", "O2", 298.15)[0]) * 1e6, 1)
    -16.2
    """
    key = tuple(sorted((a, b)))
    tc, pc, w = cross_critical_constants(*key, cross_model=cross_model)
    return tsonopoulos_B_m3_per_mol(temperature_K, tc, pc, w)


def mixture_virial_m3_per_mol(
    mole_fractions: Mapping[str, float], temperature_K: float,
    cross_model: str = RECOMMENDED_CROSS_MODEL,
) -> tuple[float, float]:
    """``(B_mix, dB_mix/dT)`` of a gas mixture, ``B_mix = Σ_i Σ_j y_i y_j B_ij``."""
    names = [n for n, y in mole_fractions.items() if y > 0]
    B = dB = 0.0
    for i in names:
        for j in names:
            bij, dbij = virial_B_m3_per_mol(i, j, temperature_K, cross_model)
            w = mole_fractions[i] * mole_fractions[j]
            B += w * bij
            dB += w * dbij
    return B, dB


def fugacity_coefficients(
    mole_fractions: Mapping[str, float], pressure_Pa: float, temperature_K: float,
    names: Sequence[str] | None = None, cross_model: str = RECOMMENDED_CROSS_MODEL,
) -> dict[str, float]:
    """Fugacity coefficients φ_i of the components of a virial gas mixture."""
    present = [n for n, y in mole_fractions.items() if y > 0]
    B, _ = mixture_virial_m3_per_mol(mole_fractions, temperature_K, cross_model)
    rt = R_J_per_mol_K * temperature_K
    out = {}
    for i in names or present:
        s = sum(mole_fractions[j] * virial_B_m3_per_mol(i, j, temperature_K, cross_model)[0]
                for j in present)
        exponent = (2 * s - B) * pressure_Pa / rt
        if not abs(exponent) < 50:
            raise RunError("gas pressure far outside the virial model's range",
                           column="o2_pressure_MPa", found=f"{pressure_Pa / 1e6:.4g} MPa",
                           expected="a bomb pressure of a few MPa")
        out[i] = math.exp(exponent)
    return out

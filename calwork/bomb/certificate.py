"""Reference materials for bomb calibration: certified value and Jessup's correction.

The certified energy of combustion of benzoic acid (NIST SRM 39j: 26 434 J/g, mass in vacuum)
holds under the certificate's *standard bomb conditions* (30 atm O2, 3 g of sample and 3 g of
water per litre of bomb volume, reaction referred to 25 °C). Jessup's formula (J. Res. NBS 29
(1942) 247, printed on the SRM 39 certificates; coefficients recalled from memory, kept as
data in ``benzoic_acid.toml``) corrects it to the actual conditions of a run.

Safety: see :data:`calwork.core.safety.SAFETY_NOTE`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from calwork.core.constants import CELSIUS_ZERO_K, STANDARD_ATMOSPHERE_Pa
from calwork.core.errors import CalibrationError, DataFileError
from calwork.data import load_data

__all__ = [
    "ReferenceMaterial",
    "certified_massic_energy_J_per_g",
    "jessup_factor",
    "load_reference_material",
    "reference_material_names",
]

_FILE = "benzoic_acid.toml"


@dataclass(frozen=True, kw_only=True)
class ReferenceMaterial:
    """A calorimetric reference material as its certificate states it.

    Attributes
    ----------
    name
        Canonical name (e.g. ``'benzoic acid'``).
    formula, phase
        Chemical formula and phase (``'cr'``).
    certified_J_per_g
        Certified energy of combustion, positive, J per gram of mass in vacuum, under the
        certificate's standard bomb conditions.
    u_certified_J_per_g
        Standard uncertainty (k = 1) of the certified value, J/g.
    density_g_per_cm3
        Density used for the reduction of weighings to vacuum, g/cm³.
    heat_capacity_J_per_g_K
        Massic heat capacity, J/(g K) (energy equivalent of the bomb contents).
    standard_conditions
        ``o2_pressure_atm``, ``sample_g_per_L``, ``water_g_per_L``, ``temperature_C``.
    jessup_ppm
        Jessup coefficients, ppm per unit: ``per_atm``, ``per_sample_g_per_L``,
        ``per_water_g_per_L``, ``per_K``.
    source
        Citation of the certificate (and of the coefficients).
    """

    name: str
    formula: str
    phase: str
    certified_J_per_g: float
    u_certified_J_per_g: float
    density_g_per_cm3: float
    heat_capacity_J_per_g_K: float
    standard_conditions: Mapping[str, float] = field(default_factory=dict)
    jessup_ppm: Mapping[str, float] = field(default_factory=dict)
    source: str = ""

    def __post_init__(self) -> None:
        for name in ("standard_conditions", "jessup_ppm"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))
        u = self.u_certified_J_per_g
        if not (math.isfinite(u) and u > 0):
            raise CalibrationError("the certified value needs a standard uncertainty > 0",
                                   column="u_certified_J_per_g", found=u,
                                   expected="the certificate's standard uncertainty in J/g")

    @property
    def has_condition_factor(self) -> bool:
        """True when the certificate gives standard conditions and Jessup-type coefficients."""
        return bool(self.jessup_ppm) and bool(self.standard_conditions)

    @classmethod
    def sheet_certified(cls, name: str, formula: str, certified_J_per_g: float,
                        u_certified_J_per_g: float, *, phase: str = "cr",
                        density_g_per_cm3: float, heat_capacity_J_per_g_K: float
                        ) -> ReferenceMaterial:
        """A material calwork has no certificate for, exactly as the run sheet gives it.

        No certificate-condition factor is applied (``jessup_ppm`` empty): the certified
        value is used as given.
        """
        return cls(name=name, formula=formula, phase=phase,
                   certified_J_per_g=abs(float(certified_J_per_g)),
                   u_certified_J_per_g=float(u_certified_J_per_g),
                   density_g_per_cm3=density_g_per_cm3,
                   heat_capacity_J_per_g_K=heat_capacity_J_per_g_K,
                   source="certified value and its uncertainty from the run sheet")

    @property
    def u_relative(self) -> float:
        """Relative standard uncertainty of the certified value."""
        return self.u_certified_J_per_g / self.certified_J_per_g

    def with_certified(self, certified_J_per_g: float,
                       u_certified_J_per_g: float | None = None) -> ReferenceMaterial:
        """The same material with another certified value (a sheet's ``certified_J_per_g``).

        Without ``u_certified_J_per_g`` the relative standard uncertainty of the bundled
        certificate is kept (the caller warns that it was assumed).
        """
        value = abs(float(certified_J_per_g))
        u = value * self.u_relative if u_certified_J_per_g is None else float(
            u_certified_J_per_g)
        return ReferenceMaterial(
            name=self.name, formula=self.formula, phase=self.phase,
            certified_J_per_g=value, u_certified_J_per_g=u,
            density_g_per_cm3=self.density_g_per_cm3,
            heat_capacity_J_per_g_K=self.heat_capacity_J_per_g_K,
            standard_conditions=self.standard_conditions, jessup_ppm=self.jessup_ppm,
            source=f"certified value from the run sheet; conditions and u_r of {self.source}",
        )


def _materials() -> dict[str, dict[str, Any]]:
    data = load_data(_FILE)
    out = {}
    for raw in data.get("material", []):
        keys = [raw["name"], *raw.get("aliases", [])]
        for key in keys:
            out[_key(key)] = raw
    if not out:
        raise DataFileError("no [[material]] entries", path=_FILE)
    return out


def _key(name: str) -> str:
    return " ".join(name.strip().lower().replace("_", " ").replace("-", " ").split())


def reference_material_names() -> list[str]:
    """Canonical names of the bundled reference materials."""
    return sorted({raw["name"] for raw in _materials().values()})


def load_reference_material(name: str) -> ReferenceMaterial:
    """The bundled reference material called ``name`` (case and ``-``/``_`` ignored).

    Raises
    ------
    CalibrationError
        If no bundled certificate has that name or alias.

    Examples
    --------
    >>> load_reference_material("Benzoic acid").certified_J_per_g
    26434.0
    """
    table = _materials()
    raw = table.get(_key(name))
    if raw is None:
        raise CalibrationError(
            "unknown reference material (give certified_J_per_g for another one)",
            column="reference_material", found=name,
            expected=f"one of {reference_material_names()}",
        )
    source = load_data(_FILE)["source"]
    return ReferenceMaterial(
        name=raw["name"], formula=raw["formula"], phase=raw.get("phase", "cr"),
        certified_J_per_g=float(raw["certified_J_per_g"]),
        u_certified_J_per_g=float(raw["expanded_uncertainty_J_per_g"])
        / float(raw["coverage_factor"]),
        density_g_per_cm3=float(raw["density_g_per_cm3"]),
        heat_capacity_J_per_g_K=float(raw["heat_capacity_J_per_g_K"]),
        standard_conditions=raw["standard_conditions"], jessup_ppm=raw["jessup_ppm"],
        source=f"{source['citation']}; {source['jessup']}",
    )


def jessup_factor(
    o2_pressure_MPa: float,
    sample_g_per_L: float,
    water_g_per_L: float,
    temperature_K: float,
    *,
    material: ReferenceMaterial | None = None,
) -> float:
    """Jessup's factor that turns the certified value into the value under actual conditions.

    ``f = 1 + 1e-6 [a (P − P0) + b (m_s/V − s0) + c (m_w/V − w0) + d (t − t0)]`` with the
    coefficients and standard conditions of the material's data file (benzoic acid:
    a = 20 /atm, b = 42 L/g, c = 30 L/g, d = −45 /K; P0 = 30 atm, s0 = w0 = 3 g/L,
    t0 = 25 °C; Jessup 1942, recalled).

    Parameters
    ----------
    o2_pressure_MPa
        Initial oxygen pressure, MPa (converted to atm, 1 atm = 101 325 Pa).
    sample_g_per_L
        Mass of reference material per bomb volume, g/L.
    water_g_per_L
        Mass of water put into the bomb per bomb volume, g/L.
    temperature_K
        Temperature to which the bomb process is referred, K.
    material
        Reference material (default: the bundled benzoic acid).

    Examples
    --------
    >>> round(jessup_factor(30 * 0.101325, 3.0, 3.0, 298.15), 12)
    1.0
    >>> round(jessup_factor(35 * 0.101325, 3.0, 3.0, 298.15), 9)
    1.0001
    """
    rm = material or load_reference_material("benzoic acid")
    c = rm.jessup_ppm
    s = rm.standard_conditions
    p_atm = o2_pressure_MPa * 1e6 / STANDARD_ATMOSPHERE_Pa
    t_C = temperature_K - CELSIUS_ZERO_K
    ppm = (
        c["per_atm"] * (p_atm - s["o2_pressure_atm"])
        + c["per_sample_g_per_L"] * (sample_g_per_L - s["sample_g_per_L"])
        + c["per_water_g_per_L"] * (water_g_per_L - s["water_g_per_L"])
        + c["per_K"] * (t_C - s["temperature_C"])
    )
    return 1.0 + 1e-6 * ppm


def certified_massic_energy_J_per_g(
    material: ReferenceMaterial,
    *,
    o2_pressure_MPa: float,
    sample_g_per_L: float,
    water_g_per_L: float,
    temperature_K: float,
) -> float:
    """Energy of combustion (positive, J/g in vacuum) under the run's actual bomb conditions.

    Examples
    --------
    >>> rm = load_reference_material("benzoic acid")
    >>> round(certified_massic_energy_J_per_g(rm, o2_pressure_MPa=25 * 0.101325,
    ...       sample_g_per_L=2.924, water_g_per_L=2.924, temperature_K=298.15), 2)
    26431.21
    """
    if not material.has_condition_factor:
        return material.certified_J_per_g
    f = jessup_factor(
        o2_pressure_MPa, sample_g_per_L, water_g_per_L, temperature_K, material=material
    )
    return material.certified_J_per_g * f

"""Air-buoyancy reduction of weighings to mass in vacuum.

A body of density ρ_s balanced in air of density ρ_a against weights of density ρ_w has the
mass ``m_vac = m_air (1 − ρ_a/ρ_w) / (1 − ρ_a/ρ_s)`` (Archimedes; to first order
``m_air [1 + ρ_a (1/ρ_s − 1/ρ_w)]``, the form printed on benzoic-acid certificates). Densities
are data (``bomb_corrections.toml``): air 0.0012, brass weights 8.4, stainless steel 8.0 g/cm³.
"""

from __future__ import annotations

from calwork.core.errors import RunError, check_choice
from calwork.data import load_data

__all__ = ["buoyancy_factor", "mass_in_vacuum_g", "weights_density_g_per_cm3"]


def weights_density_g_per_cm3(weights: str | None = None) -> float:
    """Density of the balance weights, g/cm³ (``'brass'`` or ``'steel'``; default brass)."""
    table = load_data("bomb_corrections.toml")["buoyancy"]
    name = weights or table["weights"]
    check_choice("weights", name, table["weights_density_g_per_cm3"])
    return float(table["weights_density_g_per_cm3"][name])


def buoyancy_factor(
    sample_density_g_per_cm3: float,
    *,
    air_density_g_per_cm3: float | None = None,
    weights: str | None = None,
) -> float:
    """Mass in vacuum per unit mass weighed in air, ``(1 − ρ_a/ρ_w)/(1 − ρ_a/ρ_s)``.

    Parameters
    ----------
    sample_density_g_per_cm3
        Density of the body weighed, g/cm³.
    air_density_g_per_cm3
        Density of the air, g/cm³ (default 0.0012 from the data file).
    weights
        ``'brass'`` (8.4 g/cm³, default) or ``'steel'`` (8.0 g/cm³).

    Examples
    --------
    Benzoic acid (1.320 g/cm³) against brass: 26 434 J/g in vacuum is 26 454 J/g per gram
    weighed in air (benzoic-acid certificates).

    >>> round(26434 * buoyancy_factor(1.320))
    26454
    """
    if not sample_density_g_per_cm3 > 0:
        raise RunError(
            "density must be positive", column="sample_density_g_per_cm3",
            found=sample_density_g_per_cm3, expected="a density in g/cm³ > 0",
        )
    rho_a = (
        load_data("bomb_corrections.toml")["buoyancy"]["air_density_g_per_cm3"]
        if air_density_g_per_cm3 is None else air_density_g_per_cm3
    )
    rho_w = weights_density_g_per_cm3(weights)
    return (1.0 - rho_a / rho_w) / (1.0 - rho_a / sample_density_g_per_cm3)


def mass_in_vacuum_g(
    mass_in_air_g: float, sample_density_g_per_cm3: float, *, weights: str | None = None
) -> float:
    """Mass in vacuum, g, of a body weighed in air (see :func:`buoyancy_factor`)."""
    return mass_in_air_g * buoyancy_factor(sample_density_g_per_cm3, weights=weights)

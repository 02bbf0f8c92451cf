"""Ancillary corrections of a bomb run: ignition, fuse, cotton, auxiliary, acids, soot.

Each function returns the energy in J that the process *released into the calorimeter*
(positive; a negative value means heat that the sample's combustion did not deliver, as for
unburnt carbon). Constants are data in ``bomb_corrections.toml`` (sources there).

Safety: see :data:`calwork.core.safety.SAFETY_NOTE`.
"""

from __future__ import annotations

import numpy as np

from calwork.core.errors import RunError, check_choice
from calwork.data import load_data

__all__ = [
    "FUSE_MATERIALS",
    "SULFUR_CONVENTIONS",
    "cotton_energy_J",
    "fuse_energy_J",
    "nitric_acid_energy_J",
    "nitric_acid_mol",
    "soot_energy_J",
    "sulfuric_acid_dilution_kJ_per_mol",
    "sulfuric_acid_energy_J",
]

#: Fuse materials with constants in the data file.
FUSE_MATERIALS = ("cotton", "iron", "nickel-chromium", "platinum")
#: Final state of sulfur: ``'fuel'`` = SO2(g) (ISO/ASTM fuel practice),
#: ``'thermochemical'`` = H2SO4·115H2O(l) (rotating-bomb thermochemistry).
SULFUR_CONVENTIONS = ("fuel", "thermochemical")

_FUSE_ALIASES = {
    "nickel-chromium": "nickel-chromium", "nichrome": "nickel-chromium",
    "ni-cr": "nickel-chromium", "nicr": "nickel-chromium", "chromel": "nickel-chromium",
    "chromel c": "nickel-chromium", "nickel chromium": "nickel-chromium",
    "iron": "iron", "fe": "iron", "platinum": "platinum", "pt": "platinum",
    "cotton": "cotton",
}


def _data() -> dict:
    return load_data("bomb_corrections.toml")


def _nonneg(value: float | None, column: str) -> float:
    if value is None:
        return 0.0
    v = float(value)
    if not np.isfinite(v) or v < 0:
        raise RunError("must be a number ≥ 0", column=column, found=value,
                       expected="a non-negative number")
    return v


def fuse_material(name: str | None) -> str:
    """Canonical fuse-material name (``None`` gives the data file's default)."""
    if name is None or not str(name).strip():
        return _data()["fuse"]["J_per_cm"]["default_material"]
    key = " ".join(str(name).strip().lower().replace("_", " ").split())
    key = _FUSE_ALIASES.get(key, _FUSE_ALIASES.get(key.replace(" ", "-"), key))
    return check_choice("fuse_material", key, FUSE_MATERIALS)


def fuse_energy_J(
    *,
    fuse_J: float | None = None,
    fuse_burnt_cm: float | None = None,
    fuse_J_per_cm: float | None = None,
    fuse_mass_g: float | None = None,
    material: str | None = None,
) -> tuple[float, str]:
    """Energy of the fuse wire burnt, J, and a description of the constant used.

    Precedence: the energy itself (``fuse_J``), then the burnt length × energy per length
    (``fuse_J_per_cm``, else the material's per-length constant), then the burnt mass × the
    material's massic energy. Platinum is not consumed (0 J).

    Examples
    --------
    >>> fuse_energy_J(fuse_burnt_cm=5.0, fuse_J_per_cm=9.6)[0]
    48.0
    """
    if fuse_J is not None:
        return _nonneg(fuse_J, "fuse_J"), "fuse_J from the run sheet"
    mat = fuse_material(material)
    if fuse_burnt_cm is not None:
        length = _nonneg(fuse_burnt_cm, "fuse_burnt_cm")
        if fuse_J_per_cm is not None:
            per = _nonneg(fuse_J_per_cm, "fuse_J_per_cm")
            return length * per, f"{per} J/cm (run sheet) × {length} cm"
        if mat == "cotton":
            raise RunError("a cotton fuse is given by mass (fuse_mass_g), not length",
                           column="fuse_burnt_cm", found=fuse_burnt_cm)
        per = float(_data()["fuse"]["J_per_cm"][mat])
        return length * per, f"{mat} wire {per} J/cm (bomb_corrections.toml) × {length} cm"
    if fuse_mass_g is not None:
        mass = _nonneg(fuse_mass_g, "fuse_mass_g")
        if mat == "cotton":
            e, desc = cotton_energy_J(mass)
            return e, desc
        per = float(_data()["fuse"]["J_per_g"][mat])
        return mass * per, f"{mat} {per} J/g (bomb_corrections.toml) × {mass} g"
    return 0.0, "no fuse data"


def cotton_energy_J(cotton_g: float | None, massic_energy_J_per_g: float | None = None
                    ) -> tuple[float, str]:
    """Energy of the cotton thread burnt, J (default 16 240 J/g; thermochemical practice).

    Examples
    --------
    >>> round(cotton_energy_J(0.002)[0], 6)
    32.48
    """
    mass = _nonneg(cotton_g, "cotton_g")
    per = abs(float(massic_energy_J_per_g)) if massic_energy_J_per_g is not None \
        else float(_data()["cotton"]["J_per_g"])
    return mass * per, f"cotton {per} J/g × {mass} g"


def nitric_acid_mol(acid_titre_mL: float | None, acid_titrant_mol_per_L: float | None,
                    *, sulfuric_acid_mol: float = 0.0) -> float:
    """Amount of HNO3 from the titre of the bomb washings, mol.

    The titre counts the total acid (HNO3 and, for sulfur samples, H2SO4 with two protons);
    ``n(HNO3) = V c − 2 n(H2SO4)``.

    Raises
    ------
    RunError
        A titre without titrant concentration, negative numbers, or a titre smaller than the
        sulfuric acid needs.
    """
    if acid_titre_mL is None:
        return 0.0
    titre = _nonneg(acid_titre_mL, "acid_titre_mL")
    if acid_titrant_mol_per_L is None:
        raise RunError("an acid titre needs the titrant concentration",
                       column="acid_titrant_mol_per_L", found=None,
                       expected="the titrant concentration in mol/L")
    conc = _nonneg(acid_titrant_mol_per_L, "acid_titrant_mol_per_L")
    n = titre * 1e-3 * conc - 2.0 * sulfuric_acid_mol
    if n < -1e-12:
        raise RunError(
            "the acid titre is smaller than the sulfuric acid from the sample's sulfur needs "
            "(the titre must count the total acid)", column="acid_titre_mL", found=titre,
            expected=f"at least {2e3 * sulfuric_acid_mol / conc if conc else 0:.4g} mL",
        )
    return max(n, 0.0)


def nitric_acid_energy_J(n_hno3_mol: float) -> tuple[float, str]:
    """Heat released by forming ``n`` mol HNO3(aq) from N2, O2 and H2O(l), J.

    Examples
    --------
    1 mL of 0.0866 mol/L titrant with ΔfU = −59.7 kJ/mol: ≈ 5.17 J (docs/methods.md §3.4).

    >>> round(nitric_acid_energy_J(1e-3 * 0.0866)[0], 2)
    5.17
    """
    dfu = float(_data()["nitric_acid"]["delta_f_U_kJ_per_mol"])
    return -n_hno3_mol * dfu * 1e3, f"ΔfU(HNO3, aq) = {dfu} kJ/mol × {n_hno3_mol:.6g} mol"


def sulfuric_acid_dilution_kJ_per_mol(water_mol_per_mol: float, to_mol_per_mol: float = 115.0
                                      ) -> float:
    """ΔH of diluting H2SO4 from ``n1`` to ``n2`` mol H2O per mol, kJ/mol (table, interpolated
    linearly in log n; clipped to the table's range)."""
    t = _data()["sulfuric_acid"]
    n = np.log(np.asarray(t["solution_water_mol_per_mol"], dtype=float))
    h = np.asarray(t["solution_enthalpy_kJ_per_mol"], dtype=float)

    def at(x: float) -> float:
        return float(np.interp(np.log(max(x, 1e-9)), n, h))

    return at(to_mol_per_mol) - at(water_mol_per_mol)


def sulfuric_acid_energy_J(sulfur_mol: float, convention: str, *,
                           water_mol_per_mol: float | None = None) -> tuple[float, str]:
    """Energy released by the sulfuric-acid side of a sulfur sample's combustion, J.

    * ``'fuel'``: the bomb forms H2SO4(aq) but the calorific value refers sulfur to SO2(g),
      so the heat of SO2(g) + ½O2 + H2O(l) → H2SO4(aq) is a correction
      (≈ 301.5 kJ/mol at 115 H2O, adjusted to the bomb solution's concentration).
    * ``'thermochemical'``: the reference state is H2SO4·115H2O(l); the correction is the
      energy of bringing the bomb solution (``water_mol_per_mol`` H2O per H2SO4) to that
      state (ΔU ≈ ΔH for the condensed dilution).
    """
    check_choice("sulfur_convention", convention, SULFUR_CONVENTIONS)
    if sulfur_mol <= 0:
        return 0.0, "no sulfur"
    t = _data()["sulfuric_acid"]
    ref = float(t["reference_water_mol_per_mol"])
    r = ref if water_mol_per_mol is None else water_mol_per_mol
    # ΔH(bomb solution -> 115 H2O) per mol H2SO4; the bomb solution differs from 115 H2O by
    # ΔH(n -> 115) = solH(115) − solH(n)
    dil = sulfuric_acid_dilution_kJ_per_mol(r, ref)
    if convention == "fuel":
        dru = float(t["delta_r_U_from_SO2_kJ_per_mol"])  # to H2SO4 in 115 H2O
        # SO2 -> H2SO4(in r H2O) = (SO2 -> H2SO4 in 115) − (r -> 115 dilution)
        du = dru - dil
        return -sulfur_mol * du * 1e3, (
            f"SO2(g) → H2SO4(aq, {r:.0f} H2O): {du:.2f} kJ/mol × {sulfur_mol:.6g} mol"
        )
    # thermochemical: the bomb energy includes forming H2SO4(in r H2O); the standard reaction
    # forms H2SO4·115H2O. The heat released by the dilution r -> 115 was not released in the
    # bomb, so it counts with the opposite sign.
    return sulfur_mol * dil * 1e3, (
        f"H2SO4(aq, {r:.0f} H2O) → H2SO4·115H2O: ΔH = {dil:.3f} kJ/mol × {sulfur_mol:.6g} mol"
    )


def soot_energy_J(soot_g: float | None) -> tuple[float, str]:
    """Energy *not* released because ``soot_g`` of carbon stayed unburnt, J (negative)."""
    mass = _nonneg(soot_g, "soot_g")
    per = float(_data()["soot"]["J_per_g"])
    return -mass * per, f"graphite {per} J/g (CODATA CO2) × {mass} g unburnt"


"""Fuel outputs: gross and net calorific values, moisture/ash bases, units.

Calorific values are *positive* (heat released per gram), unlike the thermochemical Δu. The
gross calorific value at constant volume is the bomb result with water liquid, sulfur as
SO2(g) and nitrogen as N2(g) (ISO 1928; ASTM D240 §3.1.1): ``q_V,gr = −Δu_B`` under the fuel
sulfur convention. Net values follow ISO 1928 (constants in ``fuel_relations.toml``, recalled;
re-derived from CODATA water data in the tests):

    q_p,net = [q_V,gr,d − 212.2 w(H)_d − 0.8 (w(O)_d + w(N)_d)] (1 − 0.01 M) − 24.43 M
    q_V,net = [q_V,gr,d − 206.0 w(H)_d] (1 − 0.01 M) − 23.05 M

(w, M in %; w(H) without the hydrogen of the moisture), and ASTM D240 for liquid fuels
``Q_n = Q_g − 0.2122 H`` (MJ/kg). Bases (ASTM D3180, ISO 17247): as analysed (ad), dry (d),
dry ash-free (daf), as received (ar).
"""

from __future__ import annotations

from calwork.core.errors import RunError, check_choice
from calwork.core.units import energy_per_mass_from_J_per_g
from calwork.data import load_data

__all__ = [
    "BASES",
    "UNITS",
    "convert_basis",
    "convert_calorific_value",
    "fuel_outputs",
    "gross_calorific_value_J_per_g",
    "net_calorific_value_J_per_g",
    "net_from_gross_astm_d240_J_per_g",
]

#: Reporting bases.
BASES = ("as-analysed", "dry", "dry-ash-free", "as-received")
#: Units of the fuel outputs (exact factors from :mod:`calwork.core.units`).
UNITS = ("J/g", "MJ/kg", "cal_IT/g", "cal_th/g", "Btu_IT/lb")


def _fraction(value: float | None, name: str) -> float:
    if value is None:
        return 0.0
    v = float(value)
    if not 0.0 <= v < 1.0:
        raise RunError("must be a mass fraction between 0 and 1", column=name, found=value,
                       expected="a number in [0, 1)")
    return v


def gross_calorific_value_J_per_g(massic_energy_J_per_g: float) -> float:
    """Gross calorific value at constant volume, J/g (positive) from the bomb Δu (negative).

    Examples
    --------
    >>> gross_calorific_value_J_per_g(-26434.0)
    26434.0
    """
    return -float(massic_energy_J_per_g)


def convert_basis(value: float, *, moisture_ad: float = 0.0, ash_ad: float = 0.0,
                  to: str = "dry", moisture_ar: float | None = None) -> float:
    """Convert a gross value (or any quantity proportional to the dry matter) from the
    as-analysed basis; mass fractions (0–1).

    ``dry = ad/(1 − M_ad)``, ``daf = ad/(1 − M_ad − A_ad)``,
    ``ar = ad (1 − M_ar)/(1 − M_ad)``. Valid for gross values (moisture adds nothing);
    net values must be recomputed at the target moisture (:func:`net_calorific_value_J_per_g`).

    Examples
    --------
    >>> round(convert_basis(20000.0, moisture_ad=0.1, to="dry"), 6)
    22222.222222
    """
    check_choice("basis", to, BASES)
    M = _fraction(moisture_ad, "moisture_mass_fraction")
    A = _fraction(ash_ad, "ash_mass_fraction")
    if to == "as-analysed":
        return value
    if to == "dry":
        return value / (1.0 - M)
    if to == "dry-ash-free":
        if M + A >= 1.0:
            raise RunError("moisture plus ash must be below 1", column="ash_mass_fraction",
                           found=A)
        return value / (1.0 - M - A)
    if moisture_ar is None:
        raise RunError("the as-received basis needs the moisture as received",
                       column="moisture_mass_fraction")
    return value * (1.0 - _fraction(moisture_ar, "moisture_ar")) / (1.0 - M)


def net_calorific_value_J_per_g(
    gross_J_per_g: float,
    *,
    hydrogen: float,
    oxygen: float = 0.0,
    nitrogen: float = 0.0,
    moisture_ad: float = 0.0,
    moisture_target: float | None = None,
    at: str = "constant-pressure",
) -> float:
    """Net calorific value (ISO 1928), J/g, at the moisture ``moisture_target``.

    Parameters
    ----------
    gross_J_per_g
        Gross calorific value at constant volume, as analysed, J/g.
    hydrogen, oxygen, nitrogen
        Mass fractions (0–1) in the analysis sample, hydrogen without that of the moisture.
    moisture_ad
        Moisture mass fraction of the analysis sample.
    moisture_target
        Moisture for which the net value is wanted (default: as analysed).
    at
        ``'constant-pressure'`` or ``'constant-volume'``.

    Examples
    --------
    A dry fuel with 10 % H and no O, N: 45 000 − 2122 = 42 878 J/g at constant pressure.

    >>> round(net_calorific_value_J_per_g(45000.0, hydrogen=0.10), 1)
    42878.0
    """
    check_choice("at", at, ["constant-pressure", "constant-volume"])
    c = load_data("fuel_relations.toml")["iso1928"]
    M_ad = _fraction(moisture_ad, "moisture_mass_fraction")
    M_t = M_ad if moisture_target is None else _fraction(moisture_target, "moisture_target")
    dry = 1.0 / (1.0 - M_ad)
    q_d = gross_J_per_g * dry
    H = 100.0 * _fraction(hydrogen, "hydrogen_mass_fraction") * dry
    Ox = 100.0 * _fraction(oxygen, "oxygen_mass_fraction") * dry
    N = 100.0 * _fraction(nitrogen, "nitrogen_mass_fraction") * dry
    Mp = 100.0 * M_t
    if at == "constant-pressure":
        inner = q_d - c["hydrogen_p_J_per_g_per_percent"] * H \
            - c["oxygen_nitrogen_p_J_per_g_per_percent"] * (Ox + N)
        return inner * (1.0 - M_t) - c["moisture_p_J_per_g_per_percent"] * Mp
    inner = q_d - c["hydrogen_v_J_per_g_per_percent"] * H
    return inner * (1.0 - M_t) - c["moisture_v_J_per_g_per_percent"] * Mp


def net_from_gross_astm_d240_J_per_g(gross_J_per_g: float, hydrogen: float) -> float:
    """Net heat of combustion at constant pressure of a liquid fuel (ASTM D240), J/g.

    ``Q_n = Q_g − 0.2122 H`` MJ/kg with H in % (i.e. 212.2 J/g per % H).
    """
    k = load_data("fuel_relations.toml")["astm_d240"]["hydrogen_MJ_per_kg_per_percent"]
    return gross_J_per_g - 1000.0 * k * 100.0 * _fraction(hydrogen, "hydrogen_mass_fraction")


def convert_calorific_value(value_J_per_g: float, unit: str) -> float:
    """A calorific value in ``unit`` (one of :data:`UNITS`), exact factors.

    Examples
    --------
    >>> convert_calorific_value(2.326, "Btu_IT/lb")
    1.0
    """
    check_choice("unit", unit, UNITS)
    return energy_per_mass_from_J_per_g(value_J_per_g, unit)


def fuel_outputs(
    massic_energy_J_per_g: float,
    *,
    hydrogen: float | None = None,
    oxygen: float | None = None,
    nitrogen: float | None = None,
    moisture: float | None = None,
    ash: float | None = None,
) -> dict[str, float]:
    """The fuel outputs of a sample series (J/g unless the key says otherwise).

    Gross at constant volume on the as-analysed, dry and (with ash) dry ash-free bases; with
    the hydrogen content the net values at constant pressure and at constant volume on the
    as-analysed and dry bases; the gross and net values also in MJ/kg, cal_IT/g, cal_th/g
    and Btu_IT/lb.
    """
    gross = gross_calorific_value_J_per_g(massic_energy_J_per_g)
    M = moisture or 0.0
    out = {"gross_v_as_analysed_J_per_g": gross}
    out["gross_v_dry_J_per_g"] = convert_basis(gross, moisture_ad=M, to="dry")
    if ash is not None:
        out["gross_v_dry_ash_free_J_per_g"] = convert_basis(
            gross, moisture_ad=M, ash_ad=ash, to="dry-ash-free"
        )
    if hydrogen is not None:
        kw = {"hydrogen": hydrogen, "oxygen": oxygen or 0.0, "nitrogen": nitrogen or 0.0,
              "moisture_ad": M}
        out["net_p_as_analysed_J_per_g"] = net_calorific_value_J_per_g(gross, **kw)
        out["net_v_as_analysed_J_per_g"] = net_calorific_value_J_per_g(
            gross, at="constant-volume", **kw)
        out["net_p_dry_J_per_g"] = net_calorific_value_J_per_g(gross, moisture_target=0.0,
                                                               **kw)
        out["net_v_dry_J_per_g"] = net_calorific_value_J_per_g(
            gross, moisture_target=0.0, at="constant-volume", **kw)
    tags = {"MJ/kg": "MJ_per_kg", "cal_IT/g": "cal_IT_per_g", "cal_th/g": "cal_th_per_g",
            "Btu_IT/lb": "Btu_IT_per_lb"}
    for key in ("gross_v_as_analysed_J_per_g", "net_p_as_analysed_J_per_g"):
        if key in out:
            for unit, tag in tags.items():
                out[key.replace("J_per_g", tag)] = convert_calorific_value(out[key], unit)
    return out

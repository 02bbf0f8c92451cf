"""Electrical calibration of a solution calorimeter (docs/methods.md §2.3).

The heater energy is ``Q_el = ∫ V_h I dt`` over the heater interval (2.1), with the current
either logged directly (channel ``heater_A``) or from the voltage across a series standard
resistor, ``I = V_s / R_s`` (channel ``standard_resistor_V`` and sheet column
``standard_resistor_ohm``). With a stable supply ``Q_el = P̄ (t_off − t_on)``; without channels
the sheet's ``heater_power_W``, ``heater_on_s`` and ``heater_off_s`` give it directly.

Lead convention (docs/methods.md §2.3; a configuration item): by default the potential leads are
attached at the heater, so ``V_h I`` is the heater's own power and no lead correction is made.
With ``lead_resistance_ohm`` R_L (the current-lead segment between the heater and the point
where the potential is measured) the power ``I² R_L`` in that segment is assigned to the
calorimeter by ``lead_fraction`` (0.5 = half, the usual convention for the segment spanning
the calorimeter–jacket gap):

* ``potential_leads='heater'``: P = V_h I + f I² R_L (the voltage excludes the leads);
* ``potential_leads='jacket'``: P = V I − (1 − f) I² R_L (the voltage includes the leads).

The energy equivalent is ``ε = Q_el / ΔT_c,el`` with the corrected rise of the heater event
from the same temperature-rise engine as the reaction.

Safety: see :data:`calwork.core.safety.SAFETY_NOTE`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np

from calwork.core.errors import RunError, UncertaintyError, check_choice
from calwork.core.uncertainty import root_sum_square
from calwork.data import load_data

__all__ = [
    "POTENTIAL_LEADS",
    "ElectricalEnergy",
    "HeaterEdges",
    "default_u_relative_power",
    "electrical_energy_J",
    "energy_equivalent_J_per_K",
    "find_heater_intervals",
    "heater_power_W",
]

#: Where the potential leads are attached.
POTENTIAL_LEADS = ("heater", "jacket")


def heater_power_W(
    heater_V,
    heater_A=None,
    *,
    standard_resistor_V=None,
    standard_resistor_ohm: float | None = None,
    lead_resistance_ohm: float = 0.0,
    lead_fraction: float = 0.5,
    potential_leads: str = "heater",
) -> np.ndarray:
    """Heater power delivered to the calorimeter at each reading, W.

    Parameters
    ----------
    heater_V
        Voltage across the heater (at the potential leads), V.
    heater_A
        Heater current, A; or give ``standard_resistor_V`` and ``standard_resistor_ohm``.
    standard_resistor_V
        Voltage across the series standard resistor, V.
    standard_resistor_ohm
        Resistance of the standard resistor R_s, Ω (I = V_s / R_s).
    lead_resistance_ohm
        Resistance of the current-lead segment R_L outside the potential leads (or inside
        them, see ``potential_leads``), Ω; 0 = no lead correction.
    lead_fraction
        Fraction f of the lead power counted as heat delivered to the calorimeter.
    potential_leads
        ``'heater'`` (default) or ``'jacket'``: where the voltage is measured.

    Examples
    --------
    >>> heater_power_W([2.0], standard_resistor_V=[0.5], standard_resistor_ohm=10.0).tolist()
    [0.1]
    """
    check_choice("potential_leads", potential_leads, POTENTIAL_LEADS)
    V = np.asarray(heater_V, dtype=float)
    if heater_A is not None:
        current = np.asarray(heater_A, dtype=float)
    elif standard_resistor_V is not None:
        if standard_resistor_ohm is None or not standard_resistor_ohm > 0:
            raise RunError("the standard-resistor voltage needs the resistance of the "
                           "standard resistor", column="standard_resistor_ohm",
                           found=standard_resistor_ohm, expected="a resistance > 0 ohm")
        current = np.asarray(standard_resistor_V, dtype=float) / float(standard_resistor_ohm)
    else:
        raise RunError("the heater current is missing", column="heater_A",
                       expected="a heater_A channel, or standard_resistor_V with "
                       "standard_resistor_ohm")
    if current.shape != V.shape:
        raise RunError("heater voltage and current differ in length", column="heater_A",
                       found=(V.shape, current.shape))
    if not 0.0 <= lead_fraction <= 1.0:
        raise RunError("lead fraction must be between 0 and 1", column="lead_fraction",
                       found=lead_fraction, expected="0 <= f <= 1")
    if lead_resistance_ohm < 0:
        raise RunError("lead resistance must not be negative", column="lead_resistance_ohm",
                       found=lead_resistance_ohm, expected="R_L >= 0 ohm")
    power = V * current
    if lead_resistance_ohm:
        lead = current * current * lead_resistance_ohm
        power = power + lead_fraction * lead if potential_leads == "heater" else (
            power - (1.0 - lead_fraction) * lead)
    return power


@dataclass(frozen=True, kw_only=True)
class HeaterEdges:
    """One heater interval found in a power channel.

    ``on_s``/``off_s`` are midway between the last reading with the heater off and the first
    with it on (and the reverse); ``u_on_s``/``u_off_s`` are the standard uncertainties of a
    rectangular distribution one sampling interval wide. ``first``/``last`` index the readings
    with the heater on.
    """

    on_s: float
    off_s: float
    u_on_s: float
    u_off_s: float
    first: int
    last: int


def find_heater_intervals(
    time_s, power_W, *, threshold_fraction: float = 0.5, min_points: int = 2
) -> list[HeaterEdges]:
    """Heater intervals in a power channel (readings above ``threshold_fraction`` × maximum).

    Parameters
    ----------
    time_s
        Reading times, s.
    power_W
        Heater power at each reading, W (see :func:`heater_power_W`).
    threshold_fraction
        Readings with power above this fraction of the largest power count as "on".
    min_points
        Shorter runs of "on" readings are ignored (spikes).

    Examples
    --------
    >>> t = [0, 2, 4, 6, 8, 10]
    >>> [(e.on_s, e.off_s) for e in find_heater_intervals(t, [0, 0, 1, 1, 0, 0])]
    [(3.0, 7.0)]
    """
    t = np.asarray(time_s, dtype=float)
    p = np.asarray(power_W, dtype=float)
    if p.size == 0 or not np.any(np.isfinite(p)) or np.nanmax(p) <= 0:
        return []
    on = p > threshold_fraction * np.nanmax(p)
    edges = np.flatnonzero(np.diff(np.concatenate([[False], on, [False]]).astype(np.int8)))
    out = []
    for first, stop in zip(edges[::2], edges[1::2], strict=True):
        last = stop - 1
        if last - first + 1 < min_points:
            continue
        dt_on = t[first] - t[first - 1] if first > 0 else t[1] - t[0]
        dt_off = t[last + 1] - t[last] if last + 1 < t.size else t[-1] - t[-2]
        on_s = t[first] - dt_on / 2.0
        off_s = t[last] + dt_off / 2.0
        out.append(HeaterEdges(on_s=float(on_s), off_s=float(off_s),
                               u_on_s=float(dt_on / math.sqrt(12.0)),
                               u_off_s=float(dt_off / math.sqrt(12.0)),
                               first=int(first), last=int(last)))
    return out


@dataclass(frozen=True, kw_only=True)
class ElectricalEnergy:
    """Electrical energy of one heater interval, with its uncertainty budget (J)."""

    energy_J: float
    u_energy_J: float
    on_s: float
    off_s: float
    mean_power_W: float
    source: str
    n_points: int
    budget: dict[str, float]

    def to_dict(self) -> dict[str, object]:
        return {f.name: getattr(self, f.name) for f in fields(self)}

    def report(self) -> str:
        return (f"heater {self.on_s:.2f}–{self.off_s:.2f} s, P̄ = {self.mean_power_W:.6g} W, "
                f"Q = {self.energy_J:.5f} ± {self.u_energy_J:.5f} J ({self.source})")


def default_u_relative_power() -> float:
    """The bundled relative standard uncertainty of the heater power measurement."""
    return float(load_data("solution_properties.toml")["defaults"]["u_relative_electrical_power"])


def electrical_energy_J(
    time_s,
    power_W,
    on_s: float,
    off_s: float,
    *,
    u_on_s: float = 0.0,
    u_off_s: float = 0.0,
    u_relative_power: float | None = None,
    source: str = "channels",
) -> ElectricalEnergy:
    """Energy ``∫ P dt`` of a heater switched on at ``on_s`` and off at ``off_s``.

    The power readings strictly inside the interval are integrated by the trapezoidal rule
    and the first and last readings are held out to the switching times, which is exact for a
    constant power and follows a slowly changing heater resistance.

    Parameters
    ----------
    time_s
        Reading times, s.
    power_W
        Power at each reading, W.
    on_s, off_s
        Switching times, s.
    u_on_s, u_off_s
        Standard uncertainties of the switching times, s.
    u_relative_power
        Relative standard uncertainty of the power measurement (Type B); default the bundled
        ``u_relative_electrical_power``.
    source
        Label of where the interval came from (``'channels'``, ``'sheet'``).

    Returns
    -------
    ElectricalEnergy
        Energy and its budget: ``timing``, ``power_noise``, ``power_calibration`` (J).

    Examples
    --------
    >>> t = [0.0, 2.0, 4.0, 6.0, 8.0, 10.0]
    >>> round(electrical_energy_J(t, [0, 0.1, 0.1, 0.1, 0.1, 0], 1.0, 9.0).energy_J, 9)
    0.8
    """
    t = np.asarray(time_s, dtype=float)
    p = np.asarray(power_W, dtype=float)
    if not off_s > on_s:
        raise RunError("the heater must be switched off after it is switched on",
                       column="heater_off_s", found=off_s, expected=f"a time after {on_s!r} s")
    inside = (t > on_s) & (t < off_s)
    n = int(np.count_nonzero(inside))
    if n == 0:
        raise RunError("no power readings inside the heater interval", column="heater_V",
                       found=(on_s, off_s), expected="readings between heater on and off")
    ti, pi = t[inside], p[inside]
    interior = float(np.sum(0.5 * (pi[1:] + pi[:-1]) * np.diff(ti))) if n > 1 else 0.0
    energy = interior + pi[0] * (ti[0] - on_s) + pi[-1] * (off_s - ti[-1])
    duration = off_s - on_s
    mean_power = energy / duration
    noise = float(np.std(pi, ddof=1)) / math.sqrt(n) * duration if n > 1 else 0.0
    rel = default_u_relative_power() if u_relative_power is None else float(u_relative_power)
    budget = {
        "timing": abs(mean_power) * math.hypot(u_on_s, u_off_s),
        "power_noise": noise,
        "power_calibration": abs(energy) * rel,
    }
    u = root_sum_square(budget, name="the heater energy")
    if not math.isfinite(u) or u <= 0:
        raise UncertaintyError("the uncertainty of the heater energy could not be propagated",
                               column="heater_V", found=u)
    return ElectricalEnergy(energy_J=float(energy), u_energy_J=u, on_s=float(on_s),
                            off_s=float(off_s), mean_power_W=float(mean_power), source=source,
                            n_points=n, budget=budget)


def energy_equivalent_J_per_K(
    heater_energy_J: float, u_heater_energy_J: float, corrected_rise_K: float,
    u_corrected_rise_K: float,
) -> tuple[float, float]:
    """``ε = Q_el / ΔT_c,el`` and its standard uncertainty, J/K.

    Examples
    --------
    >>> eps, u = energy_equivalent_J_per_K(15.0, 0.0015, 0.05, 5e-6)
    >>> round(eps, 6), round(u, 4)
    (300.0, 0.0424)
    """
    if not corrected_rise_K > 0:
        raise RunError("the heater's corrected temperature rise must be positive",
                       column="heater_V", found=corrected_rise_K, expected="ΔT_c > 0 K")
    eps = heater_energy_J / corrected_rise_K
    u = abs(eps) * math.hypot(u_heater_energy_J / heater_energy_J,
                              u_corrected_rise_K / corrected_rise_K)
    if not math.isfinite(u) or u <= 0:
        raise UncertaintyError("the uncertainty of the energy equivalent could not be "
                               "propagated", column="heater_V", found=u)
    return float(eps), float(u)

"""Resistance thermometers: Callendar–Van Dusen (platinum) and Steinhart–Hart (thermistors).

Callendar–Van Dusen, IEC 60751:2008, for t in °C::

    R(t) = R0 [1 + A t + B t²]                      0 °C ≤ t ≤ 850 °C
    R(t) = R0 [1 + A t + B t² + C (t − 100) t³]     −200 °C ≤ t < 0 °C

with A = 3.9083e-3 /°C, B = −5.775e-7 /°C², C = −4.183e-12 /°C⁴ (``calwork/data/sensors.toml``).
Steinhart & Hart (Deep-Sea Research 15, 1968, 497), for T in K and R in Ω::

    1/T = a + b ln R + c (ln R)³

The functions are pure and vectorised; :func:`resolve_sensor` turns the ``sensor`` option of
the importers (``'pt100'``, ``'pt1000'``, ``'steinhart-hart'``) into a :class:`SensorModel`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import ChoiceError, SensorRangeError, UnitError, check_choice
from calwork.data import load_data

__all__ = [
    "CVD_A_PER_C",
    "CVD_B_PER_C2",
    "CVD_C_PER_C4",
    "SENSORS",
    "SensorModel",
    "cvd_resistance_ohm",
    "cvd_temperature_C",
    "resolve_sensor",
    "steinhart_hart_resistance_ohm",
    "steinhart_hart_temperature_K",
]

_DATA = load_data("sensors.toml")
#: IEC 60751:2008 Callendar–Van Dusen coefficients (from ``calwork/data/sensors.toml``).
CVD_A_PER_C: float = float(_DATA["iec_60751"]["A_per_C"])
CVD_B_PER_C2: float = float(_DATA["iec_60751"]["B_per_C2"])
CVD_C_PER_C4: float = float(_DATA["iec_60751"]["C_per_C4"])
_T_MIN_C = float(_DATA["iec_60751"]["t_min_C"])
_T_MAX_C = float(_DATA["iec_60751"]["t_max_C"])

#: Sensor names accepted by the importers.
SENSORS = ("pt100", "pt1000", "steinhart-hart")


def cvd_resistance_ohm(
    t_C, R0_ohm: float = 100.0, A: float = CVD_A_PER_C, B: float = CVD_B_PER_C2,
    C: float = CVD_C_PER_C4,
):
    """Platinum thermometer resistance from temperature (Callendar–Van Dusen).

    Parameters
    ----------
    t_C
        Temperature, °C (scalar or array).
    R0_ohm
        Resistance at 0 °C, Ω.
    A, B, C
        Coefficients in 1/°C, 1/°C², 1/°C⁴; ``C`` applies below 0 °C only.

    Returns
    -------
    Resistance, Ω (float for a scalar input).

    Examples
    --------
    >>> round(cvd_resistance_ohm(100.0), 4)
    138.5055
    """
    t = np.asarray(t_C, dtype=float)
    r = 1.0 + A * t + B * t * t + np.where(t < 0.0, C * (t - 100.0) * t**3, 0.0)
    out = R0_ohm * r
    return float(out) if out.ndim == 0 else out



def _positive_resistance(R_ohm) -> np.ndarray:
    """``R_ohm`` as an array, refused unless every value is a positive finite resistance."""
    R = np.asarray(R_ohm, dtype=float)
    bad = ~np.isfinite(R) | (R <= 0.0)
    if np.any(bad):
        raise SensorRangeError(
            "resistance must be a positive finite number",
            found=float(R.flat[int(np.flatnonzero(bad.ravel())[0])]), expected="R > 0 ohm",
        )
    return R

def cvd_temperature_C(
    R_ohm, R0_ohm: float = 100.0, A: float = CVD_A_PER_C, B: float = CVD_B_PER_C2,
    C: float = CVD_C_PER_C4, *, tol_C: float = 1e-10, max_iter: int = 50,
):
    """Temperature from platinum thermometer resistance: the exact inverse of
    :func:`cvd_resistance_ohm`.

    For R ≥ R0 the quadratic is solved in closed form; below R0 Newton's method on the full
    quartic starts from the quadratic root and converges to ``tol_C``.

    Parameters
    ----------
    R_ohm
        Resistance, Ω (scalar or array), positive.
    R0_ohm
        Resistance at 0 °C, Ω.
    A, B, C
        Coefficients in 1/°C, 1/°C², 1/°C⁴.
    tol_C
        Convergence tolerance of the Newton iteration, °C.
    max_iter
        Iteration limit.

    Returns
    -------
    Temperature, °C (float for a scalar input).

    Raises
    ------
    SensorRangeError
        For a non-positive or non-finite resistance, or one with no real solution.

    Examples
    --------
    >>> round(cvd_temperature_C(138.5055), 3)
    100.0
    """
    R = _positive_resistance(R_ohm)
    ratio = R / R0_ohm
    if B == 0.0:
        t = (ratio - 1.0) / A
    else:
        disc = A * A - 4.0 * B * (1.0 - ratio)
        if np.any(disc < 0.0):
            i = int(np.flatnonzero((disc < 0.0).ravel())[0])
            raise SensorRangeError(
                "resistance above the Callendar–Van Dusen maximum (no real temperature)",
                found=float(R.flat[i]),
                expected=f"R below {R0_ohm * (1 - A * A / (4 * B)):.6g} ohm",
            )
        # numerically stable root of B t² + A t + (1 − ratio) = 0 nearest 0 °C
        t = 2.0 * (ratio - 1.0) / (A + np.sqrt(disc))
    t = np.array(t, dtype=float, ndmin=1)
    ratio = np.array(ratio, dtype=float, ndmin=1)
    neg = ratio < 1.0
    if C != 0.0 and np.any(neg):
        tn, target = t[neg], ratio[neg]
        for _ in range(max_iter):
            f = 1.0 + A * tn + B * tn**2 + C * (tn - 100.0) * tn**3 - target
            df = A + 2.0 * B * tn + C * (4.0 * tn**3 - 300.0 * tn**2)
            step = f / df
            tn = tn - step
            if np.all(np.abs(step) < tol_C):
                break
        t[neg] = tn
    return float(t[0]) if R.ndim == 0 else t.reshape(R.shape)


def steinhart_hart_temperature_K(R_ohm, a: float, b: float, c: float):
    """Thermistor temperature from resistance, ``1/T = a + b ln R + c (ln R)³``.

    Parameters
    ----------
    R_ohm
        Resistance, Ω (scalar or array), positive.
    a, b, c
        Steinhart–Hart coefficients, 1/K (``ln R`` with R in Ω).

    Returns
    -------
    Temperature, K (float for a scalar input).

    Examples
    --------
    >>> round(steinhart_hart_temperature_K(10000.0, 1.129148e-3, 2.34125e-4, 8.76741e-8), 4)
    298.1497
    """
    R = _positive_resistance(R_ohm)
    x = np.log(R)
    inv = a + b * x + c * x**3
    if np.any(inv <= 0.0):
        raise SensorRangeError(
            "Steinhart–Hart coefficients give no positive temperature for this resistance",
            found=float(R.flat[int(np.flatnonzero((inv <= 0.0).ravel())[0])]),
        )
    out = 1.0 / inv
    return float(out) if out.ndim == 0 else out


def steinhart_hart_resistance_ohm(T_K, a: float, b: float, c: float):
    """Thermistor resistance from temperature: the exact inverse of
    :func:`steinhart_hart_temperature_K` (Cardano's solution of the cubic in ln R, polished by
    two Newton steps).

    Parameters
    ----------
    T_K
        Temperature, K (scalar or array), positive.
    a, b, c
        Steinhart–Hart coefficients, 1/K.

    Returns
    -------
    Resistance, Ω (float for a scalar input).

    Examples
    --------
    >>> round(steinhart_hart_resistance_ohm(323.15, 1.129148e-3, 2.34125e-4, 8.76741e-8), 1)
    3601.0
    """
    T = np.asarray(T_K, dtype=float)
    if np.any(~np.isfinite(T) | (T <= 0.0)):
        raise SensorRangeError("temperature must be a positive finite number of kelvin",
                               expected="T > 0 K")
    q_num = a - 1.0 / T
    if c == 0.0:
        x = -q_num / b
    else:
        # x³ + p x + q = 0 with p = b/c, q = (a − 1/T)/c
        p = b / c
        q = q_num / c
        disc = q * q / 4.0 + p**3 / 27.0
        if np.any(disc < 0.0):
            raise SensorRangeError("Steinhart–Hart cubic has no unique real root",
                                   expected="coefficients with b/c > 0")
        s = np.sqrt(disc)
        x = np.cbrt(-q / 2.0 + s) + np.cbrt(-q / 2.0 - s)
        for _ in range(2):  # polish: Cardano loses a few digits to cancellation
            x = x - (c * x**3 + b * x + q_num) / (3.0 * c * x * x + b)
    out = np.exp(x)
    return float(out) if np.ndim(out) == 0 else out


@dataclass(frozen=True, kw_only=True)
class SensorModel:
    """A resolved thermometer model: name, coefficients and conversions in SI.

    Attributes
    ----------
    name
        ``'pt100'``, ``'pt1000'`` or ``'steinhart-hart'``.
    coefficients
        ``R0_ohm``, ``A``, ``B``, ``C`` (platinum) or ``a``, ``b``, ``c`` (thermistor).
    """

    name: str
    coefficients: Mapping[str, float]

    @property
    def is_platinum(self) -> bool:
        """True for a Callendar–Van Dusen sensor."""
        return self.name != "steinhart-hart"

    def temperature_K(self, R_ohm):
        """Temperature, K, from resistance, Ω."""
        k = self.coefficients
        if self.is_platinum:
            return cvd_temperature_C(R_ohm, k["R0_ohm"], k["A"], k["B"], k["C"]) + CELSIUS_ZERO_K
        return steinhart_hart_temperature_K(R_ohm, k["a"], k["b"], k["c"])

    def resistance_ohm(self, T_K):
        """Resistance, Ω, from temperature, K."""
        k = self.coefficients
        if self.is_platinum:
            return cvd_resistance_ohm(np.asarray(T_K) - CELSIUS_ZERO_K, k["R0_ohm"], k["A"],
                                      k["B"], k["C"])
        return steinhart_hart_resistance_ohm(T_K, k["a"], k["b"], k["c"])

    def resistance_range_ohm(self) -> tuple[float, float] | None:
        """Resistances of the standard's temperature range (platinum), else ``None``."""
        if not self.is_platinum:
            return None
        lo, hi = self.resistance_ohm(np.array([_T_MIN_C, _T_MAX_C]) + CELSIUS_ZERO_K)
        return float(lo), float(hi)

    def describe(self) -> str:
        """One line naming the model and its coefficients."""
        text = ", ".join(f"{k}={v:.8g}" for k, v in self.coefficients.items())
        law = "Callendar–Van Dusen (IEC 60751)" if self.is_platinum else "Steinhart–Hart"
        return f"{self.name}: {law}, {text}"


def resolve_sensor(sensor: str, coefficients: Mapping[str, float] | None = None) -> SensorModel:
    """The :class:`SensorModel` for a ``sensor`` option and optional coefficients.

    ``'pt100'`` and ``'pt1000'`` take the IEC 60751 coefficients, each of which
    (``R0_ohm``/``R0``, ``A``, ``B``, ``C``) may be overridden; ``'steinhart-hart'`` needs
    ``a``, ``b`` and ``c``.

    Examples
    --------
    >>> resolve_sensor("pt1000").coefficients["R0_ohm"]
    1000.0
    """
    key = str(sensor).strip().lower().replace("_", "-")
    key = {"sh": "steinhart-hart", "steinhart": "steinhart-hart", "thermistor": "steinhart-hart",
           "pt-100": "pt100", "pt-1000": "pt1000"}.get(key, key)
    check_choice("sensor", key, SENSORS)
    given = dict(coefficients or {})
    if "R0" in given and "R0_ohm" not in given:
        given["R0_ohm"] = given.pop("R0")
    if key == "steinhart-hart":
        allowed = {"a", "b", "c"}
        missing = sorted(allowed - set(given))
        if missing:
            raise UnitError(
                "the steinhart-hart sensor needs its coefficients a, b and c",
                found=sorted(given), expected="sensor_coefficients={'a': ..., 'b': ..., 'c': ...}",
            )
        base: dict[str, float] = {}
    else:
        allowed = {"R0_ohm", "A", "B", "C"}
        base = {"R0_ohm": float(_DATA[key]["R0_ohm"]), "A": CVD_A_PER_C, "B": CVD_B_PER_C2,
                "C": CVD_C_PER_C4}
    unknown = sorted(set(given) - allowed)
    if unknown:
        raise ChoiceError(
            f"unknown coefficient(s) for sensor {key!r}", found=unknown,
            expected=f"some of {sorted(allowed)}",
        )
    for name, value in given.items():
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise UnitError(f"sensor coefficient {name!r} is not a number", found=value) from None
        if not np.isfinite(number):
            raise UnitError(f"sensor coefficient {name!r} is not finite", found=value)
        base[name] = number
    if key != "steinhart-hart" and (base["R0_ohm"] <= 0.0 or base["A"] == 0.0):
        raise UnitError("R0 must be positive and A non-zero", found=(base["R0_ohm"], base["A"]),
                        expected="R0 > 0 ohm")
    if key == "steinhart-hart" and base["b"] == 0.0 and base["c"] == 0.0:
        raise UnitError("Steinhart–Hart coefficients b and c cannot both be zero",
                        found=(base["a"], base["b"], base["c"]))
    return SensorModel(name=key, coefficients=base)

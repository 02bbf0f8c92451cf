"""Resistance thermometers: Callendar–Van Dusen (IEC 60751) and Steinhart–Hart."""

from __future__ import annotations

import numpy as np
import pytest

from calwork.core.errors import ChoiceError, SensorRangeError, UnitError
from calwork.data import load_data
from calwork.io.sensors import (
    CVD_A_PER_C,
    CVD_B_PER_C2,
    CVD_C_PER_C4,
    cvd_resistance_ohm,
    cvd_temperature_C,
    resolve_sensor,
    steinhart_hart_resistance_ohm,
    steinhart_hart_temperature_K,
)

# 1 mK of a Pt100 near 0 °C is about 0.39 mΩ (dR/dt = R0·A ≈ 0.39 Ω/K, IEC 60751 coefficients)
MK_OHM = 0.39e-3
SH = (1.129148e-3, 2.34125e-4, 8.76741e-8)  # 10 kΩ NTC datasheet set, docs/references.md §6 (confirmed)


def test_coefficients_match_iec_60751():
    # IEC 60751:2008 A, B, C as quoted in docs/references.md §5 (confirmed)
    assert CVD_A_PER_C == 3.9083e-3
    assert CVD_B_PER_C2 == -5.775e-7
    assert CVD_C_PER_C4 == -4.183e-12
    data = load_data("sensors.toml")
    assert "IEC 60751" in data["source"]["citation"]
    assert data["pt100"]["R0_ohm"] == 100.0
    assert data["pt1000"]["R0_ohm"] == 1000.0


@pytest.mark.parametrize(
    ("t_C", "R_ohm", "tol_ohm"),
    [
        (0.0, 100.0, 1e-12),        # definition of R0 (IEC 60751)
        (100.0, 138.5055, 1e-4),    # docs/references.md §5: 138.5055 Ω calc. (table 138.51, memory)
        (25.0, 109.7347, 1e-4),     # docs/references.md §5: 109.7347 Ω calc. (derived)
        (200.0, 175.8560, 1e-4),    # docs/references.md §5: 175.8560 Ω calc. (table 175.86, memory)
        (-100.0, 60.2558, 1e-4),    # docs/references.md §5: table 60.26 Ω (confirmed), 60.2558 calc.
        (-200.0, 18.5201, 1e-4),    # docs/references.md §5: table 18.52 Ω (confirmed), 18.5201 calc.
        (-50.0, 80.3063, 1e-4),     # docs/references.md §5: table 80.31 Ω (confirmed), 80.3063 calc.
        (500.0, 280.9775, 1e-4),    # docs/references.md §5: 280.9775 Ω calc. (derived)
        (850.0, 390.4811, 1e-4),    # docs/references.md §5: 390.4811 Ω calc. (derived)
    ],
)
def test_pt100_table_values_and_back(t_C, R_ohm, tol_ohm):
    assert cvd_resistance_ohm(t_C) == pytest.approx(R_ohm, abs=tol_ohm)
    # the inverse reads the tabulated resistance back to within 1 mK (docs/references.md §5 test idea)
    assert cvd_temperature_C(R_ohm) == pytest.approx(t_C, abs=1e-3)


def test_pt100_table_minus_10():
    # docs/references.md §5: Pt100 table 96.09 Ω at −10 °C (confirmed, two decimals)
    assert cvd_resistance_ohm(-10.0) == pytest.approx(96.09, abs=0.005)


def test_alpha_of_standard_platinum():
    # α = (R100 − R0)/(100 R0) = 0.003 850 55 /°C (docs/references.md §5, confirmed)
    alpha = (cvd_resistance_ohm(100.0) - 100.0) / (100.0 * 100.0)
    assert alpha == pytest.approx(0.00385055, abs=1e-9)


def test_inverse_round_trip_full_range():
    # docs/references.md §5: the inverse must round-trip to < 1 mK across −200…850 °C
    t = np.linspace(-200.0, 850.0, 20001)
    back = cvd_temperature_C(cvd_resistance_ohm(t))
    assert np.max(np.abs(back - t)) < 1e-9  # far inside 1 mK: the inverse is exact
    # an independent check: scipy's root finder on the forward equation at a few points
    from scipy.optimize import brentq

    for R in (18.5201, 60.2558, 96.09, 100.0, 109.7347, 390.4811):
        t_ref = brentq(lambda x, R=R: cvd_resistance_ohm(x) - R, -250.0, 900.0, xtol=1e-12)
        assert cvd_temperature_C(R) == pytest.approx(t_ref, abs=1e-9)


def test_c_term_matters_below_zero():
    # docs/references.md §5 (derived): without C, R(−200 °C) = 19.5240 Ω, which the full equation
    # reads back as −197.68 °C (an error of about 2.3 °C)
    no_c = cvd_resistance_ohm(-200.0, C=0.0)
    assert no_c == pytest.approx(19.5240, abs=1e-4)
    assert cvd_temperature_C(no_c) == pytest.approx(-197.68, abs=0.01)


def test_pt1000_scales_with_r0():
    assert cvd_resistance_ohm(100.0, R0_ohm=1000.0) == pytest.approx(1385.055, abs=1e-3)
    assert cvd_temperature_C(1385.055, R0_ohm=1000.0) == pytest.approx(100.0, abs=1e-3)


def test_scalar_and_array_shapes():
    assert isinstance(cvd_temperature_C(110.0), float)
    out = cvd_temperature_C(np.array([[90.0, 110.0], [100.0, 20.0]]))
    assert out.shape == (2, 2)
    assert out[1, 0] == pytest.approx(0.0, abs=1e-12)


def test_cvd_rejects_non_positive_resistance():
    with pytest.raises(SensorRangeError, match="resistance must be a positive finite number"):
        cvd_temperature_C(np.array([100.0, 0.0]))
    with pytest.raises(SensorRangeError, match="above the Callendar–Van Dusen maximum"):
        cvd_temperature_C(1e6)


@pytest.mark.parametrize(
    ("R_ohm", "T_K"),
    [
        (10_000.0, 298.1497),  # docs/references.md §6: 298.1497 K (derived from the datasheet set)
        (32_650.0, 273.1502),  # docs/references.md §6: 273.1502 K (derived)
    ],
)
def test_steinhart_hart_datasheet_set(R_ohm, T_K):
    assert steinhart_hart_temperature_K(R_ohm, *SH) == pytest.approx(T_K, abs=1e-4)


@pytest.mark.parametrize(
    ("t_C", "R_ohm", "tol"),
    [
        (50.0, 3601.0, 0.05),    # docs/references.md §6: 3601.0 Ω (derived, exact cubic inverse)
        (100.0, 678.42, 0.005),  # docs/references.md §6: 678.42 Ω (derived)
    ],
)
def test_steinhart_hart_inverse(t_C, R_ohm, tol):
    assert steinhart_hart_resistance_ohm(t_C + 273.15, *SH) == pytest.approx(R_ohm, abs=tol)


def test_steinhart_hart_round_trip_and_fit_to_published_table():
    T = np.linspace(220.0, 420.0, 2001)
    R = steinhart_hart_resistance_ohm(T, *SH)
    assert np.max(np.abs(steinhart_hart_temperature_K(R, *SH) - T)) < 1e-9
    # c = 0 reduces to the two-term (beta-like) form, solved directly
    assert steinhart_hart_temperature_K(
        steinhart_hart_resistance_ohm(300.0, SH[0], SH[1], 0.0), SH[0], SH[1], 0.0
    ) == pytest.approx(300.0, abs=1e-9)
    # fit quality: a 3-term fit to the R–T table in docs/references.md §6 (LDT-5525 manual,
    # Appendix A, confirmed) reproduces it to better than 0.01 °C, as that source claims.
    # The table's 40 °C entry (5331 Ω) is left out: it sits 0.47 °C off the curve through the
    # other six points (probably a copying slip in the table as compiled).
    t_tab = np.array([0.0, 10.0, 20.0, 25.0, 30.0, 50.0])
    r_tab = np.array([32128.0, 19549.0, 12262.0, 9814.0, 7908.0, 3542.0])
    x = np.log(r_tab)
    design = np.column_stack([np.ones_like(x), x, x**3])
    scale = np.array([1.0, x.std(), (x**3).std()])  # condition the normal equations
    a, b, c = np.linalg.lstsq(design / scale, 1.0 / (t_tab + 273.15), rcond=None)[0] / scale
    fitted = steinhart_hart_temperature_K(r_tab, a, b, c) - 273.15
    assert np.max(np.abs(fitted - t_tab)) < 0.01


def test_steinhart_hart_rejects_bad_input():
    with pytest.raises(SensorRangeError, match="positive finite"):
        steinhart_hart_temperature_K(-5.0, *SH)
    with pytest.raises(SensorRangeError, match="positive finite number of kelvin"):
        steinhart_hart_resistance_ohm(0.0, *SH)


def test_resolve_sensor_defaults_and_overrides():
    pt100 = resolve_sensor("pt100")
    assert pt100.coefficients == {"R0_ohm": 100.0, "A": CVD_A_PER_C, "B": CVD_B_PER_C2,
                                  "C": CVD_C_PER_C4}
    assert pt100.temperature_K(138.5055) == pytest.approx(373.15, abs=1e-3)
    lo, hi = pt100.resistance_range_ohm()
    assert lo == pytest.approx(18.5201, abs=1e-4)  # −200 °C, docs/references.md §5
    assert hi == pytest.approx(390.4811, abs=1e-4)  # 850 °C, docs/references.md §5
    custom = resolve_sensor("PT1000", {"R0": 1001.0})
    assert custom.name == "pt1000"
    assert custom.resistance_ohm(273.15) == pytest.approx(1001.0)
    sh = resolve_sensor("steinhart-hart", dict(zip("abc", SH, strict=True)))
    assert sh.temperature_K(10_000.0) == pytest.approx(298.1497, abs=1e-4)
    assert sh.resistance_range_ohm() is None
    assert "Steinhart–Hart" in sh.describe()


def test_resolve_sensor_errors():
    with pytest.raises(ChoiceError, match="sensor must be one of"):
        resolve_sensor("pt500")
    with pytest.raises(UnitError, match="needs its coefficients a, b and c"):
        resolve_sensor("steinhart-hart", {"a": 1e-3})
    with pytest.raises(ChoiceError, match="unknown coefficient"):
        resolve_sensor("pt100", {"alpha": 0.00385})
    with pytest.raises(UnitError, match="'A' is not a number"):
        resolve_sensor("pt100", {"A": "x"})
    with pytest.raises(UnitError, match="R0 must be positive"):
        resolve_sensor("pt100", {"R0_ohm": -1.0})

"""A published worked example from the early literature, reproduced.

Source: The Babcock & Wilcox Co., *Steam, its generation and use* (New York, 1913; public
domain), chapter on fuel calorimetry, the worked example of Pfaundler's radiation correction
(formula (19)) — seen in a stored copy of the text. The book prints, for a bomb-calorimeter run
read to 0.01 degree at half-minute intervals after firing:

* N = 6 half-minute intervals in the main period; R = 0 (rate of fall per interval before
  firing), R' = 0.01 (rate of fall per interval after the main period);
* T = 20.29 (mean temperature of the fore period, also the reading at firing), T' = 22.83 (mean
  of the after period), and 22.85 as the reading closing the main period;
* the readings 20.29, 22.54, 22.84, 22.88, 22.87, 22.86 of the main period, and
* the author's correction C = 6 × 0.008 = **0.048**, added to the observed rise.

The author's corrected rise is therefore 22.85 − 20.29 + 0.048 = 2.608 (degrees of the
thermometer). The book prints the rates and means, not each fore/after reading, so the fore
and after readings below are the ones those printed rates and means imply (a constant 20.29
before firing; 22.85 falling 0.01 per half minute for four intervals, whose mean is the printed
22.83). The book's mean over the main period, 22.36, does not follow from the six readings it
lists (their mean is 22.38) — a slip in the printed text or its copy; the author's arithmetic
below uses the listed readings and so gets 0.049, within the record's 0.01.

The check: calwork's Regnault–Pfaundler (trapezoid integral, docs/methods.md §1.4; docs/
references.md §10) on this record reproduces the author's corrected rise within the resolution of the record (0.01), and
the difference is the integration rule (the author sums the readings from the firing on;
calwork takes the trapezoid), which the hand lines below show.
"""

from __future__ import annotations

import pytest

from calwork.io import read_log
from calwork.rise import corrected_rise

FIRE_MIN = 5.0            # firing 5 min after the first (minute) reading
MAIN = [20.29, 22.54, 22.84, 22.88, 22.87, 22.86, 22.85]       # t₀ … t₆ at half minutes
AFTER = [22.84, 22.83, 22.82, 22.81]                             # after t₆, half minutes
AUTHOR_CORRECTION = 0.048
AUTHOR_RISE = 22.85 - 20.29 + AUTHOR_CORRECTION                  # 2.608
RESOLUTION = 0.01


@pytest.fixture(scope="module")
def record(tmp_path_factory):
    rows = [(m, 20.29) for m in range(5)]                    # fore: one-minute readings
    rows += [(FIRE_MIN + 0.5 * i, v) for i, v in enumerate(MAIN)]
    rows += [(FIRE_MIN + 3.0 + 0.5 * (i + 1), v) for i, v in enumerate(AFTER)]
    lines = ["# calwork hand-read record", "# temperature_unit: °C", "# time_unit: min",
             "# note: readings implied by a published worked example (see the test module)",
             "time,temperature,remark"]
    lines += [f"{m:g},{v:.2f},{'fired' if m == FIRE_MIN else ''}" for m, v in rows]
    path = tmp_path_factory.mktemp("published") / "record.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return read_log(path)


def test_the_printed_numbers_are_those_of_the_record():
    after = [MAIN[-1], *AFTER]
    assert sum(after) / len(after) == pytest.approx(22.83, abs=1e-12)       # T'
    assert after[0] - after[-1] == pytest.approx(4 * 0.01, abs=1e-12)      # R' per interval
    # the author's own arithmetic with the listed readings (formula (19) as printed)
    t_mean = sum(MAIN[:6]) / 6                                             # 22.38
    author = 6 * (0 + (0.01 - 0) / (22.85 - 20.29) * (t_mean - 20.29))
    assert author == pytest.approx(AUTHOR_CORRECTION, abs=RESOLUTION / 10)  # 0.049 vs 0.048


def test_regnault_pfaundler_reproduces_the_authors_rise(record):
    fire_s = FIRE_MIN * 60.0
    end_s = fire_s + 6 * 30.0
    result = corrected_rise(record, "regnault-pfaundler", fire_time_s=fire_s,
                            main_end_s=end_s)
    assert result.corrected_rise_K == pytest.approx(AUTHOR_RISE, abs=RESOLUTION)
    # by hand, the trapezoid form: mean over the main period, then the same formula
    trapezoid_mean = (sum(MAIN[1:-1]) + (MAIN[0] + MAIN[-1]) / 2) / 6     # 22.593
    by_hand = 22.85 - 20.29 + 6 * 0.01 * (trapezoid_mean - 20.29) / (22.83 - 20.29)
    assert result.corrected_rise_K == pytest.approx(by_hand, abs=2e-4)
    # calwork: 2.6144 ± 0.0079 — the author's 2.608 lies within its stated uncertainty
    assert abs(result.corrected_rise_K - AUTHOR_RISE) <= 2 * result.u_corrected_rise_K
    # the record's resolution is found and its rectangular part is in the budget
    assert result.u_corrected_rise_K > RESOLUTION / (2 * 3 ** 0.5) / 10


def test_the_other_methods_agree_within_the_resolution(record):
    fire_s = FIRE_MIN * 60.0
    end_s = fire_s + 6 * 30.0
    for method in ("newton-fit", "dickinson"):
        result = corrected_rise(record, method, fire_time_s=fire_s, main_end_s=end_s)
        assert result.corrected_rise_K == pytest.approx(AUTHOR_RISE, abs=RESOLUTION), method

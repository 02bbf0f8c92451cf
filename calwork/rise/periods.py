"""Fore, main and after periods of a thermogram: the :class:`Periods` record and
:func:`detect_periods` (docs/methods.md §1.2, §1.7).

Detection, in order (every step is vectorised; no loop over readings):

1. **Noise** σ from the median absolute second difference; a running median of five readings
   gives a spike-free copy of the record (it passes monotonic stretches unchanged).
2. **Event**: the largest departure of the smoothed slope from the median slope locates the
   main period roughly (peak slope, steep region, sign: exothermic/heating or endothermic).
   No departure above the noise → :class:`~calwork.core.errors.PeriodDetectionError`.
3. **Spikes** (single-reading outliers, ``|T − median₅| > 8σ``) outside the steep region are
   removed and reported (count and times) — never silently.
4. **Firing / start time** ``t_i``: given (run sheet, CLI), else the switch-on of a
   ``heater_V`` channel, else the onset rule of §1.7: a straight line fitted to a trailing
   window of readings predicts the next ones; onset is the first reading whose departure
   exceeds 5σ (prediction variance included) *and* stays above it for the next 4 readings;
   ``t_i`` is the last reading before onset.
5. **End of the main period** ``t_f`` by the plateau test (§1.7 rules 2 and 3): with ``k``
   and ``T_∞`` from a provisional joint fit (fore period and the later part of the after
   period), the reading-level invariant ``H(t) = T(t) − ∫₀ᵗ g(T) dt`` is constant wherever the
   record is Newtonian (``ΔT_c = H_after − H_fore``, §1.1). ``t_f`` is the earliest reading
   from which a straight line fits ``H`` to the end with the residual means of its first 4…64
   readings at the noise level (3.5σ; one-sided 3σ against "heat still to come"; noise with
   AR(1) inflation) — for that start and every later one
   (:func:`calwork.rise.boundaries.newtonian_start`). If the transient outlives the reference
   part, the search goes on with a later reference. The same test on the fore period trims
   a start before the calorimeter reached steady drift (5σ).

Every boundary can be overridden: ``fire_time_s``, ``main_end_s`` or a whole explicit
:class:`Periods` passed to :func:`calwork.rise.corrected_rise`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calwork.core.errors import CalworkError, PeriodDetectionError
from calwork.core.numeric import median
from calwork.core.thermogram import Thermogram
from calwork.rise.boundaries import (
    detect_onset,
    heater_interval,
    locate_event,
    newtonian_start,
    provisional_fit,
)
from calwork.rise.diagnostics import (
    MIN_PERIOD_READINGS,
    MIN_PERIOD_S,
    find_spikes,
    format_times,
    robust_noise_K,
    running_median5_K,
    warning,
)
from calwork.rise.sparse import record_resolution_K

__all__ = ["MIN_DRIFT_READINGS", "Periods", "detect_periods", "given_periods",
           "sparse_periods"]

#: Readings left out between the fore period and a detected firing time (guards against an
#: onset detected one reading late); none when the firing time is given.
GUARD_READINGS = 2
#: The fewest readings a drift period may have (a line and its scatter); 10 are recommended.
MIN_DRIFT_READINGS = 3
#: The fewest readings from which the periods of a sparse record are detected.
SPARSE_MIN_READINGS = 12
#: A sparse record's drift is "constant" when a straight line through the remaining readings
#: leaves no residual beyond this many reading errors (the resolution's half-step or the
#: fore period's scatter, whichever is larger).
SPARSE_LINE_Z = 3.0
#: Spike threshold (× σ) for the running-median test.
SPIKE_SIGMA = 8.0
#: End-confidence scores below this are reported as "boundary-uncertain". The score is the
#: pass fraction of a 2σ plateau test on candidate starts 64 readings and more after t_f
#: (:func:`calwork.rise.boundaries.newtonian_start`); measured on 560 clean simulated bomb and
#: solution runs (1–30 s sampling, 0.01–1 mK noise): never below 0.65, median ≈ 0.9; a
#: departure lingering just under the plateau threshold gives 0.2–0.5 (derived from
#: simulation, tests/test_review_rise_plateau_score.py).
END_CONFIDENCE_LIMIT = 0.5
#: Coverage factor of the plateau test, and of the test that trims an unsteady start of the
#: fore period (a false alarm there would drop good readings and warn, so it is stricter).
PLATEAU_Z = 3.5
FORE_TRIM_Z = 5.0


@dataclass(frozen=True, kw_only=True)
class Periods:
    """The periods of a thermogram (times in s on the log's time axis).

    Attributes
    ----------
    fore_period_s
        ``(start, end)`` of the readings fitted as fore period.
    fire_time_s
        Start of the main period ``t_i`` (firing, heater-on, ampoule broken).
    main_end_s
        End of the main period ``t_f``.
    after_period_s
        ``(start, end)`` of the readings fitted as after period.
    onset_s
        First reading detected as departing from the fore drift (``None`` if not detected).
    heater_off_s
        First reading with the heater off (from a ``heater_V`` channel), if any.
    event_sign
        ``+1`` for a rise (exothermic, heating), ``−1`` for an endothermic event.
    noise_K
        Reading noise σ estimated from the record, K.
    fire_source, main_end_source
        ``'detected'``, ``'given'`` or ``'heater-channel'``.
    fire_confidence
        Score in (0, 1]: 1 when the first departing reading already exceeds four times the
        detection threshold (a sharp onset); lower for a gradual onset, whose true start may
        lie a few readings earlier (harmless for newton-fit and Regnault–Pfaundler, which are
        invariant to ``t_i`` before onset; it matters for the 60 % Dickinson shortcut).
    main_end_confidence
        Score in [0, 1]: fraction of candidate ends from 64 readings after ``t_f`` on that
        also pass a stricter (2σ) plateau test — about 0.9 (the pass rate of pure noise) when
        the after period is cleanly Newtonian from ``t_f`` on; ``None`` when the after period
        is too short to score.
    main_end_spread_K
        Remaining departure of ``ΔT_c(t_f)`` from the plateau value, K (boundary-choice
        component of the uncertainty).
    spikes_s
        Times of the readings removed as spikes.
    warnings
        Machine-readable warnings (``"code: text"``).
    """

    fore_period_s: tuple[float, float]
    fire_time_s: float
    main_end_s: float
    after_period_s: tuple[float, float]
    onset_s: float | None = None
    heater_off_s: float | None = None
    event_sign: int = 1
    noise_K: float | None = None
    fire_source: str = "given"
    main_end_source: str = "given"
    fire_confidence: float | None = None
    main_end_confidence: float | None = None
    main_end_spread_K: float | None = None
    spikes_s: tuple[float, ...] = ()
    warnings: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        fore = tuple(float(v) for v in self.fore_period_s)
        after = tuple(float(v) for v in self.after_period_s)
        if len(fore) != 2 or len(after) != 2:
            raise PeriodDetectionError("fore_period_s and after_period_s must be (start, end)",
                                       found=(self.fore_period_s, self.after_period_s))
        object.__setattr__(self, "fore_period_s", fore)
        object.__setattr__(self, "after_period_s", after)
        object.__setattr__(self, "fire_time_s", float(self.fire_time_s))
        object.__setattr__(self, "main_end_s", float(self.main_end_s))
        object.__setattr__(self, "spikes_s", tuple(float(v) for v in self.spikes_s))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        order = (fore[0], fore[1], self.fire_time_s, self.main_end_s, after[0], after[1])
        if not (fore[0] < fore[1] <= self.fire_time_s < self.main_end_s <= after[0] < after[1]):
            raise PeriodDetectionError(
                "periods out of order", found=order,
                expected="fore start < fore end <= fire time < main end <= after start < after end",
            )

    @property
    def fore_length_s(self) -> float:
        return self.fore_period_s[1] - self.fore_period_s[0]

    @property
    def after_length_s(self) -> float:
        return self.after_period_s[1] - self.after_period_s[0]

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary."""
        return {
            "fore_period_s": list(self.fore_period_s),
            "fire_time_s": self.fire_time_s,
            "main_end_s": self.main_end_s,
            "after_period_s": list(self.after_period_s),
            "fore_length_s": self.fore_length_s,
            "after_length_s": self.after_length_s,
            "onset_s": self.onset_s,
            "heater_off_s": self.heater_off_s,
            "event_sign": self.event_sign,
            "noise_K": self.noise_K,
            "fire_source": self.fire_source,
            "main_end_source": self.main_end_source,
            "fire_confidence": self.fire_confidence,
            "main_end_confidence": self.main_end_confidence,
            "main_end_spread_K": self.main_end_spread_K,
            "spikes_s": list(self.spikes_s),
            "warnings": list(self.warnings),
        }


def detect_periods(thermogram: Thermogram, *, fire_time_s: float | None = None,
                   main_end_s: float | None = None) -> Periods:
    """Find the fore, main and after periods of ``thermogram``.

    Parameters
    ----------
    thermogram
        The record (isoperibol or semi-adiabatic; exothermic, endothermic or heater).
    fire_time_s
        Known firing / heater-on / ampoule-break time, s (overrides detection).
    main_end_s
        Known end of the main period, s (overrides the plateau test).

    Returns
    -------
    Periods
        Boundaries, how they were found, confidence scores, noise, spikes removed, warnings.

    Raises
    ------
    PeriodDetectionError
        No event above the noise, or a fore/after period with fewer than 4 readings.

    Examples
    --------
    >>> from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run
    >>> run = simulate_run(CalorimeterParams.bomb_preset(),
    ...                    CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
    ...                    duration_s=2400.0, seed=1)
    >>> p = detect_periods(run.thermogram)
    >>> 590.0 <= p.fire_time_s <= 605.0
    True
    """
    where = {"path": thermogram.provenance.source_path}
    t_all = thermogram.time_s
    T_all = thermogram.temperature_K
    n_all = t_all.size
    if fire_time_s is not None and main_end_s is not None and n_all < 3 * MIN_PERIOD_READINGS:
        return given_periods(thermogram, fire_time_s, main_end_s)
    if n_all < SPARSE_MIN_READINGS:
        raise PeriodDetectionError(
            "too few readings to find fore, main and after periods: give the firing time "
            "and the end of the main period (fire_time_s and main_end_s; at least 3 "
            "readings in each drift period)", found=n_all,
            expected=f"at least {SPARSE_MIN_READINGS} readings to detect the periods",
            **where)
    if n_all < 3 * MIN_PERIOD_READINGS:
        return sparse_periods(thermogram, fire_time_s=fire_time_s, main_end_s=main_end_s)
    sigma0 = robust_noise_K(T_all)
    Tm = running_median5_K(T_all)
    event = locate_event(t_all, Tm, sigma0, where)
    warnings: list[str] = []

    # spikes outside the steep part of the main period
    idx = np.arange(n_all)
    allowed = (idx < event.lo - 2) | (idx > event.hi + 2)
    spikes = find_spikes(T_all, sigma0, threshold=SPIKE_SIGMA, allowed=allowed, median5_K=Tm)
    keep = np.ones(n_all, dtype=bool)
    keep[spikes] = False
    spike_times = tuple(float(v) for v in t_all[spikes])
    if spikes.size:
        warnings.append(warning("spikes-removed", f"{spikes.size} single-reading outlier(s) "
                                f"removed at t = {format_times(spike_times)}"))
    t, T = t_all[keep], T_all[keep]
    n = t.size
    peak = int(np.searchsorted(t, t_all[event.peak]))
    hi = int(min(np.searchsorted(t, t_all[event.hi]), n - 1))

    # --- start of the main period ---
    onset_s = None
    fire_conf = None
    heater = heater_interval(thermogram, t_all)
    heater_off = heater[1] if heater else None
    try:
        lo_g = int(np.searchsorted(t, t_all[event.lo]))
        j_on, conf = detect_onset(t, T, sigma0, peak, lo_g, event.sign, where)
        onset_s = float(t[j_on])
    except PeriodDetectionError:
        if fire_time_s is None and heater is None:
            raise
        j_on, conf = None, None
    if fire_time_s is not None:
        t_i, fire_source = float(fire_time_s), "given"
        if onset_s is not None and t_i > onset_s + 0.5 * median(np.diff(t)):
            warnings.append(warning("fire-time-late", f"the given firing time {t_i:.6g} s is "
                                    f"after the detected onset of the rise at {onset_s:.6g} s"))
    elif heater is not None:
        t_i, fire_source = heater[0], "heater-channel"
    else:
        t_i, fire_source, fire_conf = float(t[j_on - 1]), "detected", conf
    i_f = int(np.searchsorted(t, t_i, side="right")) - 1
    # a detected onset may be a reading late: keep a guard; a given firing time is exact,
    # and every reading up to it belongs to the fore period
    fore_end = i_f if fire_source == "given" else i_f - GUARD_READINGS
    if fore_end + 1 < MIN_DRIFT_READINGS:
        fore_end = i_f - (1 if t[i_f] == t_i and fire_source != "given" else 0)
    if fore_end + 1 < MIN_DRIFT_READINGS:
        raise PeriodDetectionError("fore period too short for a drift fit",
                                   found=f"{max(fore_end + 1, 0)} readings before {t_i:.6g} s",
                                   expected=f"at least {MIN_DRIFT_READINGS} "
                                   f"({MIN_PERIOD_READINGS} recommended)", **where)

    # --- provisional fit on the surely-Newtonian parts, then the plateau tests ---
    lo_after = max(peak, hi if heater_off is None else int(np.searchsorted(t, heater_off)), i_f + 1)
    if main_end_s is not None:
        lo_after = max(i_f + 1, min(lo_after, int(np.searchsorted(t, main_end_s))))
    if n - lo_after < MIN_DRIFT_READINGS:
        raise PeriodDetectionError("after period too short: the record ends during the main "
                                   "period", found=f"{n - lo_after} readings after "
                                   f"{t[min(lo_after, n - 1)]:.6g} s",
                                   expected=f"at least {MIN_DRIFT_READINGS}", **where)
    ref_after = lo_after + max(int(0.4 * (n - lo_after)), 0)
    ref_after = max(lo_after, min(ref_after, n - 4))
    ref_fore = int(0.3 * fore_end)
    if fore_end - ref_fore + 1 < 4:
        ref_fore = max(0, fore_end - 3)
    prov, H, sigma2 = provisional_fit(t, T, ref_fore, fore_end, ref_after, where)
    spread = None
    end_conf = None
    if main_end_s is not None:
        t_f, end_source = float(main_end_s), "given"
        q_f = int(np.searchsorted(t, t_f))
        q_det, *_ = newtonian_start(H, t, lo_after, ref_after, n - 1, sigma2, PLATEAU_Z,
                                      event.sign)
        if q_det > q_f and t[q_det] > t_f:
            warnings.append(warning("main-end-early", f"the given end of the main period "
                                    f"{t_f:.6g} s is before the detected plateau at "
                                    f"{t[q_det]:.6g} s"))
    else:
        q_f, spread, end_conf, ref_ok = newtonian_start(H, t, lo_after, ref_after, n - 1,
                                                         sigma2, PLATEAU_Z, event.sign)
        last = n - max(2 * MIN_PERIOD_READINGS, (n - lo_after) // 5)
        if not ref_ok and last > ref_after:
            # the transient outlives the reference part: search on, with a later reference
            prov, H, sigma2 = provisional_fit(t, T, ref_fore, fore_end, last, where)
            q_f, spread, end_conf, ref_ok = newtonian_start(H, t, ref_after, last, n - 1,
                                                             sigma2, PLATEAU_Z, event.sign)
            ref_after = last
        t_f, end_source = float(t[q_f]), "detected"
        if not ref_ok:
            warnings.append(warning("after-not-newtonian", "the readings from "
                                    f"{t[ref_after]:.6g} s on still depart from the Newtonian "
                                    "drift; the after period may contain the transient"))
    # the reference part of the after period itself: its two halves must agree
    half = ref_after + (n - ref_after) // 2
    if n - half >= 2 and half - ref_after >= 2:
        d = float(np.mean(H[ref_after:half]) - np.mean(H[half:]))
        sd = np.sqrt(sigma2 * (1.0 / (half - ref_after) + 1.0 / (n - half)))
        if abs(d) > 4.0 * sd:
            warnings.append(warning("after-not-newtonian", "the late after period drifts "
                                    f"off the Newtonian model by {d * 1e3:.3g} mK "
                                    f"({abs(d) / sd:.1f} standard uncertainties)"))

    # fore period: whole stable record before firing (the backward plateau test)
    fore_start, *_ = newtonian_start(H, t, 0, ref_fore, fore_end, sigma2, FORE_TRIM_Z)
    if fore_start > 0:
        warnings.append(warning("fore-not-newtonian", f"the first {fore_start} readings (to "
                                f"t = {t[fore_start - 1]:.6g} s) depart from the steady drift "
                                "and are left out of the fore period"))
    if q_f >= n - 1 or fore_end <= fore_start:
        raise PeriodDetectionError("after period too short for a drift fit", **where)
    periods_warn = _length_warnings(t, fore_start, fore_end, q_f, n)
    if end_conf is not None and end_conf < END_CONFIDENCE_LIMIT:
        periods_warn.append(warning("boundary-uncertain", f"marginal plateau after t_f = "
                                    f"{t_f:.6g} s (score {end_conf:.2f})"))
    try:
        return Periods(
            fore_period_s=(float(t[fore_start]), float(t[fore_end])), fire_time_s=t_i,
            main_end_s=t_f, after_period_s=(max(t_f, float(t[q_f])), float(t[-1])),
            onset_s=onset_s, heater_off_s=heater_off, event_sign=event.sign,
            noise_K=float(prov.sigma_K), fire_source=fire_source, main_end_source=end_source,
            fire_confidence=fire_conf, main_end_confidence=end_conf, main_end_spread_K=spread,
            spikes_s=spike_times, warnings=(*warnings, *periods_warn),
        )
    except CalworkError as exc:
        raise exc.with_context(**where) from None


def given_periods(thermogram: Thermogram, fire_time_s: float, main_end_s: float) -> Periods:
    """The periods of a record whose firing time and end of the main period are given: every
    reading up to the firing is the fore period, every reading from the end of the main
    period on the after period (sparse and hand-read records, where the detection has too few
    readings to work with).

    Raises
    ------
    PeriodDetectionError
        The boundaries are outside the record or out of order, or a drift period has fewer
        than :data:`MIN_DRIFT_READINGS` readings.
    """
    where = {"path": thermogram.provenance.source_path}
    t = thermogram.time_s
    t_i, t_f = float(fire_time_s), float(main_end_s)
    if not t[0] <= t_i < t_f <= t[-1]:
        raise PeriodDetectionError("the firing time and the end of the main period must lie "
                                   "in the record, in that order", column="main_end_s",
                                   found=(t_i, t_f), expected=f"{t[0]:.6g} ≤ fire time < end "
                                   f"≤ {t[-1]:.6g} s", **where)
    i_f = int(np.searchsorted(t, t_i, side="right")) - 1
    a0 = int(np.searchsorted(t, t_f, side="left"))
    n_fore, n_after = i_f + 1, t.size - a0
    for name, count, column in (("fore", n_fore, "fire_time_s"),
                                ("after", n_after, "main_end_s")):
        if count < MIN_DRIFT_READINGS:
            raise PeriodDetectionError(
                f"{name} period too short for a drift fit", column=column,
                found=f"{count} readings", expected=f"at least {MIN_DRIFT_READINGS} "
                f"({MIN_PERIOD_READINGS} recommended)", **where)
    try:
        return Periods(
            fore_period_s=(float(t[0]), float(t[i_f])), fire_time_s=t_i, main_end_s=t_f,
            after_period_s=(t_f, float(t[-1])), fire_source="given",
            main_end_source="given",
            event_sign=1 if thermogram.temperature_K[-1] >= thermogram.temperature_K[0] else -1,
            warnings=tuple(_length_warnings(t, 0, i_f, a0, t.size)))
    except CalworkError as exc:
        raise exc.with_context(**where) from None


def sparse_periods(thermogram: Thermogram, *, fire_time_s: float | None = None,
                   main_end_s: float | None = None) -> Periods:
    """The periods of a sparse record (12–29 readings; hand-read), found by the rules a
    technician applies to the written record (docs/methods.md §1.12):

    * firing: the last reading before the first interval whose rate departs from the
      fore-period rate by more than the reading error allows;
    * end of the main period: the first reading from which a straight line through all the
      remaining readings leaves no residual beyond :data:`SPARSE_LINE_Z` reading errors — so
      the end never falls while the readings still curve towards their maximum — with at
      least :data:`MIN_DRIFT_READINGS` readings after it.

    Raises
    ------
    PeriodDetectionError
        No event above the reading error, or no end that leaves an after period (the message
        says to give the boundary).
    """
    where = {"path": thermogram.provenance.source_path}
    t, T = thermogram.time_s, thermogram.temperature_K
    n = t.size
    q = record_resolution_K(thermogram) or 0.0
    rate = np.diff(T) / np.diff(t)
    warnings: list[str] = []
    # the reading error: the resolution's half-step, or the scatter of the first readings
    # about their line (whichever is larger)
    head = slice(0, MIN_DRIFT_READINGS)  # a fore period has at least these
    err = max(q / 2.0, _line_scatter(t[head], T[head]), 1e-12)
    if fire_time_s is None:
        r0 = float(np.median(rate[:3]))
        tolerance = SPARSE_LINE_Z * err * np.sqrt(2.0) / np.diff(t)
        jumps = np.flatnonzero(np.abs(rate - r0) > np.maximum(tolerance, 1e-12))
        jumps = jumps[jumps >= MIN_DRIFT_READINGS - 1]
        if jumps.size == 0:
            raise PeriodDetectionError("no heat event found: no interval departs from the "
                                       "fore-period rate beyond the reading error; give "
                                       "fire_time_s", **where)
        i_f, fire_source = int(jumps[0]), "detected"
        t_i = float(t[i_f])
    else:
        t_i, fire_source = float(fire_time_s), "given"
        i_f = int(np.searchsorted(t, t_i, side="right")) - 1
    if i_f + 1 < MIN_DRIFT_READINGS:
        raise PeriodDetectionError("fore period too short for a drift fit",
                                   found=f"{i_f + 1} readings up to {t_i:.6g} s",
                                   expected=f"at least {MIN_DRIFT_READINGS}", **where)
    if main_end_s is None:
        sign = 1 if T[-1] >= T[i_f] else -1
        peak = i_f + 1 + int(np.argmax(sign * (T[i_f + 1:] - T[i_f])))
        a0 = None
        for c in range(max(peak, i_f + 2), n - MIN_DRIFT_READINGS + 1):
            if all(_line_scatter(t[j:], T[j:], worst=True) <= SPARSE_LINE_Z * err
                   for j in range(c, n - MIN_DRIFT_READINGS + 1)):
                a0 = c
                break
        if a0 is None:
            raise PeriodDetectionError(
                "the end of the main period cannot be found: the readings still curve until "
                "the end of the record", found=f"{n - peak} readings after the maximum",
                expected="an after period of steady drift, or main_end_s", **where)
        t_f, end_source = float(t[a0]), "detected"
        if n - a0 < MIN_PERIOD_READINGS:
            warnings.append(warning(
                "main-end-unconfirmed", f"only {n - a0} readings after the detected end of "
                f"the main period at {t_f:.6g} s: too few to confirm the drift is steady; "
                "check that the rise had ended there"))
    else:
        t_f, end_source = float(main_end_s), "given"
        a0 = int(np.searchsorted(t, t_f, side="left"))
    if n - a0 < MIN_DRIFT_READINGS:
        raise PeriodDetectionError("after period too short for a drift fit",
                                   found=f"{n - a0} readings from {t_f:.6g} s",
                                   expected=f"at least {MIN_DRIFT_READINGS}", **where)
    try:
        return Periods(
            fore_period_s=(float(t[0]), float(t[i_f])), fire_time_s=t_i, main_end_s=t_f,
            after_period_s=(t_f, float(t[-1])), fire_source=fire_source,
            main_end_source=end_source, noise_K=err,
            event_sign=1 if T[-1] >= T[0] else -1,
            warnings=(*warnings, *_length_warnings(t, 0, i_f, a0, n)))
    except CalworkError as exc:
        raise exc.with_context(**where) from None


def _line_scatter(t: np.ndarray, T: np.ndarray, *, worst: bool = False) -> float:
    """RMS (or the largest) residual of a straight line through the readings, K."""
    if t.size < 3:
        return 0.0
    slope, icpt = np.polyfit(t - t[0], T, 1)
    r = T - (icpt + slope * (t - t[0]))
    return float(np.max(np.abs(r))) if worst else float(np.sqrt(r @ r / (t.size - 2)))


def _length_warnings(t: np.ndarray, f0: int, f1: int, a0: int, n: int) -> list[str]:
    out = []
    for code, name, i0, i1 in (("fore-short", "fore", f0, f1), ("after-short", "after", a0,
                                                                   n - 1)):
        length = float(t[i1] - t[i0])
        count = i1 - i0 + 1
        if length < MIN_PERIOD_S or count < MIN_PERIOD_READINGS:
            out.append(warning(code, f"{name} period {length:.4g} s, {count} readings (at "
                               f"least {MIN_PERIOD_S:g} s and {MIN_PERIOD_READINGS} readings "
                               "recommended; ASTM/ISO minima, recalled)"))
    return out

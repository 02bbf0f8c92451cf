"""Fore, main and after periods of a thermogram: the :class:`Periods` record and
:func:`detect_periods` (METHODS.md §1.2, §1.7).

Detection, in order (every step is vectorised; no loop over readings):

1. **Noise** σ from the median absolute second difference; a running median of five readings
   gives a spike-free copy of the record (it passes monotonic stretches unchanged).
2. **Event**: the largest departure of the smoothed slope from the median slope locates the
   main period roughly (peak slope, steep region, sign: exothermic/heating or endothermic).
   No departure above the noise → :class:`~calwork.errors.PeriodDetectionError`.
3. **Spikes** (single-reading outliers, ``|T − median₅| > 8σ``) outside the steep region are
   removed and reported (count and times) — never silently.
4. **Firing / start time** ``t_i``: given (run sheet, CLI), else the switch-on of a
   ``heater_V`` channel, else the onset rule of §1.7: a straight line fitted to a trailing
   window of readings predicts the next ones; onset is the first reading whose departure
   exceeds 5σ (prediction variance included) *and* stays above it for the next 4 readings;
   ``t_i`` is the last reading before onset.
5. **End of the main period** ``t_f`` by the plateau test (§1.7 rule 2): with ``k`` and ``T_∞``
   from a provisional joint fit (the later part of the after period), the reading-level
   invariant ``H(t) = T(t) − ∫₀ᵗ g(T) dt`` is constant wherever the record is Newtonian, and
   ``ΔT_c = H_after − H_fore``. ``t_f`` is the earliest reading from which the mean of ``H``
   over the rest of the record agrees with the reference mean within 3 standard uncertainties
   (noise with AR(1) inflation, plus the provisional fit's ``k``/``g`` covariance) for every
   later start. The same test run backwards trims a fore period that starts before the
   calorimeter reached steady drift.

Every boundary can be overridden: ``fire_time_s``, ``main_end_s`` or a whole explicit
:class:`Periods` passed to :func:`calwork.rise.corrected_rise`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.ndimage import median_filter

from calwork.errors import CalworkError, FitError, PeriodDetectionError
from calwork.rise.diagnostics import (
    MIN_PERIOD_READINGS,
    MIN_PERIOD_S,
    ar1_inflation,
    find_spikes,
    format_times,
    robust_noise_K,
    warning,
)
from calwork.rise.newton import NewtonFit, fit_newton
from calwork.thermogram import Thermogram

__all__ = ["Periods", "detect_periods"]

#: Readings left out between the fore period and the firing time (guards against an onset
#: detected one reading late).
GUARD_READINGS = 2
#: Onset threshold (× σ) and persistence (readings that must stay above it), METHODS.md §1.7.
ONSET_SIGMA = 5.0
ONSET_PERSISTENCE = 4
#: Spike threshold (× σ) for the running-median test.
SPIKE_SIGMA = 8.0
#: Coverage factor of the plateau test.
PLATEAU_Z = 3.5
#: ... and of the backward test that trims an unsteady start of the fore period.
FORE_TRIM_Z = 4.0


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
        Score in [0, 1]: fraction of later candidate ends that also pass a stricter (2σ)
        plateau test — 1 when the after period is cleanly Newtonian from ``t_f`` on.
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

    def report(self) -> str:
        """A short human-readable summary."""
        lines = [
            f"fore period   {self.fore_period_s[0]:10.1f} – {self.fore_period_s[1]:10.1f} s",
            (f"main period   {self.fire_time_s:10.1f} – {self.main_end_s:10.1f} s "
             f"(start {self.fire_source}, end {self.main_end_source})"),
            f"after period  {self.after_period_s[0]:10.1f} – {self.after_period_s[1]:10.1f} s",
        ]
        if self.noise_K is not None:
            lines.append(f"reading noise {self.noise_K * 1e3:.4g} mK")
        lines.extend(f"warning: {w}" for w in self.warnings)
        return "\n".join(lines)


# --- detection -------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class _Event:
    peak: int          # reading index of the steepest slope
    lo: int            # first reading of the steep region
    hi: int            # last reading of the steep region
    sign: int


def _locate_event(t: np.ndarray, Tm: np.ndarray, sigma: float, where: dict) -> _Event:
    n = t.size
    dt = float(np.median(np.diff(t)))
    w = int(min(max(2, round(30.0 / dt)), max(2, n // 10)))
    slope = (Tm[w:] - Tm[:-w]) / (t[w:] - t[:-w])
    dev = slope - np.median(slope)
    j = int(np.argmax(np.abs(dev)))
    dev_max = abs(float(dev[j]))
    slope_noise = sigma * np.sqrt(2.0) / (w * dt)
    if dev_max < 12.0 * slope_noise:
        raise PeriodDetectionError(
            "no heat event found: the largest change of drift rate is within the noise",
            found=f"{dev_max:.3g} K/s", expected=f"more than {12.0 * slope_noise:.3g} K/s",
            **where)
    steep = np.flatnonzero(np.abs(dev) > 0.1 * dev_max)
    return _Event(peak=j + w // 2, lo=int(steep[0]), hi=int(min(steep[-1] + w, n - 1)),
                  sign=1 if dev[j] > 0 else -1)


def _detect_onset(t: np.ndarray, T: np.ndarray, sigma: float, peak: int, lo: int, sign: int,
                  where: dict) -> tuple[int, float]:
    """Index of the first departing reading and the fire-confidence score.

    The search starts a little before the steep part of the event (``2W`` readings, or three
    times the steep part's lead to the peak, before ``lo``), so that a slow settling of the
    calorimeter early in the fore period is not taken for the onset; if nothing departs
    there, the whole fore record is searched.
    """
    m = ONSET_PERSISTENCE
    dt = float(np.median(np.diff(t)))
    W = int(min(max(8, round(120.0 / dt)), 60, peak - m - 1))
    if W < 3:
        raise PeriodDetectionError(
            "fore period too short: the event starts within the first readings",
            found=f"{peak} readings before the steepest rise", expected="at least 10", **where)
    tc = t - t[peak]
    y = T - T[0]
    zero = np.zeros(1)
    cs = [np.concatenate([zero, np.cumsum(v)]) for v in (tc, tc * tc, y, tc * y)]

    def scan(start: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        J = np.arange(start, peak + 1)
        a, b = J - W, J
        st, stt, sy, sty = (c[b] - c[a] for c in cs)
        sxx = stt - st * st / W
        slope = (sty - st * sy / W) / sxx
        icpt = (sy - slope * st) / W
        idx = np.minimum(J[:, None] + np.arange(m + 1)[None, :], t.size - 1)
        pred = icpt[:, None] + slope[:, None] * tc[idx]
        var = 1.0 + 1.0 / W + (tc[idx] - (st / W)[:, None]) ** 2 / sxx[:, None]
        zscore = sign * (y[idx] - pred) / (sigma * np.sqrt(var))
        return J, zscore, np.flatnonzero(np.all(zscore > ONSET_SIGMA, axis=1))

    start = max(W, lo - max(2 * W, 3 * (peak - lo)))
    J, zscore, hits = scan(start)
    if hits.size == 0 and start > W:
        J, zscore, hits = scan(W)
    if hits.size == 0:
        raise PeriodDetectionError(
            "no onset of a heat event found: the readings never depart from the fore-period "
            f"drift by more than {ONSET_SIGMA:g}σ for {m + 1} readings in a row", **where)
    h = int(hits[0])
    confidence = float(min(1.0, zscore[h, 0] / (4.0 * ONSET_SIGMA)))
    return int(J[h]), confidence


def _newtonian_start(H: np.ndarray, t: np.ndarray, lo: int, ref: int, end: int,
                     sigma2: float, z: float, sign: int = 0,
                     z_one: float = 3.0) -> tuple[int, float, float, bool]:
    """Earliest start ``q`` in ``[lo, ref]`` of a Newtonian stretch ``[q, end]`` of ``H``.

    ``H`` is constant (up to a slow linear trend from the provisional fit's errors) wherever
    the record is Newtonian. For each candidate ``q`` a straight line is fitted to
    ``H[q:end+1]`` and the residual means of its first 4, 8, 16, 32 and 64 readings are
    compared with their noise (``z`` standard deviations): a transient that has not died out
    shows there first, where a fit's end point is most sensitive to it. ``q`` is the first
    candidate after the last failing one. With ``sign`` (+1/−1, the event's direction) a
    one-sided departure beyond ``z_one`` also fails: ``H`` is the heat input seen so far, so
    a transient still decaying leaves ``H`` short of its plateau on the side opposite to the
    event (heat still to come).

    Returns ``(q, spread_K, pass_fraction)``: half the difference between the lines' values at
    their starts for ``q`` and for a start midway to ``ref`` (the boundary-choice spread of the
    end-point temperature), and the fraction of candidates from ``q`` to ``ref`` that also pass
    a stricter (2σ) test; and whether the last candidate ``ref`` itself passes.
    """
    tt = t[lo:end + 1] - t[lo]
    hh = H[lo:end + 1] - H[ref]
    m = tt.size
    # candidates: every reading, or every few readings for long records (granularity ≤ 0.25 %
    # of the candidate range; a later t_f is always safe)
    stride = max(1, (ref - lo) // 400)
    s = np.arange(0, ref - lo + 1, stride)
    if s[-1] != ref - lo:
        s = np.append(s, ref - lo)
    X = np.stack([tt, tt * tt, hh, tt * hh])
    St, Stt, Sh, Sth = np.cumsum(X[:, ::-1], axis=1)[:, ::-1][:, s]
    cnt = (m - s).astype(float)
    tbar = St / cnt
    hbar = Sh / cnt
    sxx = np.maximum(Stt - St * tbar, 1e-300)
    slope = (Sth - St * hbar) / sxx
    F = np.zeros((2, m + 1))
    np.cumsum(X[[0, 2]], axis=1, out=F[:, 1:])
    Ft, Fh = F
    bad = np.zeros(s.size, dtype=bool)
    strict = np.zeros(s.size, dtype=bool)
    for b in (4, 8, 16, 32, 64):
        n_ok = int(np.count_nonzero(cnt >= 4 * b))   # a prefix: cnt decreases along s
        if n_ok == 0:
            break
        sb = s[:n_ok]
        bt = (Ft[sb + b] - Ft[sb]) / b
        bh = (Fh[sb + b] - Fh[sb]) / b
        resid = bh - (hbar[:n_ok] + slope[:n_ok] * (bt - tbar[:n_ok]))
        var = sigma2 * np.maximum(1.0 / b - 4.0 / cnt[:n_ok], 0.5 / b)
        zs = resid / np.sqrt(var)
        dev = np.abs(zs)
        bad[:n_ok] |= dev > z
        if sign:
            bad[:n_ok] |= -sign * zs > z_one
        strict[:n_ok] |= dev > 2.0
    bad_idx = np.flatnonzero(bad)
    first = int(bad_idx[-1]) + 1 if bad_idx.size else 0
    first = min(first, s.size - 1)
    alt = first + (s.size - first) // 2
    idx = [first, alt]
    ends = hbar[idx] + slope[idx] * (tt[s[idx]] - tbar[idx])
    return (lo + int(s[first]), 0.5 * abs(float(ends[0] - ends[1])),
            float(np.mean(~strict[first:])), not bool(bad[-1]))


def _provisional(t: np.ndarray, T: np.ndarray, f0: int, f1: int, a0: int,
                 where: dict) -> tuple[NewtonFit, np.ndarray, float]:
    """Provisional joint fit on ``[f0, f1]`` and ``[a0, end]``, the invariant ``H`` and the
    noise variance (AR(1)-inflated) of the readings."""
    try:
        prov = fit_newton(t[f0:f1 + 1], T[f0:f1 + 1], t[a0:], T[a0:])
    except FitError as exc:
        raise PeriodDetectionError(f"cannot fit the drift periods: {exc.message}",
                                   **where) from None
    sigma2 = prov.sigma_K**2 * ar1_inflation(prov.rho1)
    theta = T - prov.reference_temperature_K
    C = np.empty(t.size)
    C[0] = 0.0
    np.cumsum(np.diff(t) * (theta[1:] + theta[:-1]) * 0.5, out=C[1:])
    H = theta - prov.drift_ref_K_per_s * (t - t[0]) + prov.k_per_s * C
    return prov, H, sigma2


def _heater_interval(th: Thermogram, t: np.ndarray) -> tuple[float, float | None] | None:
    volts = th.channels.get("heater_V")
    if volts is None:
        return None
    v = np.abs(np.asarray(volts))
    vmax = float(v.max(initial=0.0))
    if vmax <= 0:
        return None
    on = np.flatnonzero(v > 0.5 * vmax)
    first, last = int(on[0]), int(on[-1])
    if first == 0:
        return None
    off = float(th.time_s[last + 1]) if last + 1 < th.time_s.size else None
    return float(th.time_s[first - 1]), off


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
    >>> from calwork.simulate import CalorimeterParams, CombustionPulse, simulate_run
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
    if n_all < 3 * MIN_PERIOD_READINGS:
        raise PeriodDetectionError("too few readings to find fore, main and after periods",
                                   found=n_all, expected=f"at least {3 * MIN_PERIOD_READINGS}",
                                   **where)
    sigma0 = robust_noise_K(T_all)
    Tm = median_filter(T_all, size=5, mode="nearest")
    event = _locate_event(t_all, Tm, sigma0, where)
    warnings: list[str] = []

    # spikes outside the steep part of the main period
    idx = np.arange(n_all)
    allowed = (idx < event.lo - 2) | (idx > event.hi + 2)
    spikes = find_spikes(T_all, sigma0, threshold=SPIKE_SIGMA, allowed=allowed)
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
    heater = _heater_interval(thermogram, t_all)
    heater_off = heater[1] if heater else None
    try:
        lo_g = int(np.searchsorted(t, t_all[event.lo]))
        j_on, conf = _detect_onset(t, T, sigma0, peak, lo_g, event.sign, where)
        onset_s = float(t[j_on])
    except PeriodDetectionError:
        if fire_time_s is None and heater is None:
            raise
        j_on, conf = None, None
    if fire_time_s is not None:
        t_i, fire_source = float(fire_time_s), "given"
        if onset_s is not None and t_i > onset_s + 0.5 * float(np.median(np.diff(t))):
            warnings.append(warning("fire-time-late", f"the given firing time {t_i:.6g} s is "
                                    f"after the detected onset of the rise at {onset_s:.6g} s"))
    elif heater is not None:
        t_i, fire_source = heater[0], "heater-channel"
    else:
        t_i, fire_source, fire_conf = float(t[j_on - 1]), "detected", conf
    i_f = int(np.searchsorted(t, t_i, side="right")) - 1
    fore_end = i_f - GUARD_READINGS
    if fore_end + 1 < 4:
        fore_end = i_f - (1 if t[i_f] == t_i else 0)
    if fore_end + 1 < 4:
        raise PeriodDetectionError("fore period too short for a drift fit",
                                   found=f"{max(fore_end + 1, 0)} readings before {t_i:.6g} s",
                                   expected="at least 4 (10 recommended)", **where)

    # --- provisional fit on the surely-Newtonian parts, then the plateau tests ---
    lo_after = max(peak, hi if heater_off is None else int(np.searchsorted(t, heater_off)), i_f + 1)
    if main_end_s is not None:
        lo_after = max(i_f + 1, min(lo_after, int(np.searchsorted(t, main_end_s))))
    if n - lo_after < 4:
        raise PeriodDetectionError("after period too short: the record ends during the main "
                                   "period", found=f"{n - lo_after} readings after "
                                   f"{t[min(lo_after, n - 1)]:.6g} s", expected="at least 4",
                                   **where)
    ref_after = lo_after + max(int(0.4 * (n - lo_after)), 0)
    ref_after = min(ref_after, n - 4)
    ref_fore = int(0.3 * fore_end)
    if fore_end - ref_fore + 1 < 4:
        ref_fore = max(0, fore_end - 3)
    prov, H, sigma2 = _provisional(t, T, ref_fore, fore_end, ref_after, where)
    spread = None
    end_conf = None
    if main_end_s is not None:
        t_f, end_source = float(main_end_s), "given"
        q_f = int(np.searchsorted(t, t_f))
        q_det, *_ = _newtonian_start(H, t, lo_after, ref_after, n - 1, sigma2, PLATEAU_Z,
                                      event.sign)
        if q_det > q_f and t[q_det] > t_f:
            warnings.append(warning("main-end-early", f"the given end of the main period "
                                    f"{t_f:.6g} s is before the detected plateau at "
                                    f"{t[q_det]:.6g} s"))
    else:
        q_f, spread, end_conf, ref_ok = _newtonian_start(H, t, lo_after, ref_after, n - 1,
                                                         sigma2, PLATEAU_Z, event.sign)
        last = n - max(2 * MIN_PERIOD_READINGS, (n - lo_after) // 5)
        if not ref_ok and last > ref_after:
            # the transient outlives the reference part: search on, with a later reference
            prov, H, sigma2 = _provisional(t, T, ref_fore, fore_end, last, where)
            q_f, spread, end_conf, ref_ok = _newtonian_start(H, t, ref_after, last, n - 1,
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
    fore_start, *_ = _newtonian_start(H, t, 0, ref_fore, fore_end, sigma2, FORE_TRIM_Z)
    if fore_start > 0:
        warnings.append(warning("fore-not-newtonian", f"the first {fore_start} readings (to "
                                f"t = {t[fore_start - 1]:.6g} s) depart from the steady drift "
                                "and are left out of the fore period"))
    if q_f >= n - 1 or fore_end <= fore_start:
        raise PeriodDetectionError("after period too short for a drift fit", **where)
    periods_warn = _length_warnings(t, fore_start, fore_end, q_f, n)
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

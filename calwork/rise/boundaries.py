"""Statistical boundary tests of the period detection (docs/methods.md §1.7), vectorised.

* :func:`locate_event` — the steepest departure of the smoothed slope (rough main period);
* :func:`detect_onset` — the onset rule: departure from a trailing drift line by more than
  5σ for five readings in a row;
* :func:`provisional_fit` — a joint Newtonian fit of surely-Newtonian parts and the invariant
  ``H(t) = T(t) − ∫₀ᵗ g(T) dt`` (constant wherever the record is Newtonian);
* :func:`newtonian_start` — the earliest start of a stretch where ``H`` is flat to the noise;
* :func:`heater_interval` — switch-on and switch-off from a ``heater_V`` channel.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calwork.core.errors import FitError, PeriodDetectionError
from calwork.core.numeric import median
from calwork.core.thermogram import Thermogram
from calwork.rise.diagnostics import ar1_inflation
from calwork.rise.newton import NewtonFit, fit_newton

__all__ = ["Event", "detect_onset", "heater_interval", "locate_event", "newtonian_start",
           "provisional_fit"]

#: Onset threshold (× σ) and persistence (readings that must stay above it), docs/methods.md §1.7.
ONSET_SIGMA = 5.0
ONSET_PERSISTENCE = 4


@dataclass(frozen=True, eq=False)
class Event:
    """Rough location of the heat event (reading indices) and its direction."""

    peak: int          # reading index of the steepest slope
    lo: int            # first reading of the steep region
    hi: int            # last reading of the steep region
    sign: int


def locate_event(t: np.ndarray, Tm: np.ndarray, sigma: float, where: dict) -> Event:
    """The steepest departure of the slope over ~30 s of the (median-filtered) record ``Tm``
    from the record's median slope; :class:`PeriodDetectionError` if it is within the noise
    (12 × the slope noise ``σ√2/(w Δt)``)."""
    n = t.size
    dt = median(np.diff(t))
    w = int(min(max(2, round(30.0 / dt)), max(2, n // 10)))
    slope = (Tm[w:] - Tm[:-w]) / (t[w:] - t[:-w])
    dev = slope - median(slope)
    j = int(np.argmax(np.abs(dev)))
    dev_max = abs(float(dev[j]))
    slope_noise = sigma * np.sqrt(2.0) / (w * dt)
    if dev_max < 12.0 * slope_noise:
        raise PeriodDetectionError(
            "no heat event found: the largest change of drift rate is within the noise",
            found=f"{dev_max:.3g} K/s", expected=f"more than {12.0 * slope_noise:.3g} K/s",
            **where)
    steep = np.flatnonzero(np.abs(dev) > 0.1 * dev_max)
    sign = 1 if dev[j] > 0 else -1
    # the steepest reading inside the window [j, j + w]: for a smooth rise near its middle;
    # for a step (one body, no thermometer lag, rise within one reading) every window that
    # holds the step has the same slope and argmax takes the first, whose middle j + w/2 is
    # readings before the step — the onset search, which ends at the peak, then missed it
    peak = j + 1 + int(np.argmax(sign * np.diff(Tm[j:j + w + 1])))
    return Event(peak=peak, lo=int(steep[0]), hi=int(min(steep[-1] + w, n - 1)), sign=sign)


def detect_onset(t: np.ndarray, T: np.ndarray, sigma: float, peak: int, lo: int, sign: int,
                  where: dict) -> tuple[int, float]:
    """Index of the first departing reading and the fire-confidence score.

    The search starts a little before the steep part of the event (``2W`` readings, or three
    times the steep part's lead to the peak, before ``lo``), so that a slow settling of the
    calorimeter early in the fore period is not taken for the onset; if nothing departs
    there, the whole fore record is searched.
    """
    m = ONSET_PERSISTENCE
    dt = median(np.diff(t))
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


#: Readings between the end of the main period and the first candidate start scored for
#: :func:`newtonian_start`'s plateau score: the largest block of the plateau test (64), so the
#: scored candidates share no block with the last failing one (derived; see the docstring).
SCORE_GAP_READINGS = 64


#: Block sizes of the plateau test, readings (a column: one row per size).
_BLOCKS = np.array([[4.0], [8.0], [16.0], [32.0], [64.0]])


def _running_sums(tt: np.ndarray, hh: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The sums :func:`_block_tests` needs, shared by its calls on one stretch: the sums of
    ``t, t², h, t·h`` from each reading to the end (4 × m), and the running sums of ``t`` and
    ``h`` from the start (2 × (m + 1))."""
    X = np.stack([tt, tt * tt, hh, tt * hh])
    tail = np.cumsum(X[:, ::-1], axis=1)[:, ::-1]
    head = np.zeros((2, tt.size + 1))
    np.cumsum(X[[0, 2]], axis=1, out=head[:, 1:])
    return tail, head


def _block_tests(tt: np.ndarray, hh: np.ndarray, s: np.ndarray, sigma2: float, z: float,
                 sign: int, z_one: float,
                 sums: tuple[np.ndarray, np.ndarray] | None = None) -> tuple[np.ndarray, ...]:
    """Plateau test of candidate starts ``s`` (indices into ``tt``/``hh``): for each, a line
    fitted to ``hh[s:]`` and the residual means of its first 4…64 readings against their
    noise. Returns ``(bad, strict, tbar, hbar, slope)``: failing at ``z`` (or one-sided at
    ``z_one`` against ``sign``), failing a 2σ test, and the fitted lines. ``sums``: those of
    :func:`_running_sums` for ``tt``, ``hh`` (computed here if not given)."""
    m = tt.size
    tail, (Ft, Fh) = sums if sums is not None else _running_sums(tt, hh)
    St, Stt, Sh, Sth = tail[:, s]
    cnt = (m - s).astype(float)
    tbar = St / cnt
    hbar = Sh / cnt
    sxx = np.maximum(Stt - St * tbar, 1e-300)
    slope = (Sth - St * hbar) / sxx
    # the five block sizes at once (rows); a block size applies where the line has at least
    # four blocks of it (``ok``)
    b = _BLOCKS
    ok = cnt[None, :] >= 4 * b
    start = s[None, :]
    end = np.minimum(start + b, m).astype(np.intp)
    bt = (Ft[end] - Ft[start]) / b
    bh = (Fh[end] - Fh[start]) / b
    resid = bh - (hbar + slope * (bt - tbar))
    # exact variance of a block's mean residual about a line fitted to all cnt readings:
    # σ² [1/b − 1/n − (t̄_B − t̄)²/Sxx]; entries outside ``ok`` (a line of a few readings,
    # Sxx ≈ 0) may overflow there and are discarded
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        var = sigma2 * np.maximum(1.0 / b - 1.0 / cnt - (bt - tbar) ** 2 / sxx, 0.05 / b)
        zs = resid / np.sqrt(var)
    dev = np.abs(zs)
    fail = dev > z
    if sign:
        fail |= -sign * zs > z_one
    bad = np.any(fail & ok, axis=0)
    strict = np.any((dev > 2.0) & ok, axis=0)
    return bad, strict, tbar, hbar, slope


def newtonian_start(H: np.ndarray, t: np.ndarray, lo: int, ref: int, end: int,
                     sigma2: float, z: float, sign: int = 0,
                     z_one: float = 3.0) -> tuple[int, float, float | None, bool]:
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

    Returns ``(q, spread_K, score, ref_ok)``: half the difference between the lines' values at
    their starts for ``q`` and for a start midway to ``ref`` (the boundary-choice spread of the
    end-point temperature); the plateau score; and whether the last candidate ``ref`` itself
    passes.

    The score is the fraction of candidate starts from ``q`` + :data:`SCORE_GAP_READINGS` to
    16 readings before ``end`` (every reading, or ~100 evenly spaced) that also pass a
    stricter (2σ) test; ``None`` when there is no such candidate. On a record that is
    Newtonian from ``q`` on it is the pass rate of pure noise (≈ 0.6–1); a departure that
    lingers just under the ``z`` threshold through the after period drives it towards 0.
    The gap matters: the candidates right after ``q`` share their blocks with the last
    failing candidate ``q − 1`` (that is why it failed), so they sit near ``z`` by
    construction and fail the 2σ test on a clean record too (derived: a block residual mean
    changes by O(1/b) of a reading's noise from one start to the next).
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
    sums = _running_sums(tt, hh)
    bad, _, tbar, hbar, slope = _block_tests(tt, hh, s, sigma2, z, sign, z_one, sums)
    bad_idx = np.flatnonzero(bad)
    first = int(bad_idx[-1]) + 1 if bad_idx.size else 0
    first = min(first, s.size - 1)
    alt = first + (s.size - first) // 2
    idx = [first, alt]
    ends = hbar[idx] + slope[idx] * (tt[s[idx]] - tbar[idx])
    q_rel = int(s[first])
    # plateau score on candidates that share no block with the last failing one
    s0, s1 = q_rel + SCORE_GAP_READINGS, m - 16
    score = None
    if s1 >= s0:
        sc = np.arange(s0, s1 + 1, max(1, (s1 - s0) // 100))
        strict = _block_tests(tt, hh, sc, sigma2, z, sign, z_one, sums)[1]
        score = float(np.mean(~strict))
    return (lo + q_rel, 0.5 * abs(float(ends[0] - ends[1])), score, not bool(bad[-1]))


def provisional_fit(t: np.ndarray, T: np.ndarray, f0: int, f1: int, a0: int,
                 where: dict) -> tuple[NewtonFit, np.ndarray, float]:
    """Provisional joint fit on ``[f0, f1]`` and ``[a0, end]``, the invariant ``H`` and the
    noise variance (AR(1)-inflated) of the readings."""
    try:
        prov = fit_newton(t[f0:f1 + 1], T[f0:f1 + 1], t[a0:], T[a0:])
    except FitError as exc:
        raise PeriodDetectionError(f"cannot fit the drift periods: {exc.message}",
                                   **where) from None
    # floor: the floating-point resolution of the readings (a noise-free record fits exactly)
    floor = 4.0 * np.finfo(float).eps * float(np.max(np.abs(T)))
    sigma2 = max(prov.sigma_K**2 * ar1_inflation(prov.rho1), floor * floor)
    theta = T - prov.reference_temperature_K
    C = np.empty(t.size)
    C[0] = 0.0
    np.cumsum(np.diff(t) * (theta[1:] + theta[:-1]) * 0.5, out=C[1:])
    H = theta - prov.drift_ref_K_per_s * (t - t[0]) + prov.k_per_s * C
    return prov, H, sigma2


def heater_interval(th: Thermogram, t: np.ndarray) -> tuple[float, float | None] | None:
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

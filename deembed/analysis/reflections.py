"""Reflections along the line: peaks of the transformed sweep, the far end, and the line's length.

Takes a :class:`~deembed.physics.timedomain.Response` and (optionally) a
:class:`~deembed.physics.runmap.RunMap`, and returns plain results: each reflection's one-way delay and
distance, its return loss as seen at the analyzer and as it is at its place (the line's two-way loss
taken off), its width, and which one is most likely the far end.

Peak rules (our choices, common practice, no source):

* a peak is a local maximum of the trace's magnitude at least ``threshold_db`` below the strongest
  (default 30 dB, inside the default window's side-lobe level of about 44 dB) and, when a floor is
  given, with a seen return loss at or below ``floor_db``;
* a peak must stand out: its prominence, the height in dB above the higher of the two valleys that part it
  from higher parts of the trace (or from the trace's ends where there is none, as
  ``scipy.signal.peak_prominences`` defines it; a peak at the first sample is judged by its inner side alone),
  must be at least :data:`PROMINENCE_DB` (3 dB). A shoulder on the flank or tail of a larger peak (a bump
  on the far end's tail, a ripple on a main lobe) has a valley a fraction of a dB below it and is not listed;
  two reflections far enough apart to be told apart have a valley between them deeper than that;
* peaks closer together than half the trace's own width are one reflection (the stronger one kept);
* its position and height come from a parabola through the three samples around the maximum of the
  magnitude in dB (the main lobe is close to a Gaussian, whose logarithm is a parabola);
* the far end is the strongest reflection more than one resolution away from the analyzer (compared
  as at their places when the loss is known): a line's end (an antenna off resonance over most of a
  wide sweep, an open or a short) reflects much more than a joint along it. Peaks past it are
  echoes between reflections (their delays add up) or a line that goes on.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..base.units import fmt_freq
from ..physics import timedomain as td

DEFAULT_THRESHOLD_DB = 30.0
PROMINENCE_DB = 3.0  # a peak stands at least this far above the valley that parts it from higher ground
NEAR_TOTAL = 0.7  # |Gamma| at the point above which a far end is called an open or short


@dataclass
class Reflection:
    delay_s: float                 # one-way
    distance_m: float | None
    gamma_seen: float              # peak height (magnitude) at the analyzer
    gamma_at_point: float | None   # with the two-way loss before it taken off
    width_s: float                 # one-way width at half height
    width_m: float | None
    sign: int = 0                  # low-pass only: +1 (toward open / higher impedance), -1 (toward short / lower)
    far_end: bool = False
    kind: str = ""

    @property
    def return_loss_db(self) -> float:
        return float(-20 * np.log10(self.gamma_seen))

    @property
    def return_loss_at_point_db(self) -> float | None:
        return None if self.gamma_at_point is None else float(-20 * np.log10(self.gamma_at_point))

    def to_dict(self) -> dict:
        return {
            "distance_m": self.distance_m,
            "one_way_delay_ns": self.delay_s * 1e9,
            "return_loss_db": self.return_loss_db,
            "return_loss_at_point_db": self.return_loss_at_point_db,
            "gamma_seen": self.gamma_seen,
            "gamma_at_point": self.gamma_at_point,
            "width_m": self.width_m,
            "width_ns": self.width_s * 1e9,
            "sign": self.sign or None,
            "far_end": self.far_end,
            "kind": self.kind,
        }


@dataclass
class LengthEstimate:
    far_end_m: float | None
    far_end_delay_s: float | None
    resolution_m: float | None
    resolution_s: float
    described_m: float | None = None
    described_delay_s: float | None = None
    vf_estimate: float | None = None
    agrees: bool | None = None
    verdict: str = ""

    def to_dict(self) -> dict:
        return {
            "far_end_m": self.far_end_m,
            "far_end_one_way_delay_ns": None if self.far_end_delay_s is None else self.far_end_delay_s * 1e9,
            "resolution_m": self.resolution_m,
            "described_length_m": self.described_m,
            "described_one_way_delay_ns": None if self.described_delay_s is None else self.described_delay_s * 1e9,
            "velocity_factor_estimate": self.vf_estimate,
            "agrees_with_description": self.agrees,
            "verdict": self.verdict,
        }


@dataclass
class Findings:
    reflections: list = field(default_factory=list)
    length: LengthEstimate | None = None
    compensated: bool = False
    notes: list = field(default_factory=list)


def find_peaks(t_s, mag, width_s: float, threshold_db: float = DEFAULT_THRESHOLD_DB, floor_gamma: float = 0.0,
               t_max_s: float | None = None, prominence_db: float = PROMINENCE_DB):
    """Peaks of a magnitude trace: arrays (time, height, half-height width), time order.

    Vectorised: local maxima by neighbour comparison, kept when at least ``prominence_db`` prominent
    (:func:`prominence_db`), refined by a parabola in dB.
    """
    mag = np.asarray(mag, dtype=float)
    t = np.asarray(t_s, dtype=float)
    n = mag.size
    dt = t[1] - t[0]
    stop = n if t_max_s is None else int(min(n, np.searchsorted(t, t_max_s)))
    if stop < 3:
        return np.empty(0), np.empty(0), np.empty(0)
    mm = mag[:stop]
    strongest = float(mm.max())
    if not strongest > 0:
        return np.empty(0), np.empty(0), np.empty(0)
    level = max(strongest * 10 ** (-threshold_db / 20), floor_gamma)
    inner = mm[1:-1]
    idx = np.nonzero((inner > mm[:-2]) & (inner >= mm[2:]) & (inner >= level))[0] + 1
    # the first sample: time 0 is a peak when the trace falls from it (a reflection right at the analyzer)
    if mm[0] >= level and mm[0] > mm[1]:
        idx = np.concatenate([[0], idx])
    if idx.size == 0:
        return np.empty(0), np.empty(0), np.empty(0)
    db = 20 * np.log10(np.maximum(mag, 1e-300))
    if prominence_db > 0:
        idx = idx[prominence(db[:stop], idx) >= prominence_db]
    # merge peaks closer than half a width: keep the strongest of each cluster (greedy, strongest first)
    order = idx[np.argsort(-mm[idx])]
    min_sep = max(int(round(0.5 * width_s / dt)), 1)
    kept = []
    for i in order:  # a handful of peaks, not frequency points
        if all(abs(i - k) >= min_sep for k in kept):
            kept.append(i)
    idx = np.sort(np.array(kept, dtype=int))
    # parabolic refinement in dB (edge samples are left as they are)
    i0 = np.clip(idx, 1, n - 2)
    y0, y1, y2 = db[i0 - 1], db[i0], db[i0 + 1]
    den = y0 - 2 * y1 + y2
    with np.errstate(divide="ignore", invalid="ignore"):
        off = np.where(den < 0, 0.5 * (y0 - y2) / den, 0.0)
    off = np.where(idx == i0, np.clip(off, -0.5, 0.5), 0.0)
    peak_db = y1 - 0.25 * (y0 - y2) * off
    peak_db = np.where(idx == i0, peak_db, db[idx])
    times = t[idx] + off * dt
    heights = 10 ** (peak_db / 20)
    widths = np.array([_half_width(mag, i, dt) for i in idx])
    return times, heights, widths


def prominence(y, idx) -> np.ndarray:
    """Topographic prominence of the peaks ``idx`` of the trace ``y`` (dB in, dB out).

    On each side, the lowest value between the peak and the nearest sample higher than it (or the trace's
    end when there is none); the prominence is the peak's height above the higher of the two (the definition
    of ``scipy.signal.peak_prominences``). A peak at the first or last sample has one side, and that one counts.
    One peak at a time (there are a handful), each a pass over the trace.
    """
    y = np.asarray(y, dtype=float)
    n = y.size
    out = np.empty(len(idx))
    for k, i in enumerate(np.asarray(idx, dtype=int)):
        top = y[i]
        bases = []
        if i > 0:
            higher = np.flatnonzero(y[:i] > top)
            side = y[(higher[-1] + 1 if higher.size else 0):i]
            bases.append(side.min() if side.size else top)  # a higher neighbour: not a peak at all
        if i < n - 1:
            higher = np.flatnonzero(y[i + 1:] > top)
            side = y[i + 1:(i + 1 + higher[0] if higher.size else n)]
            bases.append(side.min() if side.size else top)
        out[k] = top - max(bases) if bases else np.inf
    return out


def _half_width(mag, i: int, dt: float) -> float:
    """Width at half the peak's height, by linear interpolation on each side (one peak)."""
    half = mag[i] / 2
    n = mag.size
    right = np.nonzero(mag[i:min(n, i + 4096)] < half)[0]
    left = np.nonzero(mag[max(0, i - 4096):i + 1][::-1] < half)[0]
    r = right[0] if right.size else None
    l_ = left[0] if left.size else None
    if r is None and l_ is None:
        return float("nan")
    side = []
    for k, sgn in ((r, 1), (l_, -1)):
        if k is None:
            continue
        j = i + sgn * k
        prev = j - sgn
        frac = (mag[prev] - half) / (mag[prev] - mag[j]) if mag[prev] != mag[j] else 0.0
        side.append((k - 1 + frac) * dt)
    return float(2 * np.mean(side)) if len(side) == 1 or i == 0 else float(sum(side))


def reflections(resp: td.Response, grid: td.Grid, runmap=None, threshold_db: float = DEFAULT_THRESHOLD_DB,
                floor_db: float | None = None, pad: int = td.DEFAULT_PAD, beta: float = td.DEFAULT_KAISER_BETA,
                ) -> Findings:
    """The reflections along the line, the far end and the line's length (see the module notes)."""
    width_rt = td.pulse_width_s(grid, beta, resp.mode, pad)
    guard = 2 * width_rt
    floor_gamma = 10 ** (-floor_db / 20) if floor_db is not None else 0.0
    times, heights, widths = find_peaks(resp.t_s, resp.magnitude, width_rt, threshold_db, floor_gamma,
                                        t_max_s=min(td.alias_free_s(grid), resp.covers_s) - guard)
    tau = times / 2
    dist = runmap.distance_m(tau) if runmap is not None and len(tau) else None
    at_point = None
    out = Findings(notes=list(resp.notes))
    if runmap is not None and runmap.has_loss and len(tau):
        factor = td.two_way_factor(resp.weights, grid.freq_hz, runmap.loss_np, tau)
        at_point = heights / factor
        out.compensated = True
        past = runmap.delay_s is not None and np.any(tau > runmap.delay_s * 1.02)
        if past:
            out.notes.append("reflections past the described line's end are compensated as if the line went on "
                             "like its last section")
    # width in metres: through the velocity factor at the peak
    refl = []
    for i in range(len(tau)):
        d = float(dist[i]) if dist is not None else None
        w_m = None
        if dist is not None:
            lo, hi = runmap.distance_m(np.array([tau[i] - widths[i] / 4, tau[i] + widths[i] / 4]))
            w_m = float(hi - lo)
        sign = 0
        if resp.mode == "low-pass":
            j = int(np.argmin(np.abs(resp.t_s - times[i])))
            sign = 1 if resp.amplitude[j] >= 0 else -1
        refl.append(Reflection(float(tau[i]), d, float(heights[i]),
                               None if at_point is None else float(at_point[i]), float(widths[i] / 2), w_m, sign))
    out.reflections = refl
    if refl:
        comp = [r.gamma_at_point if r.gamma_at_point is not None else r.gamma_seen for r in refl]
        away = [i for i, r in enumerate(refl) if r.delay_s > resp_res_one_way(grid, resp.mode)]
        if away:
            i_fe = max(away, key=lambda i: comp[i])
            fe = refl[i_fe]
            fe.far_end = True
            fe.kind = far_end_kind(fe)
            for r in refl[i_fe + 1:]:
                r.kind = "past the far end: an echo between reflections, or the line goes on"
        near = resp_res_one_way(grid, resp.mode)
        for r in refl:
            if r.delay_s <= near and not r.far_end:
                r.kind = "at the analyzer end: its connector, an adapter or the jumper"
            elif not r.kind:
                r.kind = "along the line: a connector, splice, damage or a change of cable"
    out.length = length_estimate(out.reflections, grid, resp.mode, runmap)
    return out


def resp_res_one_way(grid: td.Grid, mode: str) -> float:
    return td.resolution_s(grid, mode) / 2


def far_end_kind(r: Reflection) -> str:
    if r.sign > 0:
        return "far end: open or high impedance (antenna off resonance, or an open)"
    if r.sign < 0:
        return "far end: short or low impedance (a short, or a DC-grounded antenna)"
    g = r.gamma_at_point if r.gamma_at_point is not None else r.gamma_seen
    if g >= NEAR_TOTAL:
        return "far end: antenna off resonance, an open or a short (near-total reflection)"
    return "far end: antenna (partial reflection)"


def length_estimate(refl, grid: td.Grid, mode: str, runmap=None) -> LengthEstimate:
    """The far end's distance (or delay) with the resolution, against the description when there is one."""
    res_s = td.resolution_s(grid, mode) / 2  # one way
    fe = next((r for r in refl if r.far_end), None)
    res_m = span_m(runmap, res_s)
    est = LengthEstimate(fe.distance_m if fe else None, fe.delay_s if fe else None, res_m, res_s)
    if runmap is not None:
        est.described_m = runmap.length_m
        est.described_delay_s = runmap.delay_s
    if fe is None:
        est.verdict = "no far end found (no reflection away from the analyzer)"
        return est
    if est.far_end_m is not None and est.described_m is not None:
        diff = est.far_end_m - est.described_m
        agree = abs(diff) <= res_m
        est.agrees = bool(agree)
        est.verdict = (f"the description says {est.described_m:.1f} m; the sweep puts the far end at "
                       f"{est.far_end_m:.1f} m (resolution {res_m:.2f} m): "
                       + ("they agree within the resolution" if agree else
                          f"{abs(diff):.1f} m {'longer' if diff > 0 else 'shorter'} than described, more than the "
                          "resolution: check the length, the velocity factor, or what is at the end"))
    elif est.described_delay_s is not None:
        diff = fe.delay_s - est.described_delay_s
        agree = abs(diff) <= res_s
        est.agrees = bool(agree)
        est.verdict = (f"the description says {est.described_delay_s * 1e9:.1f} ns one way; the sweep puts the far end "
                       f"at {fe.delay_s * 1e9:.1f} ns (resolution {res_s * 1e9:.2f} ns): "
                       + ("they agree within the resolution" if agree else "they differ by more than the resolution"))
    elif est.far_end_m is not None:
        est.verdict = f"the sweep puts the far end at {est.far_end_m:.1f} m (resolution {res_m:.2f} m)"
    else:
        est.verdict = (f"the sweep puts the far end at {fe.delay_s * 1e9:.1f} ns one way (resolution "
                       f"{res_s * 1e9:.2f} ns); a velocity factor would give a distance")
    return est


def vf_from_length(length_m: float, delay_s: float) -> float:
    """Velocity factor of a run of known length whose far end sits at a one-way delay."""
    return length_m / (td.C0_M_PER_S * delay_s)


def sweep_needed(resolve_m: float, vf: float, reach_m: float | None, mode: str = "band-pass") -> dict:
    """The sweep that would resolve ``resolve_m`` (one way) and reach ``reach_m`` without aliasing."""
    v = vf * td.C0_M_PER_S
    res_s = 2 * resolve_m / v
    out = {"resolve_m": resolve_m, "span_hz": td.span_for_resolution_hz(res_s, "band-pass"),
           "lowpass_high_hz": td.span_for_resolution_hz(res_s, "low-pass")}
    if reach_m:
        out["reach_m"] = reach_m
        out["max_step_hz"] = td.step_for_range_hz(2 * reach_m / v)
    return out


RESOLVE_FRACTION = 5      # a sweep "resolves the line" when its resolution is a fifth of the line or finer
REACH_MARGIN = 1.5        # ... and its alias-free range reaches 1.5 times the line's length


def span_m(runmap, span_s: float) -> float | None:
    """A one-way delay span (a resolution, a trace width) in metres on this line, or None when no velocity
    factor is known.

    One conversion for every such figure (``locate``'s resolution, ``correct``'s "along the line" note, the
    length estimate), so the same sweep and line print the same resolution everywhere: at the described line's
    mean velocity, its length over its one-way delay, when the description gives both (a line of sections of
    different velocity factor: a jumper and a main run); otherwise through the run map from the analyzer end
    (one velocity factor: ``--vf`` or a catalog cable).
    """
    if runmap is None or not runmap.knows_distance:
        return None
    if runmap.length_m and runmap.delay_s:
        return float(span_s * runmap.length_m / runmap.delay_s)
    a, b = runmap.distance_m(np.array([0.0, span_s]))
    return float(b - a)


def resolves_line(grid: td.Grid, runmap, mode: str = "band-pass") -> tuple[bool, str]:
    """Whether a sweep can show where along a line reflections sit, and if not, a one-line statement of the
    sweep that would (our criterion: resolution at most a fifth of the line's one-way delay, alias-free range
    at least 1.5 times it; common practice, no source). The resolution is the transform's (``mode``) converted
    to metres by :func:`span_m`, the same figure ``locate`` prints."""
    delay_s = runmap.delay_s if runmap is not None else None
    if not delay_s or delay_s <= 0:
        return False, "the line's delay is unknown, so whether this sweep resolves it cannot be said"
    res = td.resolution_s(grid, mode) / 2
    reach = td.alias_free_s(grid) / 2
    ok = res <= delay_s / RESOLVE_FRACTION and reach >= REACH_MARGIN * delay_s
    need_span = td.span_for_resolution_hz(2 * delay_s / RESOLVE_FRACTION)
    need_step = td.step_for_range_hz(2 * REACH_MARGIN * delay_s)
    res_m = span_m(runmap, res)
    if res_m is not None and runmap.length_m is not None:
        where = f"{res_m:.2f} m resolution over a {runmap.length_m:.1f} m line"
    else:
        where = f"{res * 1e9:.1f} ns resolution over a {delay_s * 1e9:.1f} ns line"
    if ok:
        return True, f"this sweep resolves the line ({where})"
    return False, (f"this sweep ({fmt_freq(grid.low_hz)} to {fmt_freq(grid.high_hz)}) is too narrow to show where "
                   f"along the line reflections sit ({where}); a sweep at least {fmt_freq(need_span, 3)} wide "
                   f"in steps of at most {fmt_freq(need_step, 3)} would (see deembed locate)")

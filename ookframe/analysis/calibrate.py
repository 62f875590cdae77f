"""Calibration: what a captured link does, measured against the frames it carried.

``calibrate(spec, train)`` decodes the capture, re-encodes every frame whose check passes,
matches its ideal edges with the captured ones and fits each frame
(:mod:`.edge_fit`), then estimates every impairment of the channel model with a 95 %
interval and the number of edges, pulses or frames it rests on (:mod:`.link_estimates`):

* mark bias: mean error of the mark lengths (captured - fitted ideal; positive = marks
  longer, as ``ChannelSpec.mark_bias_us``), after the settling time (default the
  preamble, where a receiver's slicer settles; its marks' bias is reported apart);
* edge jitter: residual scatter of the fitted edges, its shape (Gaussian or uniform);
* clock error and drift: the frames' clock scales (with repeats: a line through the
  frames of whole transmissions against the time since the transmission began; else the
  scale at the frame start and the curvature of each frame's fit);
* output quantisation: a lattice in the differences of durations that should be equal;
* idle noise: pulses between frames (rate, mean width, the quiet time after a frame);
* glitches: captured pulses inside frames that no ideal edge explains.

What the capture cannot tell is listed in ``unknown`` with the reason (the channel keeps
the model's default there) and in ``warnings``. Any ``PulseTrain`` will do: pulse
captures (CSV, JSON, VCD) or the pulses sliced from sampled ones.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Any

import numpy as np

from .._require import require_int, require_spec, require_train
from ..channel.linkfile import Estimate, LinkFile
from ..channel.model import ChannelSpec
from ..decode import decode
from ..errors import CaptureError, ValueRangeError
from ..plan import compile_plan
from ..pulses import PulseTrain, merge_runs
from ..spec.model import FrameSpec
from . import link_estimates as est
from .edge_fit import CaptureEdges, FrameFits, fit_frames

#: fewer fitted frames than this draws a warning: intervals over frames rest on few
FEW_FRAMES = 10
#: idle noise simulated before and after each transmission when noise is seen (a modelling
#: choice, as the presets make it)
IDLE_LEAD_US = 20000.0
#: fewest idle-noise pulses for a width and rate estimate without a warning
FEW_NOISE_PULSES = 30


@dataclass(frozen=True)
class Calibration:
    """The result of :func:`calibrate`.

    ``channel``: the channel model with every measured value (model defaults elsewhere);
    ``estimates``: every figure with its interval; ``unknown``: (name, reason) pairs;
    ``warnings``: cautions in words; ``counts``: (name, number) pairs of what was used.
    """

    channel: ChannelSpec
    estimates: tuple[Estimate, ...]
    unknown: tuple[tuple[str, str], ...]
    warnings: tuple[str, ...]
    counts: tuple[tuple[str, int | float], ...]

    def estimate(self, name: str) -> Estimate | None:
        """Return the estimate called ``name``, or None."""
        return next((e for e in self.estimates if e.name == name), None)

    def link(self, source: tuple[tuple[str, str | int | float], ...] = ()) -> LinkFile:
        """Return the channel file of this calibration (``source``: where it came from)."""
        return LinkFile(self.channel, self.estimates, self.unknown, self.warnings,
                        tuple(source) + self.counts)

    def to_dict(self) -> dict[str, Any]:
        """Return the calibration as a plain dict (JSON-ready)."""
        return {"channel": self.channel.to_dict(),
                "estimates": {e.name: e.to_dict() for e in self.estimates},
                "unknown": dict(self.unknown), "warnings": list(self.warnings),
                "counts": dict(self.counts)}


def calibrate(spec: FrameSpec, train: PulseTrain, *, seed: int = 0,
              settle_us: float | None = None) -> Calibration:
    """Return the link's impairments measured from ``train``, a capture holding frames of
    ``spec``; ``seed`` seeds the bootstrap intervals. ``settle_us``: the ideal time from
    each frame's start whose edges are matched but left out of the fits and the figures
    (default: the preamble, over which a receiver's data slicer settles; 0: every edge).
    ``CaptureError`` when no frame with a passing check is found (nothing to measure
    against)."""
    require_spec(spec, "spec")
    require_train(train, "train")
    require_int(seed, "seed")
    plan = compile_plan(spec)
    if settle_us is None:
        settle_us = preamble_us(plan)
    elif not (isinstance(settle_us, int | float) and 0 <= settle_us < 1e12):
        raise ValueRangeError(f"settle_us: must be a number >= 0, got {settle_us!r}")
    rng = np.random.default_rng(seed)
    frames = decode(spec, train, include_bad=True)
    good = [f for f in frames if f.crc_ok]
    n_bad = len(frames) - len(good)
    if not good:
        raise CaptureError(
            f"no frame of {spec.name} with a passing check in the capture ({n_bad} failed "
            "their check): nothing to calibrate against; check the spec and the capture")
    cap = CaptureEdges.of(train)
    fits = fit_frames(plan, cap, [f.fields for f in good], np.array([f.start_us for f in good]),
                      np.array([f.unit_us for f in good]), settle_us=settle_us)
    n_ok = int(fits.ok.sum())
    if n_ok == 0:
        raise CaptureError(f"{len(good)} frame(s) decoded but none had {12} edges matching "
                           "the re-encoded frame: nothing to calibrate against")
    out = _Collect()
    warn = out.warnings
    if n_ok < FEW_FRAMES:
        warn.append(f"only {n_ok} frame(s) fitted: intervals over frames rest on few frames "
                    "and may be wide or missing; record 30 or more transmissions")
    if n_bad:
        warn.append(f"{n_bad} frame(s) failed their check and were not used (they may carry "
                    "lost marks or heavy interference the estimates do not see)")
    if fits.outliers > 0.005 * max(int(fits.used.sum()), 1):
        warn.append(f"{fits.outliers} matched edges lay more than {6} robust sigmas off their "
                    "fit and were left out of the jitter (interference or a poor capture?)")
    merged = merge_runs(train.levels, train.durations_us)
    resolution = est.capture_resolution_us(merged.durations_us)

    out.add(est.mean_t("mark_bias_us", _mark_errors(fits, cap), "marks", "us",
                       "captured mark length - fitted ideal length"))
    out.add(_settling_bias(fits, cap, settle_us))
    quant = est.quantisation(_equal_pulse_diffs(fits, cap, plan.unit_us), resolution,
                             fits.sigma_us)
    out.add(quant)
    step = quant.value if isinstance(quant, Estimate) else 0.0
    jit = est.jitter(fits.residual_us[fits.used], fits.dof, float(step), rng)
    for e in (jit.value, jit.shape, jit.sigma):
        out.add(e)
    if isinstance(jit.shape, Estimate) and jit.shape.note:
        warn.append(f"jitter shape: {jit.shape.note}")
    for e in _clock(fits, good, plan.repeats, plan.gap_us, plan.unit_us, warn):
        out.add(e)
    for e in _glitches(fits, cap):
        out.add(e)
    for e in _idle(fits, frames, good, cap, merged.total_us, plan.unit_us, float(step),
                   rng, warn):
        out.add(e)
    out.blind(est.Blind("dropout_prob", "a lost mark breaks the frame's check and calibrate "
                        f"uses only frames that pass it ({n_bad} failed); compare the "
                        "transmissions sent with the frames decoded to measure it"))
    channel = _channel(out, jit)
    counts = (("frames_decoded", len(frames)), ("frames_bad_check", n_bad),
              ("frames_fitted", n_ok), ("edges_matched", int(fits.used.sum())),
              ("edges_outliers", fits.outliers),
              ("ideal_edges_unmatched", int(np.sum((fits.match < 0) & fits.ok[fits.ideal.frame]))),
              ("capture_ms", round(merged.total_us / 1000.0, 6)),
              ("settle_us", round(float(settle_us), 6)),
              ("capture_resolution_us", resolution))
    return Calibration(channel, tuple(out.estimates), tuple(out.unknown), tuple(warn), counts)


def preamble_us(plan) -> float:
    """Return the ideal duration of the plan's preamble, µs (the slicer's settling time
    that ``calibrate`` leaves out by default)."""
    return float(plan.spec.preamble.length_bits * plan.line_code.units_per_bit * plan.unit_us)


class _Collect:
    """Estimates and blind spots in the order found."""

    def __init__(self) -> None:
        self.estimates: list[Estimate] = []
        self.unknown: list[tuple[str, str]] = []
        self.warnings: list[str] = []

    def add(self, e: Estimate | est.Blind) -> None:
        if isinstance(e, Estimate):
            self.estimates.append(e)
        else:
            self.blind(e)

    def blind(self, b: est.Blind) -> None:
        self.unknown.append((b.name, b.reason))

    def value(self, name: str) -> float | str | None:
        e = next((e for e in self.estimates if e.name == name), None)
        return None if e is None else e.value


def _channel(out: _Collect, jit: est.JitterFit) -> ChannelSpec:
    """Return the ChannelSpec of the measured values (defaults for the rest)."""
    names = {f.name for f in fields(ChannelSpec)}
    values: dict[str, Any] = {}
    for e in out.estimates:
        if e.name in names and e.name != "jitter_kind" and isinstance(e.value, float | int):
            values[e.name] = float(e.value)
    if isinstance(jit.shape, Estimate):
        values["jitter_kind"] = jit.shape.value
    values["jitter_us"] = max(values.get("jitter_us", 0.0), 0.0)
    if "quant_step_us" in values and values["quant_step_us"] < 0.01:
        values.pop("quant_step_us")
    if values.get("glitch_width_us", 0.0) <= 0:
        _glitches_off(out, values)
    if abs(values.get("clock_error_pct", 0.0)) >= 50:
        values.pop("clock_error_pct")
    for k in ("idle_noise_mean_us", "idle_quiet_us", "glitch_width_us", "glitch_rate_per_ms"):
        if k in values and values[k] <= 0:
            values.pop(k)
    return ChannelSpec(**values)


def _glitches_off(out: _Collect, values: dict[str, Any]) -> None:
    """Turn glitches off in ``values`` when no glitch width was measured (the model needs
    one, and a made-up width would be a guess written as a measurement), saying why in
    the warnings and in the rate estimate's note; the width leaves the unknowns (it is not
    a default standing in for a figure the model uses: glitches are off)."""
    values.pop("glitch_width_us", None)
    rate_ms = float(values.pop("glitch_rate_per_ms", 0.0))
    why = dict(out.unknown).get("glitch_width_us", "no glitch width measured")
    out.unknown = [(k, r) for k, r in out.unknown if k != "glitch_width_us"]
    i, rate = next(((i, e) for i, e in enumerate(out.estimates)
                    if e.name == "glitch_rate_per_ms"), (None, None))
    bound = f"; fewer than {rate.ci95[1]:.3g} per ms at 95 %" if rate and rate.ci95 else ""
    if rate_ms > 0:
        reason = (f"{rate.n if rate else 'some'} glitch(es) counted from unmatched toggles "
                  f"inside frames ({rate_ms:.3g} per ms) but none with both edges, so no "
                  "width could be measured")
    else:
        reason = why + bound
    out.warnings.append(f"glitches are off in the channel file (glitch_rate_per_ms = 0): "
                        f"{reason}; stress with this file models no glitches")
    if rate is not None and i is not None and rate_ms > 0:
        note = "; ".join(x for x in (rate.note, "not used: glitches are off, no width "
                                     "measured") if x)
        out.estimates[i] = Estimate(rate.name, rate.value, rate.ci95, rate.method, rate.n,
                                    rate.basis, rate.unit, note, rate.tests)


# --- per-edge views of the fit ---------------------------------------------------------------


def _pairs(fits: FrameFits) -> np.ndarray:
    """Return indices i of ideal edges where edges i and i + 1 are both used and of one frame."""
    f = fits.ideal.frame
    u = fits.used
    return np.flatnonzero(u[:-1] & u[1:] & (f[:-1] == f[1:]))


def _mark_errors(fits: FrameFits, cap: CaptureEdges) -> np.ndarray:
    """Return captured minus fitted ideal length (µs) of every mark with both edges used."""
    i = _pairs(fits)
    i = i[fits.ideal.rising[i]]
    f = fits.ideal.frame[i]
    t = cap.t_us
    measured = t[fits.match[i + 1]] - t[fits.match[i]]
    ideal = fits.predict(f, fits.ideal.tau_us[i + 1]) - fits.predict(f, fits.ideal.tau_us[i])
    return measured - ideal


def _settling_bias(fits: FrameFits, cap: CaptureEdges, settle_us: float
                   ) -> Estimate | est.Blind:
    """Return the mean error of the marks inside the settling time (matched, not fitted;
    against the frame's fit): how much longer a receiver still settling makes them."""
    name = "settling_mark_bias_us"
    if settle_us <= 0:
        return est.Blind(name, "settle_us is 0: every edge is in the fits")
    f, m = fits.ideal.frame, fits.match
    i = np.flatnonzero((m[:-1] >= 0) & (m[1:] >= 0) & (f[:-1] == f[1:]) & fits.ideal.rising[:-1]
                       & (fits.ideal.tau_us[1:] < settle_us))
    i = i[fits.ok[f[i]]]
    measured = cap.t_us[m[i + 1]] - cap.t_us[m[i]]
    ideal = fits.predict(f[i], fits.ideal.tau_us[i + 1]) - fits.predict(f[i], fits.ideal.tau_us[i])
    return est.mean_t(name, measured - ideal, "marks", "us",
                      f"marks in the first {settle_us:g} µs of each frame (the receiver's "
                      "settling; not in the channel model): compare with mark_bias_us")


def _equal_pulse_diffs(fits: FrameFits, cap: CaptureEdges, unit_us: float) -> np.ndarray:
    """Return differences of captured durations of consecutive pulses of the same frame,
    level and ideal length (whole multiples of a quantisation step, when there is one)."""
    i = _pairs(fits)
    if i.size < 2:
        return np.zeros(0)
    d = cap.t_us[fits.match[i + 1]] - cap.t_us[fits.match[i]]
    length = np.round((fits.ideal.tau_us[i + 1] - fits.ideal.tau_us[i]) / unit_us)
    level = fits.ideal.rising[i]
    frame = fits.ideal.frame[i]
    order = np.lexsort((i, length, level, frame))
    d, length, level, frame = d[order], length[order], level[order], frame[order]
    same = (frame[1:] == frame[:-1]) & (level[1:] == level[:-1]) & (length[1:] == length[:-1])
    return (d[1:] - d[:-1])[same]


# --- clock -------------------------------------------------------------------------------------


def _clock(fits: FrameFits, good, repeats: int, gap_us: float, unit_us: float,
           warn: list[str]) -> list[Estimate | est.Blind]:
    """Return clock error (%) and drift (%/s) estimates (see module doc)."""
    ok = np.flatnonzero(fits.ok)
    b_mid = fits.coef[ok, 1] / 1000.0
    curv = fits.coef[ok, 2]  # µs per ms^2
    tau_mid = fits.tau_mid_us[ok]
    start = fits.predict(ok, np.zeros(ok.size))
    order = np.argsort(start)
    ok, b_mid, curv, tau_mid, start = ok[order], b_mid[order], curv[order], tau_mid[order], \
        start[order]
    n_chips = fits.ideal.n_chips[ok].astype(float)
    payload = [good[k].payload_hex for k in ok]
    # transmissions: consecutive frames with the same payload one frame + gap apart
    burst = np.zeros(ok.size, np.int64)
    pos = np.zeros(ok.size, np.int64)
    for j in range(1, ok.size):
        expect = (n_chips[j - 1] * unit_us + gap_us) * b_mid[j - 1]
        same = repeats > 1 and payload[j] == payload[j - 1] and pos[j - 1] + 1 < repeats \
            and abs((start[j] - start[j - 1]) / expect - 1.0) < 0.05
        burst[j] = burst[j - 1] if same else burst[j - 1] + 1
        pos[j] = pos[j - 1] + 1 if same else 0
    sizes = np.bincount(burst)
    whole = sizes[burst] == repeats
    n_whole = int(np.sum(sizes == repeats))
    sigma2 = fits.sigma_us ** 2
    if repeats > 2 and n_whole >= 2:
        nominal = np.zeros(ok.size)
        for j in range(1, ok.size):
            if pos[j]:
                nominal[j] = nominal[j - 1] + n_chips[j - 1] * unit_us + gap_us
        # one ideal time for every frame, where the fits are surest (their mid-point)
        ref_us = float(np.median(tau_mid))
        at_ref = fits.predict(ok, np.full(ok.size, ref_us))
        by_starts = est.clock_from_starts(at_ref[whole], nominal[whole] + ref_us, burst[whole])
        if by_starts is not None:
            return list(by_starts)
    if repeats > 1 and n_whole >= 2 and int(whole.sum()) >= 6:
        first = np.zeros(burst.max() + 1)
        first[burst[pos == 0]] = start[pos == 0]
        v_s = ((start - first[burst]) / b_mid + tau_mid) / 1e6
        return list(est.clock_from_bursts(b_mid[whole], v_s[whole], n_whole))
    if repeats > 1:
        warn.append(f"clock drift measured from each frame's curvature only ({n_whole} whole "
                    f"transmission(s) of {repeats} repeats found): wider intervals")
    inv = fits.xtx_inv[ok]
    drift = 200.0 * curv / b_mid  # %/s: t'' / t' with t'' = 2 C / 1e6 per µs
    drift_se = 200.0 * np.sqrt(sigma2 * inv[:, 2, 2]) / b_mid
    g = np.zeros((ok.size, 4))
    g[:, 1] = 1.0 / 1000.0
    g[:, 2] = -2.0 * tau_mid / 1e6
    b_start = g[:, 1] * fits.coef[ok, 1] + g[:, 2] * curv
    b_se = np.sqrt(sigma2 * np.einsum("fi,fij,fj->f", g, inv, g))
    firsts = pos == 0  # clock at the transmission start: only the first frame of each
    clk = est.per_frame("clock_error_pct", 100.0 * (b_start[firsts] - 1.0),
                        100.0 * b_se[firsts], "%", "clock scale at the start of the first "
                        "frame of each transmission")
    dr = est.per_frame("drift_pct_per_s", drift, drift_se, "% per s",
                       "curvature of each frame's fit over its clock scale")
    return [clk, dr]


# --- glitches ------------------------------------------------------------------------------


def _glitches(fits: FrameFits, cap: CaptureEdges) -> list[Estimate | est.Blind]:
    """Return glitch rate (per ms of frame) and mean width: captured toggles strictly
    inside a fitted frame that no ideal edge matched, taken two per glitch."""
    ok = np.flatnonzero(fits.ok)
    lo, hi = fits.span_us[ok, 0], fits.span_us[ok, 1]
    claimed = np.zeros(cap.t_us.size, bool)
    claimed[fits.match[fits.match >= 0]] = True
    a = np.searchsorted(cap.t_us, lo, side="right")
    b = np.searchsorted(cap.t_us, hi, side="left")
    inside = np.zeros(cap.t_us.size + 1, np.int64)
    np.add.at(inside, a, 1)
    np.add.at(inside, b, -1)
    in_frame = np.cumsum(inside)[:-1] > 0
    stray = np.flatnonzero(in_frame & ~claimed)
    n_stray = int(stray.size)
    count = (n_stray + 1) // 2
    time_us = float(np.sum(hi - lo))
    rate = est.rate_per_ms("glitch_rate_per_ms", count, time_us, "ms of frames")
    if isinstance(rate, Estimate):
        rate = Estimate(rate.name, rate.value, rate.ci95, rate.method, rate.n,
                        "glitches (unmatched toggles / 2) inside frames", rate.unit,
                        rate.note + "; glitches in idle stretches count as idle noise")
    pair = stray[:-1][np.diff(stray) == 1] if stray.size > 1 else np.zeros(0, np.int64)
    pair = pair[np.concatenate(([True], np.diff(pair) > 1))] if pair.size else pair
    widths = cap.t_us[pair + 1] - cap.t_us[pair]
    if count == 0:
        width: Estimate | est.Blind = est.Blind(
            "glitch_width_us", f"no glitch seen in {time_us / 1000:.6g} ms of frames")
    elif widths.size == 1:
        width = Estimate("glitch_width_us", float(widths[0]), None, "one glitch: its width, "
                         "no interval", 1, "glitches", "us")
    else:
        width = est.mean_t("glitch_width_us", widths, "glitches", "us",
                           "the model draws widths uniform in 0.5..1.5 times this")
    return [rate, width]


# --- idle noise ------------------------------------------------------------------------------


def _idle(fits: FrameFits, frames, good, cap: CaptureEdges, total_us: float,
          unit_us: float, quant_step_us: float, rng: np.random.Generator, warn: list[str]
          ) -> list[Estimate | est.Blind]:
    """Return idle-noise estimates from the stretches between frames (see module doc)."""
    names = ("idle_noise_us", "idle_noise_mean_us", "idle_quiet_us")
    margin = 0.5 * unit_us  # a frame's own first and last edge stay out of the stretches
    windows = [(float(fits.span_us[k, 0]), float(fits.span_us[k, 1])) for k in
               np.flatnonzero(fits.ok)]
    fitted = {id(good[k]) for k in np.flatnonzero(fits.ok)}
    windows += [(f.start_us, f.end_us) for f in frames if id(f) not in fitted]
    windows.sort()
    stretches: list[tuple[float, float, bool]] = []  # (start, end, right after a frame)
    last_end, after_frame = 0.0, False
    for lo, hi in windows:
        if lo - margin > last_end:
            stretches.append((last_end, lo - margin, after_frame))
        last_end, after_frame = max(last_end, hi + margin), True
    stretches.append((last_end, total_us, after_frame))
    t = cap.t_us
    widths, levels, first_space = [], [], []
    idle_us = noisy_us = 0.0
    for lo, hi, after in stretches:
        if hi - lo <= 0:
            continue
        idle_us += hi - lo
        i0, i1 = np.searchsorted(t, lo, side="right"), np.searchsorted(t, hi, side="left")
        if i1 - i0 >= 2:
            widths.append(np.diff(t[i0:i1]))
            levels.append(cap.rising[i0:i1 - 1])
            noisy_us += float(t[i1 - 1] - t[i0])
            if after:  # from the frame's last edge to the first noise toggle
                first_space.append(float(t[i0] - lo + margin))
    if idle_us < 1000.0:
        why = f"no idle stretch in the capture ({idle_us:.0f} µs between frames): record " \
            "some time with no transmission"
        return [est.Blind(n, why) for n in names]
    w = np.concatenate(widths) if widths else np.zeros(0)
    if w.size < 2:
        rate = est.rate_per_ms("idle_noise_rate_per_ms", int(w.size), idle_us, "ms idle")
        why = f"{w.size} pulses in {idle_us / 1000:.6g} ms idle: the receiver output stays " \
            "quiet without a carrier, so idle noise is off"
        return [rate, Estimate("idle_noise_us", 0.0, None, "no idle noise seen", int(w.size),
                               "idle pulses", "us", why),
                est.Blind("idle_noise_mean_us", why), est.Blind("idle_quiet_us", why)]
    lv = np.concatenate(levels)
    floor = 4.0 * (fits.sigma_us + quant_step_us)
    mean = est.exponential_mean("idle_noise_mean_us", w, "idle-noise pulses", floor)
    if not isinstance(mean, Estimate):
        return [est.Blind("idle_noise_us", mean.reason), mean,
                est.Blind("idle_quiet_us", mean.reason)]
    tests = mean.tests + tuple((f"mean_{k}_us", float(w[sel].mean())) for k, sel in
                               (("mark", lv), ("space", ~lv)) if sel.any())
    mean = Estimate(mean.name, mean.value, mean.ci95, mean.method, mean.n, mean.basis,
                    mean.unit, "both levels pooled (the model draws both from one mean)",
                    tests)
    rate = est.rate_per_ms("idle_noise_rate_per_ms", int(w.size), noisy_us, "idle-noise pulses")
    if w.size < FEW_NOISE_PULSES:
        warn.append(f"only {w.size} idle-noise pulses: the noise figures are rough")
    p = dict(mean.tests)["ks_p_exponential"]
    if p < 0.001:
        warn.append(f"idle-noise widths do not look exponential (KS p = {p:.2g}): the idle "
                    "stretches may hold transmissions that were not decoded, or interference")
    lead = Estimate("idle_noise_us", IDLE_LEAD_US, None,
                    "modelling choice, not measured: noise put before and after each "
                    "simulated transmission", int(w.size), "idle-noise pulses", "us")
    quiet = est.quiet_time(np.array(first_space), float(mean.value), rng)
    return [lead, mean, rate, quiet]

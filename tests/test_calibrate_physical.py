"""``calibrate`` on captures of the physical link model: the figures come back as the
model's parameters imply them.

What each physical parameter implies for the pulse-level figures calibrate measures:

* clock error and drift: the transmitter's ``clock_ppm`` and ``drift_ppm_per_s`` are the
  pulse-level ``clock_error_pct`` and ``drift_pct_per_s`` times 1e4 (same clock map);
* output quantisation: the superregenerative receiver's data pin changes only at quench
  instants, so every duration is a whole number of quench periods, 1 / ``quench_hz``;
* mark bias: derived below (``quench_mark_bias_us``, ``threshold_mark_bias_us``) from the
  transmitter's start-up and ring-down time constants, the received power, the data
  filter and the slicer's threshold and hysteresis; through the front end with fixed
  thresholds the derivation is exact, through the superregenerative receiver it leaves
  out the detector noise at the slicer (a receiver offset of a few tenths of a µs,
  common to every transmitter, so the difference between two transmitters is checked
  against its interval and the absolute value within a stated allowance);
* edge jitter: not one parameter of the model (detector noise through the data filter,
  plus the adaptive threshold's ripple with the data): only checked to grow as the
  received power falls;
* idle noise: not one parameter either (detection level, log range, filter, slicer):
  checked against the same receiver's output with no carrier at all.

Coverage: a 95 % interval holds the true value in 95 % of captures; over 10 seeds at
least 8 inside has probability 0.988 for a correct interval (binomial(10, 0.95)). Checks on
one capture use the 99.9 % interval (the 95 % half-width times z(0.9995) / z(0.975) =
3.29 / 1.96, normal scaling), so a correct interval fails them once in a thousand.
"""

from __future__ import annotations

import math
from functools import lru_cache
from pathlib import Path

import numpy as np
import pytest

from ookframe import load_spec
from ookframe.analysis.calibrate import calibrate, preamble_us
from ookframe.analysis.link_estimates import exponential_mean
from ookframe.channel.physical import (
    PhysicalChannel,
    Receiver,
    Transmitter,
    apply_physical,
    detector_noise_dbm,
    receive_carriers,
    render_baseband,
    write_wav,
)
from ookframe.frontend import FrontEndConfig, slice_capture
from ookframe.plan import compile_plan
from ookframe.stress.batch import random_batch

EX = Path(__file__).resolve().parent.parent / "examples"
HIVE = load_spec(str(EX / "hive_scale.toml"))
PLAN = compile_plan(HIVE)
#: z(0.9995) / z(0.975): a 95 % normal half-width scaled to 99.9 %
WIDEN_999 = 3.2905 / 1.9600
#: what the noise-free derivation of the quench receiver's mark bias leaves out (detector
#: noise at the slicer's crossings, the threshold's ripple): measured +0.26 µs (tau 4 / 2)
#: and +0.33 µs (tau 2 / 6) at -75 dBm over 4 x 20 transmissions with a clock error;
#: a quasi-static second-order noise term accounts for +0.07 of it
RECEIVER_ALLOWANCE_US = 0.5
#: received power of the mark-bias checks: 30 dB above the cheap receiver's sensitivity
#: (-105 dBm), where the carrier, not the detector noise, shapes the edges
STRONG_DBM = -75.0


def inside(e, truth: float, widen: float = 1.0) -> bool:
    lo, hi = e.ci95
    mid, half = (lo + hi) / 2, (hi - lo) / 2 * widen
    return mid - half <= truth <= mid + half


# --- the mark bias the superregenerative receiver implies ------------------------------------

_GH_X, _GH_W = np.polynomial.hermite_e.hermegauss(96)  # numpy: E[f(Z)], Z ~ N(0, 1)


def detector_mean(a: np.ndarray, snr: float, rx: Receiver) -> np.ndarray:
    """Return E[clip(10 log10(|a sqrt(snr) + n|^2 / eta) / L, 0, 1)], n ~ CN(0, 1): the
    mean quench output (Receiver's doc) for carrier amplitudes ``a`` (0..1 of full), by
    2-D Gauss-Hermite quadrature over the noise's real and imaginary parts."""
    eta = -math.log(rx.idle_detect_prob)
    re = np.asarray(a, float)[:, None, None] * math.sqrt(snr) + _GH_X[None, :, None] / math.sqrt(2)
    im = _GH_X[None, None, :] / math.sqrt(2)
    p = np.maximum(re * re + im * im, 1e-300)
    x = np.clip(10 * np.log10(p / eta) / rx.log_range_db, 0.0, 1.0)
    return (x * (_GH_W[:, None] * _GH_W[None, :])).sum(axis=(1, 2)) / (2 * math.pi)


@lru_cache(maxsize=8)
def _edge_terms(tx: Transmitter, rx: Receiver, rx_dbm: float) -> tuple[float, ...]:
    """Return (tau_f, E_on, E_off, A_on, A_off, h') of ``quench_mark_bias_us``."""
    snr = 10 ** ((rx_dbm - detector_noise_dbm(rx)) / 10)
    tau_f = 1e6 / (2 * math.pi * rx.data_filter_hz)
    v, top = detector_mean(np.array([0.0, 1.0]), snr, rx)
    swing = top - v
    t = np.linspace(0.0, 20 * max(tx.startup_tau_us, tx.ringdown_tau_us) + 40.0, 1601)
    on = (top - detector_mean(1 - np.exp(-t / tx.startup_tau_us), snr, rx)) / swing
    off = (detector_mean(np.exp(-t / tx.ringdown_tau_us), snr, rx) - v) / swing
    weight = np.exp(t / tau_f) / tau_f
    return (tau_f, float(np.trapezoid(weight * on, t)), float(np.trapezoid(weight * off, t)),
            float(np.trapezoid(on, t)), float(np.trapezoid(off, t)),
            rx.slicer_hysteresis / swing)


def quench_mark_bias_us(tx: Transmitter, rx: Receiver, rx_dbm: float, marks_per_us: float
                        ) -> float:
    """Return the mark bias the model implies with a settled slicer, noise left out
    (derivation):

    1. the envelope rises as 1 - exp(-t / tau_s) at key-on and falls as exp(-t / tau_r)
       at key-off (marks last far longer than tau_s); the mean detector output follows it
       through ``detector_mean``: g_on(t), g_off(t), between the idle level v = g(0) and
       the mark level top = g(1), swing = top - v;
    2. the data filter is first order, tau_f = 1 / (2 pi data_filter_hz): once the
       start-up has passed, the filtered output is top - swing exp(-t / tau_f)(1 + E_on),
       E_on = (1 / tau_f) integral exp(s / tau_f)(top - g_on(s)) / swing ds; after key-off
       v + swing exp(-t / tau_f)(1 + E_off) with E_off from (g_off(s) - v) / swing;
    3. the slicer's threshold (its slow average) settles at the filtered output's time
       mean, v + swing m: Manchester marks fill half of the time and each mark gains its
       ring-down area A_off and loses its start-up area A_on (plain integrals of the
       same shapes), so m = 1/2 + R (A_off - A_on), R marks per µs;
    4. with hysteresis h' = h / swing the pin rises at y = threshold + h and falls at
       threshold - h: t_rise = tau_f ln((1 + E_on) / (1 - m - h')), t_fall = tau_f
       ln((1 + E_off) / (m - h')); the mark bias is t_fall - t_rise.
    Left out: the detector noise at the slicer's crossings and the threshold's ripple
    with the data, which belong to the receiver and not to the transmitter's time
    constants (``RECEIVER_ALLOWANCE_US``); valid well above sensitivity (no noise in the
    mark), with the threshold settled by the preamble's end.
    """
    tau_f, e_on, e_off, a_on, a_off, h = _edge_terms(tx, rx, rx_dbm)
    m = 0.5 + marks_per_us * (a_off - a_on)
    return tau_f * (math.log((1 + e_off) / (m - h)) - math.log((1 + e_on) / (1 - m - h)))


def settled_marks_per_us(batch) -> float:
    """Return marks per µs of the batch's frames after their preambles (the stretch the
    calibration fits), counted on the transmitted train."""
    frame_us = (batch.ends_us[0] - batch.starts_us[0] - (PLAN.repeats - 1) * PLAN.gap_us) \
        / PLAN.repeats
    starts = (batch.starts_us[:, None] + np.arange(PLAN.repeats) * (frame_us + PLAN.gap_us)
              ).ravel()
    ends = np.cumsum(batch.train.durations_us)
    rising = ends[:-1][batch.train.levels[1:] == 1]
    lo, hi = starts + preamble_us(PLAN), starts + frame_us
    count = np.searchsorted(rising, hi) - np.searchsorted(rising, lo)
    return float(count.sum() / np.sum(hi - lo))


def test_the_derivation_reproduces_the_models_idle_level():
    """The quadrature's idle output (no carrier) is the receiver's own idle mean
    (ookframe's integral over the exponential noise power), to the quadrature's 1e-3."""
    from ookframe.channel.physical import idle_output_mean

    rx = Receiver()
    assert detector_mean(np.zeros(1), 1.0, rx)[0] == pytest.approx(idle_output_mean(rx),
                                                                   abs=1e-3)


# --- physical captures of the receiver's data pin ------------------------------------------

#: two transmitters keyed from one MCU each: start-up / ring-down time constants and clock
TX_A = Transmitter(startup_tau_us=4.0, ringdown_tau_us=2.0, clock_ppm=1500.0)
TX_B = Transmitter(startup_tau_us=2.0, ringdown_tau_us=6.0, clock_ppm=-800.0,
                   drift_ppm_per_s=3000.0)


def test_pin_captures_come_back_within_their_intervals():
    """The same transmissions (6 of 3 frames each, 30 dB above sensitivity) sent by two
    transmitters into the cheap receiver, 10 seeds: clock error, drift and quantisation
    step are inside their 95 % intervals in at least 16 of the 20 captures
    (binomial(20, 0.95): P(X >= 16) = 0.984), and the difference of the two mark biases
    (the transmitters' share: what the receiver adds to both cancels) inside the
    difference's interval (half-widths in quadrature) in at least 8 of 10 seeds; each mark
    bias is within its interval plus ``RECEIVER_ALLOWANCE_US`` of the noise-free
    derivation."""
    rx = Receiver()
    hits = {"clock_error_pct": 0, "drift_pct_per_s": 0, "quant_step_us": 0, "bias_diff": 0}
    offsets = []
    for seed in range(10):
        rng = np.random.default_rng(200 + seed)
        b = random_batch(PLAN, 6, rng)
        r = settled_marks_per_us(b)
        got = {}
        for tx in (TX_A, TX_B):
            ch = PhysicalChannel(tx=tx, rx=rx, distance_m=None, rx_power_dbm=STRONG_DBM)
            cal = calibrate(HIVE, apply_physical(b.train, ch, rng, burst_starts_us=b.starts_us),
                            seed=seed)
            truth = {"clock_error_pct": tx.clock_ppm * 1e-4,
                     "drift_pct_per_s": tx.drift_ppm_per_s * 1e-4,
                     "quant_step_us": 1e6 / rx.quench_hz}
            for name, value in truth.items():
                hits[name] += inside(cal.estimate(name), value) / 2
            e = cal.estimate("mark_bias_us")
            implied = quench_mark_bias_us(tx, rx, STRONG_DBM, r)
            offsets.append(e.value - implied)
            half = (e.ci95[1] - e.ci95[0]) / 2
            assert abs(e.value - implied) <= half + RECEIVER_ALLOWANCE_US, (tx, e, implied)
            got[tx] = (e.value, half, implied)
        (va, ha, ia), (vb, hb, ib) = got[TX_A], got[TX_B]
        hits["bias_diff"] += abs((vb - va) - (ib - ia)) <= math.hypot(ha, hb)
    assert all(v >= 8 for v in hits.values()), (hits, offsets)


def test_quench_rate_sets_the_output_step():
    """At a 250 kHz quench every duration of the pin is a whole number of 4 µs periods;
    calibrate's step and its interval hold 1 / quench_hz (and at 400 kHz 2.5 µs, above)."""
    rx = Receiver(quench_hz=250e3)
    rng = np.random.default_rng(9)
    b = random_batch(PLAN, 4, rng)
    ch = PhysicalChannel(tx=TX_B, rx=rx, distance_m=None, rx_power_dbm=STRONG_DBM)
    cal = calibrate(HIVE, apply_physical(b.train, ch, rng, burst_starts_us=b.starts_us))
    assert inside(cal.estimate("quant_step_us"), 4.0)
    assert cal.channel.quant_step_us == pytest.approx(4.0, rel=1e-6)


def test_slicer_settling_shows_in_the_preamble_marks():
    """The cheap receiver's slicer threshold climbs from the idle level over the preamble
    (its slow average, 2 ms), so the preamble's marks come out longer than the settled
    ones: calibrate reports them apart, and their interval lies above the settled bias;
    with the settling time set to 0 the preamble's marks pull the mark bias up."""
    rng = np.random.default_rng(21)
    b = random_batch(PLAN, 4, rng)
    ch = PhysicalChannel(tx=TX_A, distance_m=None, rx_power_dbm=STRONG_DBM)
    pin = apply_physical(b.train, ch, rng, burst_starts_us=b.starts_us)
    cal = calibrate(HIVE, pin)
    settled, early = cal.estimate("mark_bias_us"), cal.estimate("settling_mark_bias_us")
    assert early.ci95[0] > settled.ci95[1] + 1.0, (early.ci95, settled.ci95)
    assert calibrate(HIVE, pin, settle_us=0).estimate("mark_bias_us").value > settled.ci95[1]
    assert "settling_mark_bias_us" in dict(calibrate(HIVE, pin, settle_us=0).unknown)


def test_jitter_grows_as_the_received_power_falls():
    """Edge jitter is no single parameter of the physical model (detector noise through
    the data filter, threshold ripple with the data): honestly checked only for its trend,
    larger at each step down in received power, and above the quantisation's share
    (calibrate takes 2.5 / sqrt(12) µs out)."""
    rng = np.random.default_rng(7)
    b = random_batch(PLAN, 6, rng)
    sigmas = []
    for dbm in (-70.0, -92.0, -99.0):
        ch = PhysicalChannel(tx=Transmitter(clock_ppm=300.0), distance_m=None, rx_power_dbm=dbm)
        cal = calibrate(HIVE, apply_physical(b.train, ch, rng, burst_starts_us=b.starts_us))
        e = cal.estimate("jitter_sigma_us")
        sigmas.append(e)
    assert sigmas[0].ci95[1] < sigmas[1].ci95[0] and sigmas[1].ci95[1] < sigmas[2].ci95[0], \
        [(e.value, e.ci95) for e in sigmas]
    assert sigmas[0].value > 0.5


def test_idle_noise_is_the_receivers_own_idle_output():
    """Between transmissions 300 ms apart, calibrate's idle-noise width (above its floor)
    and rate match the same receiver's output with no carrier at all within 5 %; not
    within their intervals, which are narrower than the slicer's recovery after each
    transmission (its threshold comes down over a few ms, fewer pulses meanwhile). The
    widths are not exponential and calibrate warns so."""
    rng = np.random.default_rng(11)
    b = random_batch(PLAN, 4, rng, gap_us=300_000.0)
    ch = PhysicalChannel(tx=Transmitter(clock_ppm=-500.0), distance_m=None,
                         rx_power_dbm=STRONG_DBM)
    cal = calibrate(HIVE, apply_physical(b.train, ch, rng, burst_starts_us=b.starts_us))
    mean, rate = cal.estimate("idle_noise_mean_us"), cal.estimate("idle_noise_rate_per_ms")
    floor_us = float(mean.method.split("above ")[1].split(" ")[0])
    alone = receive_carriers([], ch.rx, 1.5e6, np.random.default_rng(12))
    widths = alone.durations_us[1:-1]
    direct = exponential_mean("idle", widths, "pulses", floor_us)
    assert mean.value == pytest.approx(direct.value, rel=0.05)
    assert rate.value == pytest.approx(widths.size / (alone.total_us / 1000), rel=0.05)
    assert any("do not look exponential" in w for w in cal.warnings)


# --- through a WAV file and the front end ---------------------------------------------------


def threshold_mark_bias_us(tx: Transmitter, up: float, down: float) -> float:
    """Return the mark bias of an envelope slicer with thresholds ``up`` and ``down``
    (fractions of the carrier amplitude) and no smoothing: the envelope 1 - exp(-t /
    tau_s) crosses ``up`` at tau_s ln(1 / (1 - up)) after key-on, exp(-t / tau_r) crosses
    ``down`` at tau_r ln(1 / down) after key-off."""
    return tx.ringdown_tau_us * math.log(1 / down) - tx.startup_tau_us * math.log(1 / (1 - up))


def test_wav_capture_through_the_front_end(tmp_path):
    """The antenna signal's envelope written as a WAV (2 MHz, 16 bit, carrier at half full
    scale), sliced by the front end with fixed thresholds at 0.6 and 0.4 of the carrier
    and no smoothing: mark bias, clock error and drift are inside their 99.9 %
    intervals; the front end places edges between samples, so calibrate finds no step."""
    tx = Transmitter(startup_tau_us=6.0, ringdown_tau_us=12.0, clock_ppm=-1200.0,
                     drift_ppm_per_s=2000.0)
    ch = PhysicalChannel(tx=tx, distance_m=None, rx_power_dbm=-60.0)
    rng = np.random.default_rng(5)
    b = random_batch(PLAN, 6, rng)
    x = render_baseband(b.train, ch, 2e6, rng, burst_starts_us=b.starts_us)
    carrier = math.sqrt(10 ** (ch.received_dbm / 10))  # sqrt(mW), the baseband's unit
    wav = tmp_path / "hive.wav"
    write_wav(wav, x, 2e6, "envelope", full_scale=2 * carrier)
    train, report = slice_capture(wav, FrontEndConfig(smooth_us=0.0, threshold_high=0.3,
                                                      threshold_low=0.2))
    cal = calibrate(HIVE, train)
    assert report.carrier_level == pytest.approx(0.5, rel=0.03)  # marks' mean, edges in
    implied = threshold_mark_bias_us(tx, 0.6, 0.4)  # (12 - 6) ln 2.5 = 5.50 µs
    checks = {"mark_bias_us": implied, "clock_error_pct": tx.clock_ppm * 1e-4,
              "drift_pct_per_s": tx.drift_ppm_per_s * 1e-4}
    for name, value in checks.items():
        e = cal.estimate(name)
        assert inside(e, value, WIDEN_999), (name, e.value, e.ci95, value)
    assert "quant_step_us" in dict(cal.unknown)


def test_cli_calibrates_a_rendered_wav(tmp_path, capsys):
    """``render`` writes the link's envelope as a WAV with a 2000 ppm slow clock;
    ``calibrate`` reads it through the front end and finds that clock error (99.9 %
    interval), says which front end made the pulses, and writes a channel file."""
    import json

    from ookframe.channel import load_link
    from ookframe.cli.main import main

    wav = tmp_path / "hive.wav"
    spec = str(EX / "hive_scale.toml")
    assert main(["render", spec, "-o", str(wav), "--rx-power-dbm", "-70", "--transmissions",
                 "8", "--clock-ppm", "2000", "--sample-rate", "500000", "--idle-ms",
                 "5"]) == 0
    link = tmp_path / "link.toml"
    capsys.readouterr()
    assert main(["calibrate", spec, str(wav), "-o", str(link), "--json"]) == 0
    captured = capsys.readouterr()
    d = json.loads(captured.out)
    assert "front end:" in captured.err
    e = load_link(link).estimate("clock_error_pct")
    assert inside(e, 0.2, WIDEN_999), (e.value, e.ci95)
    assert d["estimates"]["clock_error_pct"]["value"] == pytest.approx(e.value)
    assert main(["calibrate", spec, str(wav), "--signal", "x"]) != 0  # VCD-only option
    pins = tmp_path / "pin.csv"
    assert main(["render", spec, "-o", str(pins), "--rx-power-dbm", "-70"]) == 0
    capsys.readouterr()
    assert main(["calibrate", spec, str(pins), "--smooth-us", "3"]) != 0
    err = capsys.readouterr().err
    assert "--smooth-us applies to sampled captures" in err and "Traceback" not in err

"""Tests for ookframe.channel.physical: link budget, transmitter envelope, receiver at
quench level, slicer settling, stress through the physical link and written captures."""

from __future__ import annotations

import math
import tomllib
import warnings
from pathlib import Path

import numpy as np
import pytest
from scipy import constants, stats
from scipy.io import wavfile

import ookframe as of
from ookframe.channel.physical import (
    Carrier,
    KeyedEnvelope,
    PathModel,
    PhysicalChannel,
    Receiver,
    Transmitter,
    apply_physical,
    baseband_snr_db,
    detect_probability,
    detection_level,
    detector_noise_dbm,
    distance_for_loss_m,
    fspl_db,
    get_receiver,
    idle_output_mean,
    noise_floor_dbm,
    path_loss_db,
    physical_time_map_us,
    pin_samples,
    quench_output,
    receive_carriers,
    render_baseband,
    render_carriers,
    scaled_samples,
    thermal_noise_dbm_per_hz,
    write_iq,
    write_wav,
)
from ookframe.errors import ValueRangeError
from ookframe.pulses import PulseTrain
from ookframe.stress import run_stress
from ookframe.stress.batch import random_batch

EXAMPLES = Path(__file__).resolve().parent.parent / "ookframe" / "examples"


def _spec(name: str = "hive_scale", **frame: object):
    doc = tomllib.loads((EXAMPLES / f"{name}.toml").read_text())
    if frame:
        doc["frame"] = {**doc["frame"], **frame}
    return of.spec_from_dict(doc)


def _at(power_dbm: float, rx: Receiver | None = None) -> PhysicalChannel:
    return PhysicalChannel(rx=rx or Receiver(), distance_m=None, rx_power_dbm=power_dbm)


# -- link budget ------------------------------------------------------------------------

def test_fspl_matches_the_textbook_practical_units_formula() -> None:
    """Free-space loss in practical units, L = 32.44 + 20 log10 f(MHz) + 20 log10 d(km)
    (textbook form of Friis' 20 log10(4 pi d f / c)); worked value: 6 km at 2.4 GHz is
    115.6 dB. The metric constant 20 log10(4 pi / c) = -147.55 dB comes from
    scipy.constants.c."""
    assert fspl_db(6000.0, 2.4e9) == pytest.approx(115.6, abs=0.05)
    for d_km, f_mhz in ((1.0, 433.92), (0.1, 868.3), (3.0, 315.0)):
        textbook = 32.44 + 20 * math.log10(f_mhz) + 20 * math.log10(d_km)
        assert fspl_db(d_km * 1e3, f_mhz * 1e6) == pytest.approx(textbook, abs=0.01)
    assert 20 * math.log10(4 * math.pi / constants.c) == pytest.approx(-147.55, abs=0.01)
    assert fspl_db(1000.0, 433.92e6) == pytest.approx(
        20 * math.log10(1000) + 20 * math.log10(433.92e6) - 147.55, abs=0.01)


def test_log_distance_adds_ten_n_db_per_decade_and_inverts() -> None:
    """Log-distance model: free space to the reference distance, then 10 n dB/decade."""
    f = 433.92e6
    at_ref = fspl_db(1.0, f)
    assert path_loss_db(10.0, f, exponent=3.0) == pytest.approx(at_ref + 30.0)
    assert path_loss_db(100.0, f, exponent=3.0) == pytest.approx(at_ref + 60.0)
    assert path_loss_db(0.5, f, exponent=3.0) == pytest.approx(fspl_db(0.5, f))
    assert path_loss_db(200.0, f, exponent=2.0) == pytest.approx(fspl_db(200.0, f))
    for d in (0.3, 1.0, 7.0, 450.0):
        loss = path_loss_db(d, f, exponent=3.3, extra_loss_db=6.0)
        assert distance_for_loss_m(loss, f, exponent=3.3, extra_loss_db=6.0) == pytest.approx(d)


def test_thermal_noise_is_minus_174_dbm_per_hz_at_290_k() -> None:
    """kT at 290 K with Boltzmann's constant from scipy.constants: -173.98 dBm/Hz
    (the -174 dBm/Hz of receiver design, textbook); over 1 MHz with no noise figure
    -114 dBm (from memory)."""
    expected = 10 * math.log10(constants.k * 290.0 / 1e-3)
    assert thermal_noise_dbm_per_hz() == pytest.approx(expected)
    assert thermal_noise_dbm_per_hz() == pytest.approx(-174.0, abs=0.05)
    assert noise_floor_dbm(1e6) == pytest.approx(-114.0, abs=0.05)
    assert noise_floor_dbm(500e3, 10.0) == pytest.approx(-174.0 + 57.0 + 10.0, abs=0.1)


def test_receiver_kinds_have_their_sensitivity_figures() -> None:
    """Cheap superregenerative about -105 dBm, good superheterodyne about -114 dBm
    (typical figures, common practice, no source); the received power follows the budget."""
    assert get_receiver("cheap").sensitivity_dbm == pytest.approx(-105.0, abs=0.2)
    assert get_receiver("good").sensitivity_dbm == pytest.approx(-114.0, abs=0.2)
    assert get_receiver("cheap").with_sensitivity(-100.0).sensitivity_dbm == pytest.approx(-100)
    ch = PhysicalChannel(Transmitter(power_dbm=10.0, antenna_gain_dbi=-3.0),
                         PathModel(exponent=3.0), Receiver(antenna_gain_dbi=2.0),
                         distance_m=100.0)
    assert ch.received_dbm == pytest.approx(10.0 - 3.0 + 2.0 - fspl_db(1.0, 433.92e6) - 60.0)
    assert Transmitter.from_mw(10.0).power_dbm == pytest.approx(10.0)
    with pytest.raises(ValueRangeError):
        PhysicalChannel(distance_m=None, rx_power_dbm=None)
    with pytest.raises(ValueRangeError):
        PhysicalChannel(distance_m=-1.0)
    with pytest.raises(ValueRangeError):
        Receiver(idle_detect_prob=1.0)


# -- transmitter envelope ---------------------------------------------------------------

def test_envelope_rises_and_rings_down_exponentially() -> None:
    """Key-on: 1 - exp(-t / tau_on); key-off: exp(-t / tau_off) from the level reached;
    a short mark starts its ring-down from below full amplitude (first-order lag)."""
    tx = Transmitter(startup_tau_us=4.0, ringdown_tau_us=2.0)
    train = PulseTrain(np.array([0, 1, 0, 1, 0], np.uint8),
                       np.array([10.0, 100.0, 50.0, 3.0, 50.0]))
    env = KeyedEnvelope.of(train, tx)
    t = np.arange(0, 213) * 1.0
    got = env.on_grid(0.0, 1.0, 0, t.size)
    ref = np.zeros(t.size)  # per-microsecond reference recursion, exact between grid points
    y = 0.0
    bounds = np.cumsum([0.0, 10, 100, 50, 3, 50])
    for k, tk in enumerate(t):
        i = min(np.searchsorted(bounds, tk, side="right") - 1, 4)
        x = train.levels[i] if tk < bounds[-1] else 0
        y0 = y if k else 0.0
        if k:
            tau = tx.startup_tau_us if x else tx.ringdown_tau_us
            y = x + (y0 - x) * math.exp(-1.0 / tau) if tk - 1 >= bounds[i] else y0
            if tk - 1 < bounds[i] <= tk:  # the boundary inside the step: split it
                xp = train.levels[i - 1]
                taup = tx.startup_tau_us if xp else tx.ringdown_tau_us
                yb = xp + (y0 - xp) * math.exp(-(bounds[i] - (tk - 1)) / taup)
                y = x + (yb - x) * math.exp(-(tk - bounds[i]) / tau)
        ref[k] = y
    np.testing.assert_allclose(got, ref, atol=1e-12)
    assert got[14] == pytest.approx(1 - math.exp(-1.0))  # one start-up time constant
    assert got[112] == pytest.approx(math.exp(-1.0), rel=1e-6)  # one ring-down constant
    assert got[163] < 1 - math.exp(-3 / 4.0) + 1e-9  # the 3 µs mark never reaches full


def test_transmitter_clock_scales_the_keyed_train() -> None:
    """An MCU clock off by E ppm sends every duration 1 + E 1e-6 times too long; a drift D
    ppm/s from each transmission start gives durations (1 + E 1e-6)(1 + D 1e-6 u) at u
    seconds in (integrated: the pulse-level channel's clock map, tx_time_map_us)."""
    train = PulseTrain(np.array([1, 0, 1, 0], np.uint8), np.array([500.0, 500.0, 1e6, 500.0]))
    fast = Transmitter(clock_ppm=-250.0).keyed(train)
    np.testing.assert_allclose(fast.durations_us, train.durations_us * (1 - 250e-6))
    np.testing.assert_array_equal(fast.levels, train.levels)
    assert Transmitter().keyed(train) is train
    tx = Transmitter(clock_ppm=100.0, drift_ppm_per_s=1000.0)
    ends = np.cumsum(tx.keyed(train, burst_starts_us=np.array([0.0, 1000.0])).durations_us)
    k = 1 + 100e-6
    u = 1e6 / 1e6  # the third pulse lasts 1 s from the second transmission's start
    assert ends[2] - ends[1] == pytest.approx(k * 1e6 * (1 + 1000e-6 * u / 2), rel=1e-12)
    assert ends[1] == pytest.approx(k * 1000.0 * (1 + 1000e-6 * 1e-3 / 2), rel=1e-12)
    for bad in ({"clock_ppm": 6e4}, {"drift_ppm_per_s": -5e4}, {"clock_ppm": math.nan}):
        with pytest.raises(ValueRangeError):
            Transmitter(**bad)


def test_clock_error_moves_the_receivers_edges() -> None:
    """Through the whole link (strong signal) the decoded frames follow the clock: the
    time from the first frame's start to the last one's scales by 1 + E 1e-6 (6.4 ms
    longer here, found within 15 µs: a few edge-jitter sigmas of the decoder's fitted
    frame starts), the chip by the same; the stress runner's map says so too."""
    spec = _spec()
    b = random_batch(of.compile_plan(spec), 2, np.random.default_rng(3))
    spans, units = {}, {}
    for ppm in (0.0, 20000.0):
        ch = PhysicalChannel(Transmitter(clock_ppm=ppm), distance_m=None, rx_power_dbm=-60.0)
        pin = apply_physical(b.train, ch, np.random.default_rng(4))
        assert pin.total_us == pytest.approx(b.train.total_us * (1 + ppm * 1e-6))
        frames = [f for f in of.decode_frames(spec, pin) if f.crc_ok]
        assert len(frames) == 6  # two transmissions of three repeats
        spans[ppm] = frames[-1].start_us - frames[0].start_us
        units[ppm] = np.mean([f.unit_us for f in frames])
        mapped = physical_time_map_us(b.starts_us, ch, b.starts_us)
        np.testing.assert_allclose(mapped, b.starts_us * (1 + ppm * 1e-6))
    assert spans[20000.0] == pytest.approx(spans[0.0] * 1.02, abs=15.0)
    assert units[20000.0] / units[0.0] == pytest.approx(1.02, abs=2e-3)


def test_two_carriers_add_their_powers() -> None:
    """Carriers at different offsets add: mean power is the sum of their powers."""
    on = PulseTrain(np.array([1], np.uint8), np.array([20000.0]))
    cs = [Carrier(on, -60.0, offset_hz=10e3), Carrier(on, -63.0, offset_hz=-27e3)]
    x = render_carriers(cs, 1e6, 20000.0)
    mid = np.abs(x[1000:19000]) ** 2
    assert 10 * np.log10(mid.mean()) == pytest.approx(
        10 * np.log10(10 ** -6.0 + 10 ** -6.3), abs=0.05)


# -- receiver ---------------------------------------------------------------------------

def test_detection_per_quench_is_rician() -> None:
    """P(|s + n|^2 > level) for n ~ CN(0, 1) is the Rice survival function with
    b = |s| / sigma, sigma = 1/sqrt(2) (scipy.stats.rice); the sampled quench outputs
    cross the detection level that often."""
    rx = Receiver()
    rng = np.random.default_rng(5)
    for margin_db in (-6.0, 0.0, 3.0):
        power = rx.sensitivity_dbm + margin_db
        snr = 10 ** ((power - detector_noise_dbm(rx)) / 10)
        sigma = math.sqrt(0.5)
        ref = stats.rice.sf(math.sqrt(detection_level(rx)) / sigma, math.sqrt(snr) / sigma)
        assert float(detect_probability(rx, power)) == pytest.approx(ref, rel=1e-6)
        v = quench_output(np.full(200_000, math.sqrt(snr), np.complex128), rx, rng)
        assert np.mean(v > 0) == pytest.approx(ref, abs=0.005)


def test_idle_output_is_noise_with_the_stated_statistics() -> None:
    """No carrier: the quench output crosses the detection level in idle_detect_prob of
    the periods (mean as integrated by scipy.integrate.quad), and the data pin toggles
    randomly with pulses of tens to a few hundred µs, both levels about equally."""
    rx = Receiver()
    rng = np.random.default_rng(11)
    v = quench_output(np.zeros(400_000, np.complex128), rx, rng)
    assert np.mean(v > 0) == pytest.approx(rx.idle_detect_prob, abs=0.003)
    assert float(v.mean()) == pytest.approx(idle_output_mean(rx), abs=0.003)
    quiet = PulseTrain(np.zeros(1, np.uint8), np.array([500_000.0]))
    pin = receive_carriers([Carrier(quiet, -300.0)], rx, 500_000.0, rng)
    d, lv = pin.durations_us[1:-1], pin.levels[1:-1]
    assert len(pin) > 1000
    assert 30 < d.mean() < 300
    high = d[lv == 1].sum() / d.sum()
    assert 0.35 < high < 0.65


def test_data_pin_edges_lie_on_the_quench_grid() -> None:
    """Every output edge is at phase + k * 2.5 µs (400 kHz quench)."""
    spec = _spec()
    rng = np.random.default_rng(2)
    batch = random_batch(spec, 3, rng)
    for phase in (0.3, 1.7):
        pin = receive_carriers([Carrier(batch.train, -80.0)], Receiver(), batch.train.total_us,
                               rng, phase_us=phase)
        edges = np.cumsum(pin.durations_us)[:-1]
        k = (edges - phase) / 2.5
        np.testing.assert_allclose(k, np.round(k), atol=1e-6)
        assert len(pin) > 100


def test_strong_signal_marks_keep_their_width() -> None:
    """Well above sensitivity the data pin reproduces the keyed marks within a few quench
    periods (start-up, data filter and quench grid)."""
    lv = np.array([0] + [1, 0] * 60, np.uint8)
    du = np.array([20000.0] + [400.0, 600.0] * 60)
    train = PulseTrain(lv, du)
    pin = apply_physical(train, _at(-70.0), np.random.default_rng(4))
    begin = pin.edges_us()
    inside = (pin.levels == 1) & (begin > 25000.0) & (begin < train.total_us - 1000.0)
    d = pin.durations_us[inside]
    assert d.size >= 50
    assert 400.0 <= float(np.median(d)) <= 400.0 + 8 * 2.5  # marks lengthen a little
    assert float(np.percentile(d, 95)) - float(np.percentile(d, 5)) <= 6 * 2.5


def test_slicer_settling_misshapes_the_first_marks() -> None:
    """With a slow slicer the first preamble periods are misshaped (noise and late edges
    in the spaces while the threshold climbs from its idle level); later ones are clean."""
    rx = Receiver(slicer_tau_us=10000.0)
    lv = np.array([0] + [1, 0] * 60, np.uint8)
    du = np.array([30000.0] + [500.0] * 120)
    train = PulseTrain(lv, du)
    rng = np.random.default_rng(9)
    early, late = [], []
    for _ in range(6):
        pin = apply_physical(train, _at(-103.0, rx), rng)
        e = np.concatenate(([0.0], np.cumsum(pin.durations_us)))
        for k in range(60):
            a, b = 30000.0 + k * 1000.0, 30000.0 + k * 1000.0 + 1000.0
            cover = np.clip(np.minimum(e[1:], b) - np.maximum(e[:-1], a), 0, None)
            wrong = 1.0 - (cover * (pin.levels == 1))[:].sum() / 1000.0  # of a 50 % period
            error = abs(wrong - 0.5)
            (early if k < 3 else late if k >= 40 else []).append(error)
    assert np.mean(early) > 2 * np.mean(late)


def test_long_enough_preamble_lets_the_slicer_settle() -> None:
    """Near sensitivity, with a slicer that settles over 10 ms, a 1-byte preamble loses
    more transmissions than an 8-byte one (the decoder's sync search still finds frames
    once the threshold has settled)."""
    rx = Receiver(slicer_tau_us=10000.0)
    per = {}
    for count in (1, 8):
        doc = tomllib.loads((EXAMPLES / "hive_scale.toml").read_text())
        doc["frame"]["repeats"] = 1
        doc["preamble"]["count"] = count
        spec = of.spec_from_dict(doc)
        per[count] = run_stress(spec, _at(-103.0, rx), 300, seed=2)
    short, long_ = per[1], per[8]
    assert long_.per < 0.12
    assert short.per_ci95[0] > long_.per_ci95[1] or short.per > 2 * long_.per + 0.05


# -- stress through the physical link ---------------------------------------------------

def test_per_is_near_zero_above_and_one_below_sensitivity() -> None:
    """15 dB above sensitivity every frame decodes; 10 dB below none does (cheap and good
    receivers)."""
    spec = _spec()
    for kind in ("cheap", "good"):
        rx = get_receiver(kind)
        above = run_stress(spec, _at(rx.sensitivity_dbm + 15, rx), 150, seed=1)
        below = run_stress(spec, _at(rx.sensitivity_dbm - 10, rx), 150, seed=1)
        assert above.per <= 0.01, kind
        assert below.per == 1.0, kind
        assert below.false_accepts == 0


def test_per_rises_monotonically_with_distance_and_falls_with_power() -> None:
    """PER against received power (common random numbers) never falls as power drops, and
    goes from near 0 to near 1 within a few dB around the sensitivity."""
    spec = _spec("tank_level")
    powers = [-97.0, -101.0, -103.0, -105.0, -109.0]
    pers = [run_stress(spec, _at(p), 200, seed=3).per for p in powers]
    assert all(b >= a - 0.03 for a, b in zip(pers, pers[1:], strict=False)), pers
    assert pers[0] < 0.05 and pers[-1] > 0.95, pers
    base = PhysicalChannel(path=PathModel(exponent=3.0), distance_m=100.0)
    d_pers = [run_stress(spec, base.at(distance_m=d), 200, seed=3).per
              for d in (200.0, 450.0, 1500.0)]
    assert d_pers[0] <= d_pers[1] <= d_pers[2] and d_pers[0] < 0.05 and d_pers[2] > 0.95, d_pers


def test_physical_stress_is_reproducible_across_workers() -> None:
    """Same seed, same counts with 1 or 2 worker processes."""
    spec = _spec("tank_level")
    ch = _at(-103.0)
    a = run_stress(spec, ch, 120, seed=7, chunk_frames=40)
    b = run_stress(spec, ch, 120, seed=7, chunk_frames=40, workers=2)
    assert a == b
    assert a.to_dict()["channel"]["kind"] == "physical"


# -- captures ---------------------------------------------------------------------------

def test_baseband_noise_is_kt_plus_noise_figure_over_the_sample_rate() -> None:
    """No carrier: the mean power of the written baseband is -174 dBm/Hz + NF + 10 log10(fs)."""
    quiet = PulseTrain(np.zeros(1, np.uint8), np.array([100_000.0]))
    ch = _at(-200.0)
    x = render_baseband(quiet, ch, 1e6, np.random.default_rng(0))
    got = 10 * np.log10(np.mean(np.abs(x.astype(np.complex128)) ** 2))
    assert got == pytest.approx(thermal_noise_dbm_per_hz() + ch.rx.noise_figure_db + 60.0,
                                abs=0.05)
    assert baseband_snr_db(_at(-90.0), 1e6) == pytest.approx(-90.0 + 174.0 - 10.0 - 60.0,
                                                             abs=0.05)


@pytest.mark.parametrize("dtype", ["u8", "s16", "s32", "f32"])
@pytest.mark.parametrize("kind", ["envelope", "iq"])
def test_wav_files_read_back(tmp_path: Path, kind: str, dtype: str) -> None:
    """The rendered WAV reads back with scipy.io.wavfile and with soundfile (libsndfile)
    as the scaled samples (peak magnitude at 0.8 of full scale), within the sample type's
    quantisation."""
    sf = pytest.importorskip("soundfile")
    spec = _spec()
    rng = np.random.default_rng(1)
    train = random_batch(spec, 1, rng).train
    x = render_baseband(train, _at(-95.0), 100e3, rng)
    path = tmp_path / f"c_{kind}_{dtype}.wav"
    write_wav(path, x, 100e3, kind, dtype)
    ref = scaled_samples(x, kind)
    assert np.abs(ref).max() == pytest.approx(0.8, abs=1e-6)  # peak magnitude
    ref = np.stack((ref.real, ref.imag), axis=1) if kind == "iq" else ref
    with warnings.catch_warnings():  # soundfile's float WAV has a chunk scipy skips
        warnings.simplefilter("ignore", wavfile.WavFileWarning)
        rate, data = wavfile.read(path)
    assert rate == 100_000
    offset, scale = {"u8": (128.0, 128.0), "s16": (0.0, 32768.0),
                     "s32": (0.0, 2.0**31), "f32": (0.0, 1.0)}[dtype]
    got = (data.astype(np.float64) - offset) / scale
    assert got.shape == ref.shape
    step = 1.0 / scale if dtype != "f32" else 1e-6
    np.testing.assert_allclose(got, ref, atol=1.01 * step)
    data2, rate2 = sf.read(path, dtype="float64")
    assert rate2 == 100_000
    np.testing.assert_allclose(data2, got, atol=1e-9)


@pytest.mark.parametrize("fmt", ["u8", "s16", "f32"])
def test_raw_iq_files_read_back(tmp_path: Path, fmt: str) -> None:
    """Raw interleaved I/Q reads back with numpy.fromfile (u8 offset binary around 127.5,
    s16 and f32 little-endian) as the scaled complex samples written."""
    rng = np.random.default_rng(3)
    train = random_batch(_spec("tank_level"), 1, rng).train
    x = render_baseband(train, _at(-90.0), 250e3, rng, offset_hz=20e3)
    path = tmp_path / f"c.{fmt}.iq"
    write_iq(path, x, fmt)
    raw = np.fromfile(path, {"u8": np.uint8, "s16": "<i2", "f32": "<f4"}[fmt]).astype(float)
    offset, scale = {"u8": (127.5, 127.5), "s16": (0.0, 32768.0), "f32": (0.0, 1.0)}[fmt]
    raw = (raw - offset) / scale
    y = raw[0::2] + 1j * raw[1::2]
    ref = scaled_samples(x, "iq")
    assert y.size == x.size
    step = 1.0 / scale if fmt != "f32" else 1e-6
    assert np.max(np.abs(y.real - ref.real)) <= 0.51 * step + 1e-7
    assert np.max(np.abs(y.imag - ref.imag)) <= 0.51 * step + 1e-7


def test_writers_refuse_to_overwrite(tmp_path: Path) -> None:
    """An existing file is kept unless force is given; nothing half-written is left."""
    path = tmp_path / "c.wav"
    path.write_bytes(b"keep")
    x = np.ones(10, np.complex64)
    with pytest.raises(ValueRangeError):
        write_wav(path, x, 1e5)
    iq = tmp_path / "c.s16.iq"
    iq.write_bytes(b"keep")
    with pytest.raises(ValueRangeError):
        write_iq(iq, x)
    assert path.read_bytes() == b"keep" and iq.read_bytes() == b"keep"
    write_wav(path, x, 1e5, force=True)
    assert wavfile.read(path)[0] == 100_000
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.s16.iq", "c.wav"]


def test_pin_samples_follow_the_train() -> None:
    """The sampled data pin is each pulse's level at the sample times."""
    train = PulseTrain(np.array([0, 1, 0], np.uint8), np.array([10.0, 20.0, 10.0]))
    s = pin_samples(train, 1e6)
    assert s.size == 41
    assert s[:10].sum() == 0 and s[10:30].all() and s[30:].sum() == 0


# -- through the sampled-capture front end ----------------------------------------------

def _front_end_successes(tmp_path: Path, spec, power_dbm: float, suffix: str,
                         seed: int) -> int:
    """Return how many of 6 transmissions decode correctly from a capture of the physical
    link written as ``suffix`` and read back through the sampled-capture front end."""
    from ookframe.decode import decode
    from ookframe.frontend import config_for_unit, slice_capture

    rng = np.random.default_rng(seed)
    batch = random_batch(spec, 6, rng)
    x = render_baseband(batch.train, _at(power_dbm), 250e3, rng, offset_hz=15e3)
    path = tmp_path / f"p{power_dbm:g}{suffix}"
    if suffix.endswith(".wav"):
        write_wav(path, x, 250e3, "envelope", "s16")
        train, _ = slice_capture(path, config_for_unit(spec.unit_us))
    else:
        write_iq(path, x, "u8")
        train, _ = slice_capture(path, config_for_unit(spec.unit_us), sample_rate_hz=250e3)
    frames = [f for f in decode(spec, train) if f.crc_ok]
    half = batch.gap_us / 2
    window = np.searchsorted(np.append(batch.starts_us - half, batch.ends_us[-1] + half),
                             [f.start_us for f in frames], side="right") - 1
    ok = {int(w) for f, w in zip(frames, window, strict=True)
          if 0 <= w < batch.n and f.payload_hex == batch.payload_hex[w]}
    return len(ok)


@pytest.mark.parametrize("suffix", [".wav", ".u8.iq"])
def test_front_end_decodes_more_as_snr_rises(tmp_path: Path, suffix: str) -> None:
    """Captures of the physical link (envelope WAV, u8 I/Q with a carrier offset) read by
    the front end: decode success never falls as the received power (SNR over the
    250 kHz sample rate: power + 174 - 10 dB - 54 dB) rises, none decode far below, all
    decode well above."""
    spec = _spec("hive_scale")
    powers = [-118.0, -112.0, -108.0, -104.0, -96.0]
    got = [_front_end_successes(tmp_path, spec, p, suffix, seed=k)
           for k, p in enumerate(powers)]
    assert got[0] == 0 and got[-1] == 6, got
    assert all(b >= a for a, b in zip(got, got[1:], strict=False)), got

"""Baseband PSD and 99 % bandwidth (analysis.spectrum) against textbook closed forms.

Closed forms (L. W. Couch, "Digital and Analog Communication Systems", section on the
spectra of line codes; from memory), bit time T_b, levels 0/1, continuous part only:
  unipolar NRZ:       P(f) = (T_b / 4) sinc^2(f T_b)
  unipolar Manchester P(f) = (T_b / 4) sinc^2(f T_b / 2) sin^2(pi f T_b / 2)
(the Manchester form is Couch's polar one, A^2 T_b sinc^2(f T_b/2) sin^2(pi f T_b/2), with
A = 1/2: unipolar 0/1 keying is 1/2 plus a polar signal of amplitude 1/2). Both are
two-sided; the one-sided PSD is twice that. np.sinc(x) = sin(pi x) / (pi x).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.signal import welch

import ookframe
from ookframe.analysis.spectrum import (
    bandwidth_hz,
    baseband_psd,
    chip_stream,
    occupied_bandwidth_hz,
)
from ookframe.errors import ValueRangeError

UNIT_US = 100.0
T_S = UNIT_US * 1e-6


def random_bits_spec(line_code: str, unit_us: float = UNIT_US) -> ookframe.FrameSpec:
    """1028-bit frames of which 1024 are random (no preamble, 4-bit sync, no check)."""
    return ookframe.spec_from_dict({
        "frame": {"name": "psd_probe", "unit_us": unit_us},
        "line_code": {"name": line_code},
        "preamble": {"count": 0},
        "sync": {"value": 0x5, "length_bits": 4},
        "fields": [{"name": f"f{i}", "width_bits": 64} for i in range(16)],
        "check": {"kind": "none"},
    })


def couch_one_sided(line_code: str, f_hz: np.ndarray) -> tuple[np.ndarray, float]:
    """Return (one-sided closed-form PSD, bit time T_b in s) for ``line_code``."""
    if line_code == "nrz":
        tb = T_S
        return 2 * (tb / 4) * np.sinc(f_hz * tb) ** 2, tb
    tb = 2 * T_S  # Manchester: two chips per bit
    return 2 * (tb / 4) * np.sinc(f_hz * tb / 2) ** 2 * np.sin(np.pi * f_hz * tb / 2) ** 2, tb


def band_powers(f_hz, psd, edges_hz):
    cum = np.concatenate(([0.0], np.cumsum((psd[1:] + psd[:-1]) / 2 * np.diff(f_hz))))
    return np.diff(np.interp(edges_hz, f_hz, cum))


def oversampled_welch(line_code: str, samples_per_unit: int = 32, n_frames: int = 32):
    """Reference estimate by brute force: each chip held for ``samples_per_unit`` samples,
    scipy.signal.welch of the waveform minus its mean (one-sided, level^2/Hz)."""
    chips = chip_stream(random_bits_spec(line_code), np.random.default_rng(11), n_frames)
    x = np.repeat(chips - chips.mean(), samples_per_unit)
    return welch(x, fs=samples_per_unit / T_S, nperseg=64 * samples_per_unit, detrend=False)


def _assert_bands_agree(f_a, p_a, f_b, p_b, edges_hz, rel=0.05):
    a, b = band_powers(f_a, p_a, edges_hz), band_powers(f_b, p_b, edges_hz)
    a, b = a / a.sum(), b / b.sum()
    assert np.all(np.abs(a - b) <= rel * b + 5e-4), np.round(np.c_[a, b], 4)


@pytest.mark.parametrize("line_code", ["nrz", "manchester"])
def test_psd_shape_matches_couch(line_code):
    """Band powers (16 bands of T_b/4 up to 4/T_b, normalised) of baseband_psd and of the
    brute-force oversampled welch estimate both agree with Couch's closed form within 5 %
    (+0.05 % of the total); total AC power is the chip variance 1/4 (Parseval)."""
    spec = random_bits_spec(line_code)
    f, p = baseband_psd(spec, np.random.default_rng(1), n_frames=128, max_freq_hz=40 / T_S)
    ref, tb = couch_one_sided(line_code, f)
    edges = np.arange(17) * 0.25 / tb
    _assert_bands_agree(f, p, f, ref, edges)
    fw, pw = oversampled_welch(line_code)
    _assert_bands_agree(fw, pw, fw, couch_one_sided(line_code, fw)[0], edges)
    assert np.trapezoid(p, f) == pytest.approx(0.25, rel=0.02)


def _is_null(f, p, at_hz, depth=1e-3):
    near = (f > at_hz * 0.75) & (f < at_hz * 1.25)
    i = np.argmin(p[near])
    return abs(f[near][i] - at_hz) <= 2 * (f[1] - f[0]) and p[near][i] < depth * p.max()


def test_null_positions():
    """Couch: unipolar NRZ has nulls at k/T_b; Manchester has none at 1/T_b but nulls at
    2/T_b and 4/T_b. Checked on the brute-force oversampled welch estimate."""
    f, p = oversampled_welch("nrz")
    assert all(_is_null(f, p, k / T_S) for k in (1, 2, 3))
    f, p = oversampled_welch("manchester")
    tb = 2 * T_S
    assert _is_null(f, p, 2 / tb) and _is_null(f, p, 4 / tb)
    assert not _is_null(f, p, 1 / tb, depth=0.1)


def test_factorised_psd_equals_oversampled_estimate():
    """baseband_psd (chip PSD x sinc^2 envelope) and the brute-force oversampled welch estimate
    of the same kind of random frames agree band by band up to a quarter of the sample rate."""
    for line_code in ("nrz", "manchester"):
        spec = random_bits_spec(line_code)
        f, p = baseband_psd(spec, np.random.default_rng(2), n_frames=128, max_freq_hz=8 / T_S)
        fw, pw = oversampled_welch(line_code)
        _assert_bands_agree(f, p, fw, pw, np.arange(33) * 0.25 / T_S)


def _closed_form_bandwidth(integrand, total: float, fraction: float) -> float:
    """Smallest x holding ``fraction`` of ``total``, the integral of ``integrand`` over
    (0, inf); quad over whole units (the integrands have zeros at the integers)."""
    def cum(b):
        pts = np.append(np.arange(0.0, np.ceil(b)), b)
        return sum(quad(integrand, lo, hi)[0] for lo, hi in zip(pts[:-1], pts[1:], strict=True))
    return brentq(lambda b: cum(b) - fraction * total, 1e-3, 60.0)


@pytest.mark.parametrize("fraction", [0.9, 0.99])
def test_occupied_bandwidth_against_closed_form(fraction):
    """99 % (and 90 %) one-sided bandwidth of random NRZ and Manchester against the same
    fraction of Couch's closed-form PSD, integrated with scipy.integrate.quad and solved with
    brentq: NRZ 99 % = 10.29 / T, Manchester 99 % = 15.38 / T_chip (= 7.69 / T_b). Within 2 %.
    Totals from the standard integrals of sin^2(x)/x^2 (pi/2) and sin^4(x)/x^2 (pi/4) over
    (0, inf): 1/2 and 1/4 in the variable x = f T_chip."""
    nrz = _closed_form_bandwidth(lambda x: np.sinc(x) ** 2, 0.5, fraction) / T_S
    man = _closed_form_bandwidth(lambda x: np.sinc(x) ** 2 * np.sin(np.pi * x) ** 2, 0.25,
                                 fraction) / T_S  # x = f T_chip = f T_b / 2
    if fraction == 0.99:
        assert nrz * T_S == pytest.approx(10.29, abs=0.01)
        assert man * T_S == pytest.approx(15.38, abs=0.01)
    for line_code, ref in (("nrz", nrz), ("manchester", man)):
        got = occupied_bandwidth_hz(random_bits_spec(line_code), np.random.default_rng(3),
                                    fraction=fraction, n_frames=64)
        assert got == pytest.approx(ref, rel=0.02)


def test_bandwidth_scales_with_unit_and_is_deterministic():
    """Same chips at twice the unit give half the bandwidth (time scaling); bandwidth_hz uses a
    fixed seed, so two calls agree exactly."""
    a = occupied_bandwidth_hz(random_bits_spec("nrz", 100.0), np.random.default_rng(4), n_frames=16)
    b = occupied_bandwidth_hz(random_bits_spec("nrz", 200.0), np.random.default_rng(4), n_frames=16)
    assert b == pytest.approx(a / 2, rel=1e-9)
    spec = random_bits_spec("manchester")
    assert bandwidth_hz(spec) == bandwidth_hz.__wrapped__(spec)


def test_examples_bandwidth(example):
    """Every shipped example gets a bandwidth between its bit rate and 40 chip rates (ideal
    keying of 0/1 chips: the 1/f^2 tail puts the 99 % point near 10-16 chip rates)."""
    spec, _ = example
    b = bandwidth_hz(spec)
    chip_rate = 1e6 / spec.unit_us
    assert chip_rate < b < 40 * chip_rate


def test_bad_arguments():
    spec = random_bits_spec("nrz")
    with pytest.raises(ValueRangeError, match="fraction"):
        occupied_bandwidth_hz(spec, np.random.default_rng(0), fraction=1.0)
    with pytest.raises(ValueRangeError, match="n_frames"):
        baseband_psd(spec, np.random.default_rng(0), n_frames=0)

"""Airtime, duty cycle, region rules, pure-ALOHA collisions and energy (analysis.airtime,
analysis.regions and the ``airtime`` command)."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

from ookframe.analysis import airtime as at
from ookframe.analysis.regions import (
    REGIONS,
    check_region,
    fcc_15_231_bandwidth_limit_hz,
    fcc_15_231_field_limit_uv_m,
    field_strength_uv_m,
    met_options,
    verdict,
    worst_hour_on_time_s,
)
from ookframe.cli import exitcodes
from ookframe.cli.main import main
from ookframe.cli.output import REGULATORY_CAUTION
from ookframe.errors import ValueRangeError
from ookframe.frame import frame_chips, random_values
from tests.conftest import example_spec

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EXAMPLES / "hive_scale.toml")


def _by_rule(findings, rule, option_start=""):
    return next(f for f in findings if f.rule == rule and f.option.startswith(option_start))


# --- airtime and duty cycle -----------------------------------------------------------------

def test_hive_scale_worked_example():
    """By hand from examples/hive_scale.toml: 4 preamble + 2 sync + 6 field + 2 CRC bytes =
    112 bits, Manchester 2 chips of 250 µs each -> 56 ms; 3 repeats + 2 gaps of 8 ms = 184 ms;
    half of every Manchester bit is a mark -> 3 x 28 ms = 84 ms. Every 900 s: 4 per hour,
    0.736 s per hour, 0.736 / 3600 = 0.020444 % (arithmetic, no source)."""
    spec, _ = example_spec("hive_scale.toml")
    t = at.tx_timing(spec, np.random.default_rng(1))
    assert t.frame_us == pytest.approx(56_000)
    assert t.airtime_us == pytest.approx(184_000) and t.max_airtime_us == pytest.approx(184_000)
    assert t.mark_us == pytest.approx(84_000)
    assert not t.data_dependent
    d = at.duty_cycle(t.max_airtime_us, 900.0)
    assert d.transmissions_per_hour == 4
    assert d.on_time_per_hour_s == pytest.approx(0.736)
    assert d.duty_cycle_pct == pytest.approx(0.736 / 36)


def test_gate_sensor_upper_bound_by_hand():
    """By hand from examples/gate_sensor.toml (pulse distance, mark 1, spaces 1/3, 350 µs):
    preamble 8 zero bits = 16 units; sync 0xE5 = 5 ones x 4 + 3 zeros x 2 = 26 units; body
    24 field + 8 check bits all at the long symbol = 128 units; stop mark 1 -> 171 units =
    59.85 ms; 5 repeats + 4 gaps of 9 ms = 335.25 ms (arithmetic, no source)."""
    spec, _ = example_spec("gate_sensor.toml")
    assert at.max_frame_us(spec) == pytest.approx(171 * 350.0)
    assert at.max_airtime_us(spec) == pytest.approx(5 * 59_850 + 4 * 9000)
    t = at.tx_timing(spec, np.random.default_rng(2))
    assert t.data_dependent and t.frame_us < t.max_frame_us


def test_upper_bound_holds_for_random_payloads(example):
    """No random payload gives a frame longer than max_frame_us (every shipped example)."""
    spec, _ = example
    rng = np.random.default_rng(3)
    longest = max(frame_chips(spec, random_values(spec, rng)).size for _ in range(200))
    assert longest * spec.unit_us <= at.max_frame_us(spec) + 1e-9


def test_worst_hour_window_by_hand():
    """1 s every 1000 s: a 3600 s window holds 3 whole periods plus 600 s, which can hold a
    fourth transmission -> 4 s (not the mean 3.6 s); 1 s every 900 s -> exactly 4 s; one
    transmission every 2 h -> 1 s (arithmetic, no source)."""
    assert worst_hour_on_time_s(1.0, 1000.0) == pytest.approx(4.0)
    assert worst_hour_on_time_s(1.0, 900.0) == pytest.approx(4.0)
    assert worst_hour_on_time_s(1.0, 7200.0) == pytest.approx(1.0)
    assert worst_hour_on_time_s(1.0, 3599.5) == pytest.approx(1.5)  # two partial copies


@settings(max_examples=200, deadline=None)
@given(airtime_s=st.floats(1e-4, 10.0), ratio=st.floats(1.0001, 1e4))
def test_worst_hour_bounds(airtime_s, ratio):
    """The worst window holds at least the mean on-time and never more than the window or the
    mean plus one transmission (property of periodic transmissions, no source)."""
    interval_s = airtime_s * ratio
    worst = worst_hour_on_time_s(airtime_s, interval_s)
    mean = 3600.0 * airtime_s / interval_s
    assert mean * (1 - 1e-12) <= worst <= min(3600.0, mean + airtime_s) * (1 + 1e-12)


def test_duty_cycle_rejects_bad_input():
    with pytest.raises(ValueRangeError, match="interval_s must be longer"):
        at.duty_cycle(200_000, 0.2)
    with pytest.raises(ValueRangeError, match="airtime_us must be > 0"):
        at.duty_cycle(0, 10)


# --- region rules (from memory; boundary cases) ---------------------------------------------

def test_cept_duty_cycle_boundary():
    """ERC/REC 70-03 Annex 1, 433.05-434.79 MHz, 10 mW e.r.p.: duty cycle <= 10 % (from
    memory). 360 ms every 3.6 s is exactly 10 % and passes; 360.1 ms fails."""
    ok = _by_rule(check_region("cept-433", 360_000, 3.6, 10.0), "duty cycle (worst 1 h)")
    assert ok.ok is True and ok.value == pytest.approx(10.0) and ok.limit == 10.0
    bad = _by_rule(check_region("cept-433", 360_100, 3.6, 10.0), "duty cycle (worst 1 h)")
    assert bad.ok is False
    assert "70-03 Annex 1" in ok.clause and "433.05-434.79" in ok.clause


def test_cept_power_options_and_verdict():
    """ERC/REC 70-03 Annex 1 (from memory): 10 mW at <= 10 % duty, or 1 mW with no duty
    limit, or 434.04-434.79 MHz at 10 mW with a <= 25 kHz channel. Exactly 10 mW and exactly
    1 mW pass; 50 % duty passes only through the 1 mW option or the narrow sub-band."""
    sub = 434.5e6  # inside the 434.04-434.79 MHz sub-band
    f = check_region("cept-433", 500_000, 1.0, 10.0)  # 50 % duty
    assert _by_rule(f, "e.r.p.", "433.05-434.79 MHz: 10 mW").ok is True
    assert _by_rule(f, "duty cycle (worst 1 h)").ok is False
    assert verdict(f) is None  # sub-band option still open: bandwidth not given
    assert verdict(check_region("cept-433", 500_000, 1.0, 10.0, rf_bandwidth_hz=25_000,
                                carrier_hz=sub)) is True
    assert verdict(check_region("cept-433", 500_000, 1.0, 10.0, rf_bandwidth_hz=25_001,
                                carrier_hz=sub)) is False
    assert verdict(check_region("cept-433", 500_000, 1.0, 1.0, rf_bandwidth_hz=200e3)) is True
    assert verdict(check_region("cept-433", 500_000, 1.0, 10.01, rf_bandwidth_hz=1.0,
                                carrier_hz=sub)) is False
    assert verdict(check_region("cept-433", 1000, 100.0)) is None  # no power: not assessed
    assert all(x.ok is None for x in check_region("cept-433", 1000, 100.0) if x.unit == "mW")


def test_cept_sub_band_needs_its_carrier():
    """ERC/REC 70-03 Annex 1 (from memory): the 100 % duty option is the 434.04-434.79 MHz
    sub-band only; 433.92 MHz lies in 433.05-434.79 MHz but not in the sub-band, so 50 %
    duty at 10 mW in a 25 kHz channel meets no option there; without a carrier the sub-band
    is not assessed. A carrier outside 433.05-434.79 MHz fails every option."""
    kw = {"rf_bandwidth_hz": 25_000.0}
    f = check_region("cept-433", 500_000, 1.0, 10.0, carrier_hz=433.92e6, **kw)
    assert _by_rule(f, "carrier frequency", "434.04-434.79 MHz").ok is False
    assert _by_rule(f, "carrier frequency", "433.05-434.79 MHz: 10 mW").ok is True
    assert verdict(f) is False
    assert verdict(check_region("cept-433", 500_000, 1.0, 10.0, carrier_hz=434.04e6, **kw)) is True
    assert _by_rule(check_region("cept-433", 500_000, 1.0, 10.0, **kw), "carrier frequency").ok is None
    assert verdict(check_region("cept-433", 1000, 100.0, 1.0, carrier_hz=868.3e6, **kw)) is False


def test_cept_1mw_wideband_power_density():
    """ERC/REC 70-03 Annex 1, 433.05-434.79 MHz, 1 mW row: -13 dBm/10 kHz power density
    (the figure as reproduced in a copy of the Recommendation, hobbydocbox.com transcript
    of ERC/REC 70-03; its application above 250 kHz modulation bandwidth from memory). Above
    250 kHz it needs the spectrum: not assessed; at or below it does not apply."""
    wide = check_region("cept-433", 500_000, 1.0, 1.0, rf_bandwidth_hz=300e3)
    pd = _by_rule(wide, "power density (bandwidth > 250 kHz)")
    assert pd.limit == -13.0 and pd.unit == "dBm/10 kHz" and pd.ok is None
    assert verdict(wide) is None
    narrow = check_region("cept-433", 500_000, 1.0, 1.0, rf_bandwidth_hz=250e3)
    assert not [x for x in narrow if x.rule.startswith("power density")]
    assert "-13 dBm per 10 kHz" in _by_rule(narrow, "e.r.p.", "433.05-434.79 MHz: 1 mW").note


def test_fcc_15_231_field_strength_table():
    """47 CFR 15.231(b) and (e) fundamental limits at 3 m (from memory): 40.66-40.70 MHz
    2,250 / 1,000 µV/m; 70-130 MHz 1,250 / 500; 130-174 MHz linear 1,250-3,750 / 500-1,500;
    174-260 MHz 3,750 / 1,500; 260-470 MHz linear 3,750-12,500 / 1,500-5,000 (the rule's
    footnote: 41.6667 F - 7083.3333 for (b)); above 470 MHz 12,500 / 5,000. By hand:
    433.92 MHz gives 10,996.67 / 4,398.67 µV/m, 315 MHz 6,041.67 / 2,416.67, 150 MHz
    1,250 + 2,500 x 20/44 = 2,386.36 (footnote 56.82 F - 6136 = 2,387)."""
    lim = fcc_15_231_field_limit_uv_m
    assert lim(433.92e6) == pytest.approx(41.6667 * 433.92 - 7083.3333, abs=0.05)
    assert lim(433.92e6) == pytest.approx(10_996.667, abs=1e-3)
    assert lim(433.92e6, "e") == pytest.approx(4_398.667, abs=1e-3)
    assert lim(315e6) == pytest.approx(6_041.667, abs=1e-3)
    assert lim(315e6, "e") == pytest.approx(2_416.667, abs=1e-3)
    assert lim(150e6) == pytest.approx(2_386.364, abs=1e-3)
    assert lim(150e6) == pytest.approx(56.82 * 150 - 6136, abs=1.0)
    assert (lim(260e6), lim(470e6), lim(915e6)) == (3750.0, 12_500.0, 12_500.0)
    assert (lim(260e6, "e"), lim(470e6, "e"), lim(915e6, "e")) == (1500.0, 5000.0, 5000.0)
    assert (lim(40.68e6), lim(40.68e6, "e"), lim(100e6), lim(200e6, "e")) == (
        2250.0, 1000.0, 1250.0, 1500.0)
    assert lim(50e6) is None and lim(27.1e6, "e") is None


def test_erp_to_field_strength_at_3m():
    """Free-space far field (common practice, no source): E = sqrt(30 EIRP) / d with
    EIRP = 1.64 e.r.p. By hand: 10 mW e.r.p. -> sqrt(30 x 0.0164) / 3 = 0.233809 V/m =
    233,809 µV/m, 26 dB above the 10,997 µV/m of 15.231(b) at 433.92 MHz; the e.r.p. giving
    exactly that limit is (0.01099667 x 3)^2 / 49.2 W = 22.12 µW."""
    assert field_strength_uv_m(10.0) == pytest.approx(233_809.04, abs=0.01)
    e_limit = fcc_15_231_field_limit_uv_m(433.92e6)
    p_mw = (e_limit * 1e-6 * 3.0) ** 2 / (30 * 1.64) * 1e3
    assert p_mw == pytest.approx(0.022120, abs=1e-6)
    assert field_strength_uv_m(p_mw) == pytest.approx(e_limit)
    assert 20 * math.log10(field_strength_uv_m(10.0) / e_limit) == pytest.approx(26.56, abs=0.01)


def test_fcc_15_231_power_is_assessed():
    """47 CFR 15.231(b)/(e) (from memory): 10 mW e.r.p. at 433.92 MHz is far above both
    field-strength limits, so no option is met; without --power-mw the field strength is
    not assessed (verdict None, as for CEPT), unless it is above the highest limit of the
    table at any frequency (12,500 / 5,000 µV/m): 10 mW then fails without a carrier too.
    10 µW (7,394 µV/m) meets (b) but not (e), so only 15.231(a) is met, and it carries the
    security/safety condition of (a)(3)."""
    kw = {"rf_bandwidth_hz": 60e3, "carrier_hz": 433.92e6}
    f = check_region("fcc-15.231", 184_000, 900.0, 10.0, **kw)
    fields = [x for x in f if x.unit == "µV/m"]
    assert len(fields) == 2 and all(x.ok is False for x in fields)
    assert verdict(f) is False and met_options(f) == []
    none = check_region("fcc-15.231", 184_000, 900.0, **kw)
    assert all(x.ok is None for x in none if x.unit == "µV/m") and verdict(none) is None
    assert verdict(check_region("fcc-15.231", 184_000, 900.0, 10.0)) is False  # any carrier
    no_carrier = check_region("fcc-15.231", 184_000, 900.0, 0.01)
    assert [x.ok for x in no_carrier if x.unit == "µV/m"] == [None, False]  # 7,394 > 5,000
    low = check_region("fcc-15.231", 184_000, 900.0, 0.01, **kw)  # 7,394 µV/m
    assert verdict(low) is True
    (option, conditions), = met_options(low)
    assert option.startswith("15.231(a)") and "security or safety" in conditions[0]
    assert "security or safety" in option
    a3 = _by_rule(low, "periodic transmissions, total per hour")
    assert "only" in a3.note and "security or safety" in a3.condition


def test_fcc_15_231_c_bandwidth():
    """47 CFR 15.231(c) (from memory): emission bandwidth <= 0.25 % of the centre frequency
    above 70 and below 900 MHz, 0.5 % above 900 MHz. 433.92 MHz: 1,084,800 Hz passes,
    1,084,801 fails; 915 MHz: 4.575 MHz. Without a bandwidth it is not assessed."""
    def bw_rule(bw, carrier):
        return _by_rule(check_region("fcc-15.231", 184_000, 900.0, rf_bandwidth_hz=bw,
                                     carrier_hz=carrier), "emission bandwidth")
    assert fcc_15_231_bandwidth_limit_hz(433.92e6) == pytest.approx(1_084_800.0)
    assert fcc_15_231_bandwidth_limit_hz(915e6) == pytest.approx(4_575_000.0)
    assert bw_rule(1_084_800.0, 433.92e6).ok is True
    assert bw_rule(1_084_801.0, 433.92e6).ok is False
    assert bw_rule(None, 433.92e6).ok is None and bw_rule(1e3, None).ok is None


def test_fcc_15_231_carrier_range():
    """47 CFR 15.231 (from memory) covers 40.66-40.70 MHz and 70 MHz and up: 40.68 and
    70 MHz pass, 50 MHz and 27.1 MHz fail (and their field strength has no limit)."""
    def carrier(f_hz):
        return _by_rule(check_region("fcc-15.231", 184_000, 900.0, 0.001, carrier_hz=f_hz),
                        "carrier frequency")
    assert carrier(40.68e6).ok is True and carrier(70e6).ok is True
    assert carrier(50e6).ok is False and carrier(27.1e6).ok is False
    f = check_region("fcc-15.231", 184_000, 900.0, 0.001, carrier_hz=50e6)
    assert verdict(f) is False


def test_fcc_15_231_a3_two_seconds_per_hour():
    """47 CFR 15.231(a)(3) (from memory): periodic supervision totals <= 2 s per hour.
    0.5 s every 900 s = 2.0 s per hour passes; 0.5001 s fails."""
    f = _by_rule(check_region("fcc-15.231", 500_000, 900.0), "periodic transmissions, total per hour")
    assert f.ok is True and f.value == pytest.approx(2.0) and f.clause.endswith("15.231(a)(3)")
    f = _by_rule(check_region("fcc-15.231", 500_100, 900.0), "periodic transmissions, total per hour")
    assert f.ok is False


def test_fcc_15_231_e_duration_and_silence():
    """47 CFR 15.231(e) (from memory): each transmission <= 1 s; silent period >= 30 x the
    duration and >= 10 s. 1 s passes, 1.000001 s fails; 0.2 s needs 10 s of silence
    (interval 10.2 s passes, 10.19 s fails); 0.5 s needs 15 s (15.5 s passes, 15.49 fails)."""
    def rule(airtime_us, interval_s, name):
        return _by_rule(check_region("fcc-15.231", airtime_us, interval_s), name)

    assert rule(1_000_000, 60.0, "duration of each transmission").ok is True
    assert rule(1_000_001, 60.0, "duration of each transmission").ok is False
    silent = "silent period between transmissions"
    assert rule(200_000, 10.2, silent).ok is True and rule(200_000, 10.2, silent).limit == 10.0
    assert rule(200_000, 10.19, silent).ok is False
    assert rule(500_000, 15.5, silent).ok is True and rule(500_000, 15.5, silent).limit == 15.0
    assert rule(500_000, 15.49, silent).ok is False


def test_fcc_15_231_activation_rules():
    """47 CFR 15.231(a)(1) manual: stop within 5 s of release; (a)(2) automatic: cease within
    5 s of activation (from memory). 5 s exactly passes, 5.01 s fails."""
    f = check_region("fcc-15.231", 5_000_000, 3600.0)
    assert _by_rule(f, "cease after activation").ok is True
    assert _by_rule(check_region("fcc-15.231", 5_010_000, 3600.0), "cease after activation").ok is False
    m = check_region("fcc-15.231", 5_000_000, 3600.0, activation="manual")
    assert _by_rule(m, "deactivate after release").clause.endswith("15.231(a)(1)")
    # 5 s per hour breaks (a)(3) and the 1 s of (e): no option is met
    assert verdict(f) is False


def test_region_errors():
    with pytest.raises(ValueRangeError, match="did you mean 'cept-433'"):
        check_region("cept433", 1000, 10.0)
    with pytest.raises(ValueRangeError, match="power_mw"):
        check_region("cept-433", 1000, 10.0, -1.0)
    with pytest.raises(ValueRangeError, match="carrier_hz"):
        check_region("fcc-15.231", 1000, 10.0, carrier_hz=0.0)
    assert set(REGIONS) == {"cept-433", "fcc-15.231"}
    assert all("verify" in r.source for r in REGIONS.values())


# --- pure ALOHA (Abramson 1970) -------------------------------------------------------------

def test_pure_aloha_maximum_throughput():
    """S = G exp(-2G) peaks at G = 1/2 with S = 1/(2e) = 0.18394 (N. Abramson, "THE ALOHA
    SYSTEM", AFIPS 1970), found with scipy.optimize.minimize_scalar."""
    res = minimize_scalar(lambda g: -at.aloha_throughput(g), bounds=(0.0, 5.0), method="bounded")
    assert res.x == pytest.approx(0.5, abs=1e-4)
    assert -res.fun == pytest.approx(1 / (2 * math.e), rel=1e-8)
    assert at.ALOHA_MAX_THROUGHPUT == pytest.approx(0.18394, abs=1e-5)


def test_finite_nodes_throughput_tends_to_one_over_2e():
    """N nodes with frame fraction x = T/I: throughput N x (1-2x)^(N-1) is largest at
    x = 1/(2N) with value (1 - 1/N)^(N-1) / 2, which falls to 1/(2e) as N grows (limit of
    Abramson's model)."""
    prev = 1.0
    for n in (2, 10, 100, 10_000):
        x = np.linspace(0.0, 1.0 / n, 201)  # frame fraction T / I; the peak is at 1/(2N)
        s = max(n * xi * at.aloha_p_success(xi * 1e6, 1.0, n) for xi in x)
        exact = 0.5 * (1 - 1 / n) ** (n - 1)
        assert s == pytest.approx(exact, rel=1e-3)
        assert 1 / (2 * math.e) < exact < prev
        prev = exact
    assert prev == pytest.approx(1 / (2 * math.e), rel=1e-4)


def test_aloha_worked_example_and_poisson_limit():
    """By hand: T = 10 ms, I = 1 s, 11 nodes: (1 - 0.02)^10 = 0.8170728. Light load, many
    nodes: (1 - 2T/I)^(N-1) -> exp(-2 (N-1) T / I) (Abramson 1970)."""
    assert at.aloha_p_success(10_000, 1.0, 11) == pytest.approx(0.98 ** 10)
    assert 0.98 ** 10 == pytest.approx(0.8170728, abs=1e-7)
    c = at.collisions(10_000, 1, 0.0, 1.0, 11)
    assert c.p_frame_ok == pytest.approx(0.98 ** 10) and c.p_report_ok == pytest.approx(0.98 ** 10)
    c = at.collisions(1000, 1, 0.0, 100.0, 500)
    assert c.p_frame_ok == pytest.approx(c.p_frame_ok_poisson, rel=1e-4)
    assert c.offered_load == pytest.approx(500 * 1e-3 / 100)
    assert at.collisions(1000, 3, 5000.0, 10.0, 1).p_report_ok == 1.0


def test_poisson_figure_uses_the_other_nodes_load():
    """Exact small case, by hand: N = 2 nodes, R = 1, T = 1 ms, I = 1 s. Total offered load
    G = N R T / I = 0.002 (throughput S = G exp(-2G), Abramson 1970); the one frame meets
    only the other node's load G' = (N-1) R T / I = 0.001, so the Poisson figure is
    exp(-2G') = exp(-0.002) = 0.998002 against the exact 1 - 2T/I = 0.998. With R = 2 copies
    and N = 3 at I = 0.1 s: G = 0.06, G' = 0.04, Poisson exp(-0.08)."""
    c = at.collisions(1000.0, 1, 0.0, 1.0, 2)
    assert c.offered_load == pytest.approx(0.002) and c.others_load == pytest.approx(0.001)
    assert c.p_frame_ok_poisson == pytest.approx(math.exp(-0.002), rel=1e-12)
    assert c.p_frame_ok == pytest.approx(0.998)
    assert c.throughput == pytest.approx(0.002 * math.exp(-0.004))
    c = at.collisions(1000.0, 2, 9000.0, 0.1, 3)
    assert c.offered_load == pytest.approx(0.06) and c.others_load == pytest.approx(0.04)
    assert c.p_frame_ok_poisson == pytest.approx(math.exp(-0.08), rel=1e-12)
    one = at.collisions(1000.0, 1, 0.0, 1.0, 1)
    assert one.others_load == 0.0 and one.p_frame_ok_poisson == 1.0 == one.p_frame_ok


def test_two_copies_two_nodes_by_hand():
    """By hand: R = 2 copies T = 1 ms apart by S = 10 ms, I = 100 ms, one other node. Its
    offset within T of 0 hits both copies (width 2T), within T of +-S one copy each. So
    P(report ok) = 1 - 2T/I = 0.98, P(copy ok) = 1 - 4T/I = 0.96, expected deliveries
    2 x 0.96 = 1.92; independent copies would give 1 - 0.04^2 = 0.9984 (arithmetic)."""
    c = at.collisions(1000.0, 2, 9000.0, 0.1, 2)
    assert c.p_report_ok == pytest.approx(0.98)
    assert c.p_frame_ok == pytest.approx(0.96)
    assert c.expected_deliveries == pytest.approx(1.92)
    assert c.p_report_ok_independent == pytest.approx(0.9984)


def _monte_carlo(frame_us, repeats, gap_us, interval_us, nodes, rng, trials):
    """(P(report ok), mean copies ok) with uniform random burst phases (pure ALOHA model)."""
    phase = rng.uniform(0.0, interval_us, (trials, nodes - 1))
    spacing = frame_us + gap_us
    hit = np.zeros((trials, repeats), bool)
    for k in range(repeats):
        for m in range(repeats):
            x = (phase + (m - k) * spacing) % interval_us
            hit[:, k] |= ((x < frame_us) | (x > interval_us - frame_us)).any(axis=1)
    return float((~hit).any(axis=1).mean()), float((~hit).sum(axis=1).mean())


@pytest.mark.parametrize("frame_us,repeats,gap_us,interval_s,nodes", [
    (2000, 1, 0, 0.5, 5),       # plain pure ALOHA
    (2000, 3, 8000, 0.2, 8),    # gap >= T: separate vulnerable windows
    (2000, 3, 500, 0.1, 6),     # gap < T: windows merge
    (1000, 4, 0, 0.05, 5),      # back to back
    (3000, 5, 1000, 0.2, 10),   # long burst, heavy load
    (1000, 3, 30_000, 0.2, 4),  # burst spans a large part of the interval (wraps)
])
def test_collisions_against_monte_carlo(frame_us, repeats, gap_us, interval_s, nodes):
    """Exact prefix/suffix formula against a Monte Carlo run of the same model (numpy
    Generator, seed 5, 100k trials, 5 sigma); the independent-copies figure is optimistic."""
    c = at.collisions(frame_us, repeats, gap_us, interval_s, nodes)
    trials = 100_000
    p_mc, n_mc = _monte_carlo(frame_us, repeats, gap_us, interval_s * 1e6, nodes,
                              np.random.default_rng(5), trials)
    assert abs(c.p_report_ok - p_mc) < 5 * math.sqrt(p_mc * (1 - p_mc) / trials) + 1e-9
    assert c.expected_deliveries == pytest.approx(n_mc, abs=5 * repeats / math.sqrt(trials))
    assert c.p_report_ok_independent >= c.p_report_ok - 1e-12


def test_collisions_reject_bad_input():
    with pytest.raises(ValueRangeError, match="nodes"):
        at.collisions(1000, 1, 0, 1.0, 0)
    with pytest.raises(ValueRangeError, match="interval_s must be longer"):
        at.collisions(1000, 3, 1000, 0.004, 2)


# --- energy ----------------------------------------------------------------------------------

def test_energy_worked_examples():
    """E = V I t, Q = I t (arithmetic, no source). hive_scale: 84 ms of marks x 12 mA x 4.8 V
    = 4838.4 µJ; 96 transmissions a day at 900 s -> 0.4644864 J and 84e-3 x 12 x 96 / 3600 =
    0.02688 mAh a day (1.12 µA); 2000 mAh / 0.02688 = 74404.76 days of transmitting alone.
    20 ms x 25 mA x 3 V = 1.5 mJ. 12 mA at 4.8 V with the carrier on: common practice, no
    source."""
    e = at.energy(84_000, 900.0, at.TYPICAL_TX_CURRENT_MA, at.TYPICAL_SUPPLY_V, battery_mah=2000)
    assert e.energy_per_tx_uj == pytest.approx(4838.4)
    assert e.energy_per_day_j == pytest.approx(0.4644864)
    assert e.charge_per_day_mah == pytest.approx(0.02688)
    assert e.mean_current_ua == pytest.approx(1.12)
    assert e.battery_life_days == pytest.approx(2000 / 0.02688)
    assert at.energy(20_000, 60.0, 25.0, 3.0).energy_per_tx_uj == pytest.approx(1500.0)
    assert at.energy(20_000, 60.0, 25.0, 3.0).battery_life_days is None
    assert {"sleep current", "self-discharge"} <= set(e.ignores)
    with pytest.raises(ValueRangeError, match="tx_current_ma"):
        at.energy(20_000, 60.0, 0.0, 3.0)


# --- command line ----------------------------------------------------------------------------

def _run(capsys, *argv):
    code = main(list(argv))
    cap = capsys.readouterr()
    assert "Traceback" not in cap.err
    return code, cap.out, cap.err


def test_cli_airtime_json(capsys):
    """JSON keys, the regulatory caution and cited clauses (hive_scale, worked above)."""
    code, out, _ = _run(capsys, "airtime", HIVE, "--interval-s", "900", "--nodes", "20",
                        "--battery-mah", "2000", "--power-mw", "10", "--json")
    assert code == 0
    d = json.loads(out)
    assert d["airtime_us"] == pytest.approx(184_000)
    assert d["duty_cycle_pct"] == pytest.approx(0.736 / 36)
    assert d["cautions"][0] == REGULATORY_CAUTION
    assert {r["region"] for r in d["regions"]} == {"cept-433", "fcc-15.231"}
    clauses = {f["clause"] for r in d["regions"] for f in r["findings"]}
    assert "47 CFR 15.231(a)(3)" in clauses and any("70-03 Annex 1" in c for c in clauses)
    cept = next(r for r in d["regions"] if r["region"] == "cept-433")
    assert cept["verdict"] is True
    assert d["collisions"]["n_nodes"] == 20 and 0 < d["collisions"]["p_report_ok"] < 1
    assert d["energy"]["energy_per_tx_uj"] == pytest.approx(4838.4)
    assert d["energy"]["battery_life_days"] == pytest.approx(2000 / 0.02688)
    assert d["bandwidth_hz"] > 0 and d["rf_bandwidth_hz"] == pytest.approx(2 * d["bandwidth_hz"])


def test_cli_airtime_aloha_rows_agree(capsys):
    """The printed G' is the load the Poisson figure uses: exp(-2 G') with G' = (N-1) R T / I
    (arithmetic on Abramson's model), and G = N R T / I is printed for the throughput row."""
    code, out, _ = _run(capsys, "airtime", HIVE, "--interval-s", "900", "--nodes", "2", "--json")
    c = json.loads(out)["collisions"]
    assert code == 0 and c["others_load"] == pytest.approx(c["offered_load"] / 2)
    assert c["p_frame_ok_poisson"] == pytest.approx(math.exp(-2 * c["others_load"]), rel=1e-12)
    code, out, _ = _run(capsys, "airtime", HIVE, "--interval-s", "900", "--nodes", "2")
    rows = {line.split("│")[1].strip(): line.split("│")[2].strip()
            for line in out.splitlines() if line.count("│") == 3}
    g_other = float(rows["load of the other nodes: G' = (N-1) R T / I"])
    assert g_other == pytest.approx(c["others_load"], rel=1e-3)
    assert float(rows["P(one frame survives), Poisson exp(-2G')"]) == pytest.approx(
        math.exp(-2 * g_other), abs=2e-6)
    assert float(rows["offered load, all nodes: G = N R T / I"]) == pytest.approx(2 * g_other,
                                                                                  rel=1e-3)


def test_cli_airtime_power_and_carrier(capsys):
    """47 CFR 15.231(b)/(e) (from memory): --power-mw 10 at --carrier-mhz 433.92 meets no
    FCC option (field strength 233,809 µV/m against 10,997 / 4,399); without --power-mw the
    field strength is "not assessed" and the verdict too; a low power met through 15.231(a)
    prints its security/safety condition. The regulatory caution stays."""
    base = ("airtime", HIVE, "--interval-s", "900", "--region", "fcc-15.231")
    code, out, _ = _run(capsys, *base, "--power-mw", "10", "--carrier-mhz", "433.92", "--json")
    fcc = json.loads(out)["regions"][0]
    assert code == 0 and fcc["verdict"] is False and fcc["met_options"] == []
    assert json.loads(out)["cautions"][0] == REGULATORY_CAUTION
    field = [f for f in fcc["findings"] if f["unit"] == "µV/m"]
    assert [round(f["limit"]) for f in field] == [10_997, 4_399]
    assert all(f["value"] == pytest.approx(233_809.04) and f["ok"] is False for f in field)
    code, out, _ = _run(capsys, *base, "--power-mw", "10", "--json")  # no carrier given
    assert json.loads(out)["regions"][0]["verdict"] is False  # above 12,500 µV/m anywhere
    code, out, _ = _run(capsys, *base, "--power-mw", "10")
    assert "no option met" in out
    code, out, _ = _run(capsys, *base, "--carrier-mhz", "433.92", "--json")
    fcc = json.loads(out)["regions"][0]
    assert fcc["verdict"] is None
    assert all(f["ok"] is None for f in fcc["findings"] if f["unit"] == "µV/m")
    code, out, err = _run(capsys, *base, "--carrier-mhz", "433.92")
    flat = " ".join(out.split())
    assert "not fully assessed" in flat and "not assessed" in flat
    assert REGULATORY_CAUTION in " ".join(err.split())  # messages go to stderr
    code, out, _ = _run(capsys, *base, "--carrier-mhz", "433.92", "--power-mw", "0.01")
    flat = " ".join(out.split())
    assert "met by: 15.231(a)" in flat and "only if:" in flat and "security or safety" in flat
    code, _, err = _run(capsys, *base, "--carrier-mhz", "-1")
    assert code == exitcodes.BAD_INPUT and "carrier_hz must be > 0" in err


def test_cli_airtime_table_and_errors(capsys):
    code, out, err = _run(capsys, "airtime", HIVE, "--interval-s", "900", "--region", "fcc-15.231")
    assert code == 0
    flat = " ".join(out.split())
    assert REGULATORY_CAUTION in " ".join(err.split()) and "15.231(e)" in flat and "Abramson" in flat
    code, _, err = _run(capsys, "airtime", HIVE, "--interval-s", "0.1")
    assert code == exitcodes.BAD_INPUT and "interval_s must be longer" in err

"""``ookframe calibrate``: captures made by the pulse-level channel model with known
parameters come back within their 95 % intervals.

Coverage: a 95 % interval holds the true value in 95 % of captures; over 10 independent
seeds at least 8 inside has probability ~0.99 for a correct interval (binomial(10, 0.95):
P(X >= 8) = 0.988), so the check fails rarely by chance but catches an interval that is
too narrow or biased.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from ookframe import load_spec
from ookframe.analysis.calibrate import calibrate
from ookframe.captures import write_capture
from ookframe.channel import ChannelSpec, apply_channel, load_link
from ookframe.cli.main import main
from ookframe.plan import compile_plan
from ookframe.stress.batch import random_batch

EX = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EX / "hive_scale.toml")
TRUE = ChannelSpec(jitter_us=4.0, mark_bias_us=8.0, clock_error_pct=1.5, drift_pct_per_s=0.5,
                   quant_step_us=2.5, idle_noise_us=20000.0, glitch_rate_per_ms=0.01,
                   glitch_width_us=20.0)


def capture(ch: ChannelSpec, n: int, seed: int):
    spec = load_spec(HIVE)
    rng = np.random.default_rng(seed)
    b = random_batch(compile_plan(spec), n, rng)
    return spec, apply_channel(b.train, ch, rng, burst_starts_us=b.starts_us)


def test_one_capture_recovers_every_parameter():
    spec, train = capture(TRUE, 30, 1)
    cal = calibrate(spec, train)
    for name in ("mark_bias_us", "jitter_us", "clock_error_pct", "drift_pct_per_s",
                 "quant_step_us", "idle_noise_mean_us"):
        e = cal.estimate(name)
        assert e is not None and e.n > 0, name
        assert e.contains(getattr(TRUE, name)), (name, e.value, e.ci95)
    assert cal.estimate("jitter_kind").value == "gauss"
    # the pulse-level model biases every mark alike: the preamble's marks (left out of the
    # fits as a receiver's settling time) show the same bias
    assert cal.estimate("settling_mark_bias_us").contains(TRUE.mark_bias_us)
    assert calibrate(spec, train, settle_us=0).estimate("mark_bias_us").contains(
        TRUE.mark_bias_us)
    assert abs(cal.channel.idle_quiet_us - 3000) < 100
    assert cal.estimate("glitch_rate_per_ms").ci95[1] > 0


@pytest.mark.parametrize("kind", ["gauss", "uniform"])
def test_coverage_over_seeds(kind):
    ch = ChannelSpec(jitter_us=5.0, jitter_kind=kind, mark_bias_us=-6.0, clock_error_pct=-0.8)
    inside = {k: 0 for k in ("mark_bias_us", "jitter_us", "clock_error_pct")}
    kinds = []
    for seed in range(10):
        spec, train = capture(ch, 8, 100 + seed)
        cal = calibrate(spec, train, seed=seed)
        kinds.append(cal.estimate("jitter_kind").value)
        for k in inside:
            inside[k] += cal.estimate(k).contains(getattr(ch, k))
    assert all(v >= 8 for v in inside.values()), inside
    assert kinds.count(kind) >= 9


def test_too_few_frames_says_so():
    spec, train = capture(ChannelSpec(jitter_us=3.0), 1, 5)
    cal = calibrate(spec, train)
    assert any("only 3 frame(s)" in w for w in cal.warnings)
    assert "too few frames" in cal.estimate("clock_error_pct").method
    assert any("curvature only" in w for w in cal.warnings)
    assert cal.channel.idle_noise_us == 0  # a quiet receiver: no noise seen, none modelled


def test_cli_round_trip_into_stress(tmp_path, capsys):
    spec, train = capture(TRUE, 12, 7)
    cap = tmp_path / "cap.csv"
    write_capture(cap, train)
    link = tmp_path / "link.toml"
    assert main(["calibrate", HIVE, str(cap), "-o", str(link)]) == 0
    got = load_link(link)
    assert got.estimate("mark_bias_us").contains(8.0)
    assert main(["calibrate", HIVE, str(cap), "-o", str(link)]) == 6  # no --force
    assert main(["stress", HIVE, "--channel", str(link), "--frames", "30", "--workers", "1",
                 "--json"]) == 0
    assert '"ok"' in capsys.readouterr().out


def test_capture_without_frames_is_a_clear_error(tmp_path, capsys):
    cap = tmp_path / "noise.csv"
    write_capture(cap, apply_channel(capture(ChannelSpec(), 1, 0)[1], ChannelSpec(
        dropout_prob=1.0), np.random.default_rng(0)))
    assert main(["calibrate", HIVE, str(cap)]) == 4
    assert "nothing to calibrate" in capsys.readouterr().err


def test_no_glitch_seen_turns_glitches_off(tmp_path, capsys):
    """A capture with no glitches writes glitches off (rate 0, no made-up width), with a
    warning naming why in the file and on stderr; the width is not listed as unknown."""
    spec, train = capture(ChannelSpec(jitter_us=3.0), 6, 2)
    cal = calibrate(spec, train)
    assert cal.channel.glitch_rate_per_ms == 0 and cal.channel.glitch_width_us == 0
    assert "glitch_width_us" not in dict(cal.unknown)
    (warning,) = [w for w in cal.warnings if "glitches are off" in w]
    assert "no glitch seen" in warning and "per ms at 95 %" in warning
    cap = tmp_path / "cap.csv"
    write_capture(cap, train)
    link = tmp_path / "link.toml"
    assert main(["calibrate", HIVE, str(cap), "-o", str(link)]) == 0
    assert "warning: glitches are off" in capsys.readouterr().err
    text = link.read_text()
    assert "# WARNING: glitches are off" in text and "glitch_width_us = 0.0  # model default" \
        in text
    got = load_link(link)
    assert got.channel.glitch_rate_per_ms == 0 and got.warnings == cal.warnings


def test_glitches_without_a_width_are_turned_off():
    """Unmatched toggles counted as glitches but none with both edges (no width): glitches
    are off rather than on with a guessed width; the warning says so, the rate estimate
    stays with a note, and the channel file marks its value as not the measured one."""
    from types import SimpleNamespace

    from ookframe.analysis import calibrate as cal_module
    from ookframe.analysis import link_estimates as est
    from ookframe.channel.linkfile import Estimate, LinkFile, link_to_toml

    out = cal_module._Collect()
    out.add(Estimate("jitter_us", 3.0, (2.9, 3.1), "chi-square", 900, "edges", "us"))
    out.add(est.rate_per_ms("glitch_rate_per_ms", 1, 4000.0, "ms of frames"))
    out.add(est.Blind("glitch_width_us", "one unmatched toggle: no width"))
    channel = cal_module._channel(out, SimpleNamespace(shape=None))
    assert channel.glitch_rate_per_ms == 0 and channel.glitch_width_us == 0
    assert channel.jitter_us == 3.0
    (warning,) = out.warnings
    assert "glitches are off" in warning and "no width could be measured" in warning
    rate = next(e for e in out.estimates if e.name == "glitch_rate_per_ms")
    assert rate.value == 0.25 and "not used" in rate.note
    text = link_to_toml(LinkFile(channel, tuple(out.estimates), tuple(out.unknown),
                                 tuple(out.warnings)))
    assert "glitch_rate_per_ms = 0.0  # not the measured value" in text

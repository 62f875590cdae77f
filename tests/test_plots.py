"""Figures (ookframe.plots) and the ``plot`` command: PNG written, non-trivial, no overwrite."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pytest
from matplotlib.image import imread

from ookframe import plots
from ookframe.cli import exitcodes
from ookframe.cli.main import main
from ookframe.layout import frame_layout
from tests.conftest import example_spec

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EXAMPLES / "hive_scale.toml")
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def _assert_nontrivial_png(data: bytes) -> None:
    """A real PNG (signature, PNG spec section 5.2) of a drawn figure: several distinct
    colours and a good share of non-white pixels."""
    assert data[:8] == PNG_MAGIC
    img = imread(io.BytesIO(data), format="png")
    assert img.shape[0] > 300 and img.shape[1] > 600
    rgb = np.round(img[..., :3] * 255).astype(np.uint8).reshape(-1, 3)
    assert len(np.unique(rgb, axis=0)) > 20
    assert np.mean(rgb.min(axis=1) < 200) > 0.02


def test_section_spans_match_layout_by_hand():
    """hive_scale (Manchester, 250 µs chips; worked in test_analysis_airtime): preamble 32
    bits = 16 ms, sync 16 bits = 8 ms, fields 48 bits = 24 ms, check 16 bits = 8 ms; the
    spans are contiguous, match the layout rows and end at the frame length."""
    spec, values = example_spec("hive_scale.toml")
    spans = plots.section_spans_us(spec, values)
    assert spans == [("preamble", 0.0, 16_000.0), ("sync", 16_000.0, 24_000.0),
                     ("fields", 24_000.0, 48_000.0), ("check", 48_000.0, 56_000.0)]
    lay = frame_layout(spec, values)
    assert [b - a for _, a, b in spans] == [r.duration_us for r in lay.rows]


def test_section_spans_cover_every_example(example):
    """Spans of every shipped example are contiguous from 0 to the frame length (stuffing and
    a pulse-distance stop mark included) and keep the on-air order."""
    spec, values = example
    spans = plots.section_spans_us(spec, values)
    assert spans[0][1] == 0.0
    assert all(a[2] == pytest.approx(b[1]) for a, b in zip(spans, spans[1:], strict=False))
    assert spans[-1][2] == pytest.approx(frame_layout(spec, values).frame_us)
    assert [s[0] for s in spans] == [n for n in ("preamble", "sync", "fields", "check")
                                     if n in {s[0] for s in spans}]


def test_figures_render():
    spec, values = example_spec("gate_sensor.toml")
    _assert_nontrivial_png(plots.figure_png(plots.timing_figure(spec, values)))
    _assert_nontrivial_png(plots.figure_png(plots.psd_figure(spec, np.random.default_rng(0))))


@pytest.mark.parametrize("what", ["timing", "psd"])
def test_cli_plot_writes_png_and_refuses_overwrite(capsys, tmp_path, what):
    out = tmp_path / f"{what}.png"
    assert main(["plot", HIVE, "--what", what, "-o", str(out)]) == 0
    data = out.read_bytes()
    _assert_nontrivial_png(data)
    assert main(["plot", HIVE, "--what", what, "-o", str(out)]) == exitcodes.EXISTS
    assert "--force" in capsys.readouterr().err
    assert out.read_bytes() == data
    assert main(["plot", HIVE, "--what", what, "-o", str(out), "--force"]) == 0


def test_cli_plot_bad_input(capsys, tmp_path):
    assert main(["plot", HIVE, "--what", "timing", "-o", str(tmp_path / "x.jpg")]) \
        == exitcodes.BAD_INPUT
    assert main(["plot", HIVE, "--what", "timing", "--set", "hive=999",
                 "-o", str(tmp_path / "x.png")]) == exitcodes.BAD_INPUT
    err = capsys.readouterr().err
    assert ".png" in err and "hive" in err and "Traceback" not in err
    assert not (tmp_path / "x.png").exists()


# ------------------------------------------------------------- sampled capture figure
def _lines(ax) -> dict[str, object]:
    return {line.get_label(): line for line in ax.get_lines()}


@pytest.mark.parametrize("kind", ["envelope", "iq"])
def test_capture_figure_draws_the_trace(tmp_path, kind):
    """On a physical-model WAV the capture figure has two axes: the samples (|I + jQ| for
    I/Q), the envelope, both thresholds and the tracked levels drawn with the trace's own
    numbers against ms, and the sliced pulses as a step line whose edges are the pulses'."""
    from ookframe.captures.sampled import sampled_info
    from ookframe.frontend import trace_capture
    from tests.test_frontend_trace import physical_wav

    path, spec = physical_wav(tmp_path / "c.wav", kind)
    info = sampled_info(path, channel="iq" if kind == "iq" else None)
    tr, _ = trace_capture(info, start_s=0.02, span_s=0.03)
    fig = plots.capture_figure(tr, "gate sensor at -85 dBm")
    top, bottom = fig.get_axes()
    lines = _lines(top)
    sample_name = "|I + jQ|" if kind == "iq" else "samples"
    assert set(lines) == {sample_name, "envelope", "threshold high", "threshold low",
                          "carrier", "floor"}
    np.testing.assert_array_equal(lines[sample_name].get_ydata(), tr.samples)
    np.testing.assert_allclose(lines[sample_name].get_xdata(), tr.sample_time_s * 1e3)
    for name, y in (("envelope", tr.envelope), ("threshold high", tr.high),
                    ("threshold low", tr.low), ("carrier", tr.carrier), ("floor", tr.floor)):
        np.testing.assert_array_equal(lines[name].get_ydata(), y)
        np.testing.assert_allclose(lines[name].get_xdata(), tr.envelope_time_s * 1e3)
    step = _lines(bottom)["sliced pulses"]
    edges_ms = (tr.pulses_start_us + np.concatenate(([0.0], np.cumsum(tr.pulses.durations_us)))
                ) / 1e3
    np.testing.assert_allclose(step.get_xdata(), edges_ms)
    np.testing.assert_array_equal(step.get_ydata()[:-1], tr.pulses.levels)
    assert bottom.get_xlim() == pytest.approx((20.0, 50.0))
    _assert_nontrivial_png(plots.figure_png(fig))


def test_capture_figure_fixed_thresholds_and_squelch(tmp_path):
    """Fixed thresholds track no levels: no carrier or floor line, the thresholds drawn at
    their values; squelched samples (thresholds at +inf) are gaps (NaN) in the lines."""
    from ookframe.captures.sampled import sampled_info
    from ookframe.frontend import FrontEndConfig, trace_capture
    from tests.test_frontend_trace import physical_wav

    path, _ = physical_wav(tmp_path / "c.wav")
    info = sampled_info(path)
    tr, _ = trace_capture(info, FrontEndConfig(threshold_high=0.4, threshold_low=0.3),
                          span_s=0.02)
    lines = _lines(plots.capture_figure(tr, "fixed").get_axes()[0])
    assert "carrier" not in lines and "floor" not in lines
    assert set(lines["threshold high"].get_ydata()) == {0.4}
    tr, _ = trace_capture(info, FrontEndConfig(min_contrast=0.2), span_s=0.02)
    lines = _lines(plots.capture_figure(tr, "squelch").get_axes()[0])
    assert np.isinf(tr.high).any() and np.isfinite(tr.high).any()
    drawn = lines["threshold high"].get_ydata()
    assert np.array_equal(np.isnan(drawn), np.isinf(tr.high))


def test_long_lines_keep_their_extremes():
    """A line longer than MAX_LINE_POINTS is drawn as each bucket's minimum and maximum:
    at most MAX_LINE_POINTS points, the same overall minimum and maximum (a spike at the
    very end included), times from the line's own."""
    rng = np.random.default_rng(5)
    y = rng.standard_normal(10 * plots.MAX_LINE_POINTS + 17)
    y[-1] = 9.0
    t = np.arange(y.size) * 1e-6
    dt, dy = plots._drawn(t, y)
    assert dy.size <= plots.MAX_LINE_POINTS and dy.size == dt.size
    assert dy.max() == 9.0 and dy.min() == y.min()
    assert np.all(np.isin(dt, t)) and np.all(np.diff(dt) >= 0)


def test_cli_plot_capture(capsys, tmp_path):
    """plot --what capture writes the PNG of a time window (stderr names it and the front
    end's thresholds), refuses to overwrite without --force, and refuses a window outside
    the capture, a missing --capture and capture options with another --what, naming the
    problem, without a traceback or a file."""
    from tests.test_frontend_trace import physical_wav

    path, _ = physical_wav(tmp_path / "c.wav")
    out = tmp_path / "cap.png"
    args = ["plot", "--what", "capture", "--capture", str(path), "-o", str(out),
            "--start-ms", "10", "--span-ms", "40"]
    assert main(args) == 0
    err = capsys.readouterr().err
    assert "10 to 50 ms" in err and "thresholds" in err
    _assert_nontrivial_png(out.read_bytes())
    assert main(args) == exitcodes.EXISTS
    gate = str(EXAMPLES / "gate_sensor.toml")
    assert main(["plot", gate, *args[1:], "--force", "--decimate", "2"]) == 0
    bad = tmp_path / "bad.png"
    for argv, text in (
            (["plot", "--what", "capture", "--capture", str(path), "--start-ms", "9999"],
             "outside the capture"),
            (["plot", "--what", "capture"], "--capture"),
            ([*args[:5], "--set", "hive=3"], "not for --what capture"),
            (["plot", HIVE, "--what", "timing", "--capture", str(path)], "only for --what "
             "capture"),
            (["plot", "--what", "timing"], "needs a SPEC")):
        assert main([*argv, "-o", str(bad)]) == exitcodes.BAD_INPUT
        err = capsys.readouterr().err
        assert text in err and "Traceback" not in err
        assert not bad.exists()

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

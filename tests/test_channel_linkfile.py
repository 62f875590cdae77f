"""Channel files (``ookframe.channel.linkfile``) and the ``--channel FILE`` option of stress,
sweep, margin, vectors and noise."""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest

from ookframe.channel import (
    ChannelSpec,
    Estimate,
    LinkFile,
    link_from_text,
    link_to_toml,
    load_link,
)
from ookframe.cli.main import main
from ookframe.errors import ChannelFileError

EX = Path(__file__).resolve().parent.parent / "examples"
HIVE = str(EX / "hive_scale.toml")


def _link() -> LinkFile:
    ch = ChannelSpec(jitter_us=3.25, jitter_kind="uniform", mark_bias_us=-4.5,
                     clock_error_pct=0.75, idle_noise_us=5000.0, idle_noise_mean_us=80.0)
    est = (Estimate("jitter_us", 3.25, (3.0, 3.5), "chi-square", 812, "edges", "us",
                    tests=(("p_gauss", 0.001), ("p_uniform", 0.4))),
           Estimate("jitter_kind", "uniform", None, "Anderson-Darling", 812, "edges"),
           Estimate("mark_bias_us", -4.5, (-4.75, -4.25), "t-interval", 400, "marks", "us",
                    note='a "quoted" note\nover two lines'))
    return LinkFile(ch, est, unknown=(("quant_step_us", "no lattice found"),),
                    warnings=("only 12 frames",), source=(("capture", "bench.csv"),
                                                          ("frames", 12)))


def test_written_file_reads_back_equal_and_is_plain_toml():
    """The writer's text is TOML (Python's tomllib, 3.11) and loads back to the same file."""
    link = _link()
    text = link_to_toml(link, header=("calibrated from bench.csv", ""))
    assert text.startswith("# calibrated from bench.csv\n#\n")
    doc = tomllib.loads(text)
    assert doc["channel"]["jitter_us"] == 3.25 and doc["estimates"]["jitter_us"]["n"] == 812
    back = link_from_text(text)
    assert back == link
    assert back.estimate("mark_bias_us").contains(-4.6)
    assert not back.estimate("mark_bias_us").contains(-4.0)
    assert back.estimate("jitter_kind").ci95 is None


def test_channel_table_alone_is_enough_and_missing_keys_are_off():
    link = link_from_text("[channel]\njitter_us = 6\n")
    assert link.channel == ChannelSpec(jitter_us=6.0)
    assert link.estimates == () and link.unknown == ()


@pytest.mark.parametrize(("text", "key", "words"), [
    ("[channel]\njiter_us = 3\n", "channel.jiter_us", "did you mean 'jitter_us'"),
    ("[channel]\njitter_us = 'three'\n", "channel.jitter_us", "expected a number"),
    ("[channel]\njitter_us = true\n", "channel.jitter_us", "expected a number"),
    ("[channel]\njitter_us = nan\n", "channel.jitter_us", "finite"),
    ("[channel]\njitter_us = -1\n", "channel.jitter_us", ">= 0"),
    ("[channel]\ndropout_prob = 2\n", "channel.dropout_prob", "[0, 1]"),
    ("[channel]\njitter_kind = 'laplace'\n", "channel.jitter_kind", "'gauss' or 'uniform'"),
    ("[channel]\nglitch_rate_per_ms = 1\n", "channel.glitch_width_us", "> 0"),
    ("channel = 3\n", "channel", "expected a table"),
    ("[link]\nversion = 2\n[channel]\n", "link.version", "reads version 1"),
    ("[link]\nformat = 'x'\n[channel]\n", "link.format", "ookframe-channel"),
    ("[chanel]\n", "chanel", "did you mean 'channel'"),
    ("[channel]\n[estimates.jitter_us]\nvalue = 1\nmethod = 'x'\n", "estimates.jitter_us",
     "missing 'n'"),
    ("[channel]\n[estimates.jitter_us]\nvalue = 1\nmethod = 'x'\nn = -1\n",
     "estimates.jitter_us.n", "count"),
    ("[channel]\n[estimates.jitter_us]\nvalue = 1\nmethod = 'x'\nn = 3\nci95 = [2, 1]\n",
     "estimates.jitter_us.ci95", "above the high end"),
    ("[channel]\n[unknown]\nquant_step_us = 1\n", "unknown.quant_step_us", "a string"),
])
def test_bad_files_name_the_key(text, key, words):
    with pytest.raises(ChannelFileError) as e:
        link_from_text(text, "link.toml")
    msg = str(e.value)
    assert msg.startswith(f"link.toml: {key}"), msg
    assert words in msg


def test_no_channel_table_and_not_toml(tmp_path):
    with pytest.raises(ChannelFileError, match=r"no \[channel\] table"):
        link_from_text("[link]\nversion = 1\n", "x.toml")
    p = tmp_path / "x.toml"
    p.write_text("[channel\n")
    with pytest.raises(ChannelFileError, match="not valid TOML"):
        load_link(p)
    with pytest.raises(ChannelFileError, match="cannot read"):
        load_link(tmp_path / "missing.toml")


# --- the CLI ---------------------------------------------------------------------------------


def _file(tmp_path, text: str) -> str:
    p = tmp_path / "link.toml"
    p.write_text(text)
    return str(p)


def _json(capsys, *argv: str) -> dict:
    assert main(list(argv)) == 0
    got = capsys.readouterr()
    d = json.loads(got.out)
    d["_stderr"] = got.err
    return d


def test_stress_takes_the_file_and_flags_override_it(capsys, tmp_path):
    f = _file(tmp_path, "[channel]\njitter_us = 7.5\nmark_bias_us = 3\n")
    d = _json(capsys, "stress", HIVE, "--channel", f, "--frames", "20", "--workers", "1",
              "--json")
    assert d["channel"]["jitter_us"] == 7.5 and d["channel"]["mark_bias_us"] == 3.0
    assert d["channel"]["quant_step_us"] == 0.0  # not in the file: off, not the preset's
    d = _json(capsys, "stress", HIVE, "--channel", f, "--jitter-us", "2", "--frames", "20",
              "--workers", "1", "--json")
    assert d["channel"]["jitter_us"] == 2.0 and d["channel"]["mark_bias_us"] == 3.0
    assert main(["stress", HIVE, "--channel", f, "--frames", "20", "--workers", "1",
                 "--progress", "off"]) == 0
    assert "link.toml" in capsys.readouterr().out


def test_file_and_preset_together_or_a_bad_file_are_one_line_errors(capsys, tmp_path):
    f = _file(tmp_path, "[channel]\njitter_us = 'x'\n")
    assert main(["stress", HIVE, "--channel", f, "--frames", "5"]) == 4
    e = capsys.readouterr().err
    assert "channel.jitter_us" in e and "Traceback" not in e
    ok = _file(tmp_path, "[channel]\n")
    assert main(["stress", HIVE, "--channel", ok, "--preset", "ideal", "--frames", "5"]) == 4
    assert "not both" in capsys.readouterr().err


def test_every_channel_command_takes_the_file(capsys, tmp_path):
    f = _file(tmp_path, "[channel]\njitter_us = 5\nidle_noise_mean_us = 250\n"
              "[unknown]\nquant_step_us = 'no lattice'\n")
    d = _json(capsys, "sweep", HIVE, "--channel", f, "--vary", "mark_bias_us=0,4",
              "--frames", "10", "--workers", "1", "--json")
    assert d["parameter"] == "mark_bias_us"
    assert "does not measure quant_step_us" in d["_stderr"]
    d = _json(capsys, "margin", HIVE, "--channel", f, "--target-per", "0.2", "--frames", "20",
              "--impairments", "mark_bias_us", "--workers", "1", "--json")
    assert d["channel"]["jitter_us"] == 5.0
    d = _json(capsys, "vectors", HIVE, "--channel", f, "--count", "2")
    assert d["channel"]["jitter_us"] == 5.0
    d = _json(capsys, "noise", HIVE, "--channel", f, "--hours", "0.0005", "--workers", "1",
              "--json")
    assert d["mean_us"] == 250.0

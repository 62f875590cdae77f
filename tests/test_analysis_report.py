"""Tests for ookframe.analysis.report (the design report behind ``ookframe check``)."""

from __future__ import annotations

import json

import pytest

from ookframe.analysis.report import design_report
from ookframe.analysis.syncword import spec_sync_quality
from ookframe.checks.crc_strength import crc_strength
from ookframe.checks.strength import check_strength, covered_bits
from ookframe.cli.output import REGULATORY_CAUTION
from ookframe.layout import frame_layout
from tests.conftest import example_spec

KEYS = {"airtime_us", "line_code", "sync", "check", "bandwidth_hz", "cautions", "warnings"}


def test_report_keys_and_values(example):
    """Every example: the keys issue 5 asks for, JSON-serialisable, the regulatory caution
    first, and each figure equal to its engine's output."""
    spec, defaults = example
    r = design_report(spec, with_bandwidth=False)
    assert KEYS <= set(r)
    json.dumps(r)
    assert r["cautions"][0] == REGULATORY_CAUTION
    lc = r["line_code"]
    assert {"efficiency", "max_run_units", "mark_fraction", "min_transitions_per_bit"} <= set(lc)
    assert lc["mark_fraction"][0] <= lc["mark_fraction"][1]
    assert {"max_sidelobe", "min_distance_to_preamble", "false_syncs_per_hour_on_noise"} \
        <= set(r["sync"])
    assert r["sync"]["max_sidelobe"] == spec_sync_quality(spec).max_sidelobe
    c = r["check"]
    assert {"kind", "data_bits", "hd", "undetected_per_frame_at_ber", "ber"} <= set(c)
    assert c["data_bits"] == covered_bits(spec)
    assert c["hd"] == check_strength(spec.check, covered_bits(spec)).hd
    # worst-case airtime is at least the layout's airtime for the default values
    assert r["airtime_us"] >= frame_layout(spec, defaults).airtime_us - 1e-9


def test_fixed_length_airtime_equals_layout():
    """Manchester frame of fixed length: the bound equals the layout's airtime
    (ookframe.layout, computed from the encoded frame)."""
    spec, defaults = example_spec("hive_scale.toml")
    r = design_report(spec, with_bandwidth=False)
    assert r["airtime_us"] == pytest.approx(frame_layout(spec, defaults).airtime_us)


def test_weak_crc_gets_a_suggestion():
    """tank_level with CRC-16/EN-13757 (poly 0x3D65, period 151 bits): at its 160 covered
    bits a weight-2 error goes undetected (HD 2); the report suggests a stronger 16-bit
    catalogue CRC and cautions about it. (The shipped example uses CRC-16/IBM-3740 for
    this reason.)"""
    import dataclasses

    from ookframe import Crc

    spec, _ = example_spec("tank_level.toml")
    weak = dataclasses.replace(spec.check, crc=Crc.named("CRC-16/EN-13757").params)
    spec = dataclasses.replace(spec, check=weak)
    assert crc_strength(16, 0x3D65, 8, reach=False).period_bits == 151
    r = design_report(spec, with_bandwidth=False)
    assert r["check"]["hd"] == 2
    assert r["check"]["suggestion"] is not None
    assert r["check"]["alternatives"][0]["hd"] > 2
    assert any("stronger check" in c for c in r["cautions"])
    assert "P(undetected)" in r["check"]["suggestion"]
    # at BER 0 nothing goes undetected by any check: the suggestion compares HD only
    r0 = design_report(spec, with_bandwidth=False, ber=0.0)
    assert "has HD" in r0["check"]["suggestion"]
    assert "P(undetected)" not in r0["check"]["suggestion"]


def test_ber_is_stated_and_used():
    """A higher BER gives a higher undetected probability (leading term ~ p^hd)."""
    spec, _ = example_spec("hive_scale.toml")
    lo = design_report(spec, ber=1e-5, with_bandwidth=False)["check"]
    hi = design_report(spec, ber=1e-3, with_bandwidth=False)["check"]
    assert (lo["ber"], hi["ber"]) == (1e-5, 1e-3)
    assert hi["undetected_per_frame_at_ber"] > 1e6 * lo["undetected_per_frame_at_ber"]

"""README's worked example (bits -> chips -> pulses) against the encoder, so the docs cannot
drift: every number is read out of README.md and recomputed.

Outside references: the CRC value against crccheck 1.3.1 (``crccheck.crc.CrcKermit``);
the PN9 mask bytes FF E1 1D 9A against TI design note DN509 "Data whitening and random TX
mode" (the same bytes tests/test_whitening.py checks); the pulse-distance chips against the
rule README states (mark 1 unit, space 1 or 3 units, one stop mark), re-implemented here.
"""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import numpy as np
import pytest
from crccheck.crc import CrcKermit

import ookframe
from ookframe import frame
from ookframe.bits import pack_bits

README = Path(__file__).resolve().parent.parent / "README.md"


def _section() -> str:
    text = README.read_text(encoding="utf-8")
    start = text.index("### Worked example")
    end = text.index("\n## ", start)
    return text[start:end]


def _blocks(section: str, lang: str) -> list[str]:
    return re.findall(rf"```{lang}\n(.*?)```", section, flags=re.S)


def _bits(text: str) -> np.ndarray:
    return np.array([int(c) for c in re.sub(r"\s", "", text)], np.uint8)


def _hex_bytes(text: str) -> bytes:
    return bytes.fromhex(text.replace(" ", ""))


@pytest.fixture(scope="module")
def example() -> dict:
    """The example's spec, values and every number the README states."""
    sec = _section()
    spec = ookframe.spec_from_dict(tomllib.loads(_blocks(sec, "toml")[0]))
    rows = re.findall(r"^\s*\| `(\w+)` \| (\S+) \| (-?\d+)[^|]*\| `([01 ]+)` \|$", sec, re.M)
    values = {n: (float(v) if "." in v else int(v)) for n, v, _, _ in rows}
    white = dict(re.findall(r"^\s*(plain body|PN9 mask|whitened body)\s+([01 ]+)$",
                            _blocks(sec, "text")[0], re.M))
    chips = re.findall(r"^\s*(\w[\w ]*?)\s+([01 ]*?)\s*-> ([01 ]+)$", _blocks(sec, "text")[1],
                       re.M)
    pulses = re.findall(r"([+-])(\d+)", _blocks(sec, "text")[2])
    return {
        "spec": spec, "values": values, "rows": rows, "white": white, "chips": chips,
        "pulses": pulses,
        "check_input": _hex_bytes(re.search(r"check input `([0-9A-F ]+)`", sec)[1]),
        "crc": int(re.search(r"CRC-16/KERMIT of these 4 bytes: `0x([0-9A-F]+)`", sec)[1], 16),
        "check_bytes": _hex_bytes(re.search(r"check bytes `([0-9A-F ]+)`", sec)[1]),
        "check_bits": _bits(re.search(r"check\s+bits `([01 ]+)`", sec)[1]),
        "mask_hex": re.search(r"the mask bytes\s+`([0-9A-F ]+)`", sec)[1].split(),
        "n_pulses": int(re.search(r"(\d+) pulses", sec)[1]),
        "total_us": int(re.search(r"pulses,\s+([\d,]+) µs", sec)[1].replace(",", "")),
        "n_chips": int(re.search(r"(\d+) chips of", sec)[1]),
        "payload_hex": re.search(r"`payload_hex = ([0-9a-f]+)`", sec)[1],
    }


def test_fields_raw_values_and_bits(example):
    """Each field's raw value and on-air bits as the table states (two's complement of
    -275 in 16 bits is 0xFEED, little-endian bytes ED FE: arithmetic)."""
    spec, values = example["spec"], example["values"]
    assert len(example["rows"]) == len(spec.fields) == 4
    raw = frame.raw_values(spec, values)
    fb = frame.field_bits(spec, raw)
    pos = 0
    for (name, _, raw_text, bits_text), f in zip(example["rows"], spec.fields, strict=True):
        assert name == f.name
        assert raw[name] == int(raw_text)
        assert fb[pos:pos + f.width_bits].tolist() == _bits(bits_text).tolist()
        pos += f.width_bits
    assert raw["air_temp_c"] & 0xFFFF == 0xFEED


def test_check_input_value_and_bytes(example):
    """Check input = field bits packed MSB first, zero-padded; the CRC equals crccheck
    1.3.1's CrcKermit of those bytes and ookframe's; the bytes go low byte first (the frame
    is little-endian and the spec gives no [check] byte_order)."""
    spec, values = example["spec"], example["values"]
    fb = frame.field_bits(spec, frame.raw_values(spec, values))
    assert pack_bits(fb) == example["check_input"]
    assert CrcKermit.calc(example["check_input"]) == example["crc"]
    assert ookframe.Crc.named("CRC-16/KERMIT").compute(example["check_input"]) == example["crc"]
    assert example["check_bytes"] == example["crc"].to_bytes(2, "little")
    assert np.unpackbits(np.frombuffer(example["check_bytes"], np.uint8)).tolist() == \
        example["check_bits"].tolist() == frame.check_bits(spec, fb).tolist()


def test_whitening_lines(example):
    """Plain body, PN9 mask and whitened body as printed; the mask's first bytes are the
    published PN9 bytes FF E1 1D 9A (TI DN509) and the hex README gives."""
    spec, values = example["spec"], example["values"]
    fb = frame.field_bits(spec, frame.raw_values(spec, values))
    plain = np.concatenate((fb, frame.check_bits(spec, fb)))
    white = {k: _bits(v) for k, v in example["white"].items()}
    assert white["plain body"].tolist() == plain.tolist()
    mask = frame.whitening_mask(spec, fb.size, plain.size - fb.size)
    assert white["PN9 mask"].tolist() == mask.tolist()
    assert np.packbits(mask[:32]).tobytes() == bytes([0xFF, 0xE1, 0x1D, 0x9A])
    packed_hex = [f"{b:02X}" for b in np.packbits(mask).tolist()]
    assert example["mask_hex"][:-1] == packed_hex[:-1]
    assert packed_hex[-1].startswith(example["mask_hex"][-1])
    assert white["whitened body"].tolist() == (plain ^ mask).tolist() == \
        frame.body_bits(spec, values).tolist()


def test_chips_follow_the_stated_rule_and_the_encoder(example):
    """Each line's chips are its bits through README's rule (0 -> 10, 1 -> 1000, then one
    stop mark 1); all lines together are frame_bits and frame_chips."""
    spec, values = example["spec"], example["values"]
    lines = example["chips"]
    assert lines[-1][0] == "stop mark" and lines[-1][2].strip() == "1"
    for _, bits_text, chips_text in lines[:-1]:
        rule = " ".join("1000" if b else "10" for b in _bits(bits_text).tolist())
        assert chips_text.strip() == rule
    bits = np.concatenate([_bits(b) for _, b, _ in lines[:-1]])
    assert bits.tolist() == frame.frame_bits(spec, values).tolist()
    chips = _bits("".join(c for _, _, c in lines))
    assert chips.tolist() == frame.frame_chips(spec, values).tolist()
    assert chips.size == example["n_chips"]


def test_pulses_equal_the_encoder(example):
    """The printed pulse list is ookframe.encode's train, pulse for pulse, with the count and
    total duration the text states."""
    spec, values = example["spec"], example["values"]
    train = ookframe.encode(spec, values)
    levels = [1 if s == "+" else 0 for s, _ in example["pulses"]]
    durations = [float(d) for _, d in example["pulses"]]
    assert levels == train.levels.tolist()
    assert durations == train.durations_us.tolist()
    assert len(levels) == example["n_pulses"]
    assert train.total_us == example["total_us"]


def test_decoder_reads_the_example(example):
    """The reference decoder gives the values, check passing and the stated payload_hex."""
    spec, values = example["spec"], example["values"]
    frames = ookframe.decode_frames(spec, ookframe.encode(spec, values))
    assert len(frames) == 1
    assert frames[0].crc_ok and frames[0].payload_hex == example["payload_hex"]
    assert frame.values_equal(spec, values, frames[0].fields)

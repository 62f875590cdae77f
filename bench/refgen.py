"""An independent transmitter and the ideal hard-decision receiver, for the benchmarks.

Nothing here calls ookframe's encoder, line codes, checks or whitening: the frame is built
from the spec's data (the ``FrameSpec`` dataclasses) following README's spec reference and
the conventions ookframe states for each line code, so that a bench comparing the decoder
with this model tests the decoder and not a bug shared with the encoder.

Conventions followed (README "Spec reference" and the line-code descriptions):

- frame bits: preamble ``pattern`` MSB first, ``count`` times; sync ``value`` MSB first;
  fields in order; the check; then whitening over its sections; NRZ bit stuffing after the
  sync word; then the line code over the whole bit stream.
- an integer field of a whole number (> 1) of bytes is split into bytes in ``byte_order``,
  each byte sent in ``bit_order``; any other width is one bit string, MSB first, reversed
  for ``bit_order = "lsb"``; bytes fields are their bytes in order, each in ``bit_order``.
- the check is computed over its covered sections (sync bits, fields bits, un-whitened),
  packed MSB first into bytes with the last partial byte zero-padded; its value is sent
  like a field of its width, with ``check.byte_order``.
- whitening: a Fibonacci LFSR (register bit 0 is output; feedback = parity of
  ``state & poly`` into bit ``width - 1``); its output is taken in groups of 8 steps and
  each group meets the whitened bits of one byte position, the first step at the byte's
  least significant (last sent) position, counted from the start of the whitened sections.
- NRZ stuffing ``stuff_after = N``: "both" inserts the complement after N equal bits on
  air (the inserted bit starts the next run); "ones" inserts a 0 after N ones; the count
  starts at the first bit after the sync word, and a run completed by the last bit is
  stuffed too.
- line codes (one chip = one unit): nrz 1 -> mark; manchester ieee 0 -> (1, 0),
  1 -> (0, 1), thomas the reverse; diff_manchester a transition in every bit middle, a 0
  also at the bit start; biphase_mark a transition at every bit start, a 1 also in the
  middle; both transition codes start from the idle space level; pwm a period of
  ``short + long`` units, 0 = short mark, 1 = long mark; pulse_distance a mark of
  ``mark_units`` then a space of ``zero/one_space_units``, with a final stop mark; 4b6b
  and 3of6 map each nibble (MSB first) to a 6-chip word sent MSB first.
- a transmission is ``repeats`` copies separated by ``gap_us`` of space.
"""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Decimal
from itertools import combinations, product

import numpy as np

from ookframe import LINE_CODES, FrameSpec

# ----------------------------------------------------------------------------- bits


def _msb_bits(value: int, width: int) -> list[int]:
    return [(value >> (width - 1 - i)) & 1 for i in range(width)]


def to_air(value: int, width: int, bit_order: str, byte_order: str) -> list[int]:
    """Return the on-air bits of unsigned ``value`` of ``width`` bits (module rules)."""
    msb = _msb_bits(value & ((1 << width) - 1), width)
    if width % 8 == 0 and width > 8:
        groups = [msb[i:i + 8] for i in range(0, width, 8)]
        if byte_order == "little":
            groups.reverse()
        if bit_order == "lsb":
            groups = [g[::-1] for g in groups]
        return [b for g in groups for b in g]
    return msb[::-1] if bit_order == "lsb" else msb


def head_bits(spec: FrameSpec) -> list[int]:
    """Return preamble + sync bits."""
    p = spec.preamble
    return _msb_bits(p.pattern, p.pattern_bits) * p.count + _msb_bits(
        spec.sync.value, spec.sync.length_bits)


def field_bits(spec: FrameSpec, raw: dict[str, object]) -> list[int]:
    """Return the fields section's on-air bits (before whitening) for raw values."""
    out: list[int] = []
    for f in spec.fields:
        r = raw[f.name]
        if f.kind == "bytes":
            assert isinstance(r, bytes)
            for byte in r:
                bits = _msb_bits(byte, 8)
                out += bits[::-1] if spec.bit_order == "lsb" else bits
        else:
            assert isinstance(r, int)
            out += to_air(r, f.width_bits, spec.bit_order, spec.byte_order)
    return out


def pack_msb(bits: list[int]) -> bytes:
    """Pack bits MSB first into bytes, the last partial byte zero-padded."""
    padded = bits + [0] * (-len(bits) % 8)
    return bytes(int("".join(map(str, padded[i:i + 8])), 2) for i in range(0, len(padded), 8))


def _reflect(x: int, width: int) -> int:
    return int(format(x, f"0{width}b")[::-1], 2)


def crc_bitwise(data: bytes, width: int, poly: int, init: int, refin: bool, refout: bool,
                xorout: int) -> int:
    """Return the CRC of ``data``, one bit at a time (Rocksoft/Williams parameter model)."""
    top, mask = 1 << (width - 1), (1 << width) - 1
    reg = init
    for byte in data:
        b = _reflect(byte, 8) if refin else byte
        for i in range(7, -1, -1):
            fb = bool(reg & top) ^ bool((b >> i) & 1)
            reg = (reg << 1) & mask
            if fb:
                reg ^= poly
    if refout:
        reg = _reflect(reg, width)
    return reg ^ xorout


def check_value(spec: FrameSpec, data: bytes) -> int:
    """Return the check value of ``data`` for the spec's check."""
    c = spec.check
    if c.kind == "crc":
        p = c.crc
        assert p is not None
        return crc_bitwise(data, p.width, p.poly, p.init, p.refin, p.refout, p.xorout)
    if c.kind == "sum8":
        return sum(data) % 256
    if c.kind == "xor8":
        x = 0
        for b in data:
            x ^= b
        return x
    if c.kind == "fletcher16":  # Fletcher (1982): two running sums modulo 255
        s1 = s2 = 0
        for b in data:
            s1 = (s1 + b) % 255
            s2 = (s2 + s1) % 255
        return (s2 << 8) | s1
    raise ValueError(f"no independent model of check kind {c.kind!r}")


def lfsr_mask(width: int, poly: int, seed: int, n_bits: int) -> list[int]:
    """Return ``n_bits`` of whitening mask in on-air order (groups of 8 steps reversed)."""
    n_steps = -(-n_bits // 8) * 8
    out, reg = [], seed
    for _ in range(n_steps):
        out.append(reg & 1)
        reg = (reg >> 1) | ((bin(reg & poly).count("1") & 1) << (width - 1))
    return [out[8 * (i // 8) + 7 - i % 8] for i in range(n_bits)]


def body_bits(spec: FrameSpec, raw: dict[str, object]) -> list[int]:
    """Return fields + check bits as sent (whitened, not stuffed)."""
    fb = field_bits(spec, raw)
    n_check = spec.check.width_bits
    cb: list[int] = []
    if n_check:
        covered = (head_bits(spec)[-spec.sync.length_bits:] if "sync" in spec.check.covers
                   else []) + (fb if "fields" in spec.check.covers else [])
        cb = to_air(check_value(spec, pack_msb(covered)), n_check, spec.bit_order,
                    spec.check.byte_order)
    body = fb + cb
    w = spec.whitening
    if w.kind != "none":
        start = 0 if "fields" in w.covers else len(fb)
        stop = len(body) if "check" in w.covers else len(fb)
        mask = lfsr_mask(w.width, w.poly, w.seed, stop - start)
        for i, m in enumerate(mask):
            body[start + i] ^= m
    return body


# ----------------------------------------------------------------------------- line codes


def line_params(spec: FrameSpec) -> dict[str, object]:
    """Return the line code's parameters with the registry's declared defaults filled in."""
    return {**LINE_CODES[spec.line_code.name].DEFAULTS, **dict(spec.line_code.params)}


def stuff(spec: FrameSpec, bits: list[int]) -> list[int]:
    """Return ``bits`` (sent after the sync word) with NRZ bit stuffing (module rules)."""
    if spec.line_code.name != "nrz":
        return bits
    p = line_params(spec)
    n, mode = int(p["stuff_after"]), p["stuff_value"]  # type: ignore[call-overload]
    if not n:
        return bits
    out: list[int] = []
    prev, count = -1, 0
    for b in bits:
        out.append(b)
        if mode == "ones":
            count = count + 1 if b == 1 else 0
            if count == n:
                out.append(0)
                count = 0
        else:
            count = count + 1 if b == prev else 1
            prev = b
            if count == n:
                out.append(1 - b)
                prev, count = 1 - b, 1
    return out


def _weight3_words() -> list[int]:
    """Return every 6-chip word with exactly three ones, ascending."""
    return sorted(sum(1 << (5 - i) for i in c) for c in combinations(range(6), 3))


#: 4B6B of IEEE 802.15.7 (clause 10.5.1), nibble 0..F, written out here from the standard's
#: table (the same source tests/test_linecodes.py names), not read from ookframe.
WORDS_4B6B = (0b001110, 0b001101, 0b010011, 0b010110, 0b010101, 0b100011, 0b100110, 0b100101,
              0b011001, 0b011010, 0b011100, 0b110001, 0b110010, 0b101001, 0b101010, 0b101100)
#: 3-out-of-6 of EN 13757-4 (wireless M-Bus mode T), nibble 0..F; from memory.
WORDS_3OF6 = (0b010110, 0b001101, 0b001110, 0b001011, 0b011100, 0b011001, 0b011010, 0b010011,
              0b101100, 0b100101, 0b100110, 0b100011, 0b110100, 0b110001, 0b110010, 0b101001)


def _transition_chips(bits: list[int], clock_slot: int, one_has_transition: bool) -> list[int]:
    level, chips = 0, []
    for b in bits:
        data_t = b if one_has_transition else 1 - b
        for slot in (0, 1):
            level ^= 1 if slot == clock_slot else data_t
            chips.append(level)
    return chips


def line_chips(spec: FrameSpec, bits: list[int]) -> list[int]:
    """Return the chips of an on-air bit stream under the spec's line code."""
    name, p = spec.line_code.name, line_params(spec)
    if name == "nrz":
        return list(bits)
    if name == "manchester":
        zero, one = ((1, 0), (0, 1)) if p["convention"] == "ieee" else ((0, 1), (1, 0))
        return [c for b in bits for c in (one if b else zero)]
    if name == "diff_manchester":
        return _transition_chips(bits, clock_slot=1, one_has_transition=False)
    if name == "biphase_mark":
        return _transition_chips(bits, clock_slot=0, one_has_transition=True)
    if name == "pwm":
        s, lg = int(p["short_units"]), int(p["long_units"])  # type: ignore[call-overload]
        return [c for b in bits for c in [1] * (lg if b else s) + [0] * (s if b else lg)]
    if name == "pulse_distance":
        m = int(p["mark_units"])  # type: ignore[call-overload]
        z, o = int(p["zero_space_units"]), int(p["one_space_units"])  # type: ignore[call-overload]
        return [c for b in bits for c in [1] * m + [0] * (o if b else z)] + [1] * m
    if name in ("4b6b", "3of6"):
        words = WORDS_4B6B if name == "4b6b" else WORDS_3OF6
        if len(bits) % 4:
            raise ValueError(f"{name} needs whole nibbles, got {len(bits)} bits")
        nibbles = [int("".join(map(str, bits[i:i + 4])), 2) for i in range(0, len(bits), 4)]
        return [c for v in nibbles for c in _msb_bits(words[v], 6)]
    raise ValueError(f"no independent model of line code {name!r}")


def runs(chips: list[int]) -> tuple[list[int], list[int]]:
    """Return (levels, lengths in units) of the runs of equal chips."""
    levels: list[int] = []
    lengths: list[int] = []
    for c in chips:
        if levels and levels[-1] == c:
            lengths[-1] += 1
        else:
            levels.append(c)
            lengths.append(1)
    return levels, lengths


def copy_chips(spec: FrameSpec, raw: dict[str, object]) -> list[int]:
    """Return the chips of one copy (frame) for raw field values."""
    return line_chips(spec, head_bits(spec) + stuff(spec, body_bits(spec, raw)))


def transmission(spec: FrameSpec, raw: dict[str, object]) -> tuple[np.ndarray, np.ndarray]:
    """Return (levels uint8, durations_us float64) of one transmission (all repeats)."""
    lv, un = runs(copy_chips(spec, raw))
    levels: list[int] = []
    dur: list[float] = []
    for k in range(spec.repeats):
        pieces = list(zip(lv, (u * spec.unit_us for u in un), strict=True))
        if k:
            pieces.insert(0, (0, spec.gap_us))
        for level, d in pieces:
            if levels and levels[-1] == level:
                dur[-1] += d
            else:
                levels.append(level)
                dur.append(d)
    return np.array(levels, np.uint8), np.array(dur, np.float64)


# ----------------------------------------------------------------------------- values


def random_raw(spec: FrameSpec, rng: np.random.Generator) -> dict[str, object]:
    """Return random raw values of every field (the length field set from the bytes)."""
    raw: dict[str, object] = {}
    blob = b""
    for f in spec.fields:
        if f.kind == "bytes":
            n = int(rng.integers(0, f.max_len_bytes + 1))
            blob = rng.integers(0, 256, n, dtype=np.uint8).tobytes()
            raw[f.name] = blob
    for f in spec.fields:
        if f.kind == "bytes":
            continue
        if f.role == "length":
            raw[f.name] = len(blob)
            continue
        lo = -(1 << (f.width_bits - 1)) if f.signed else 0
        raw[f.name] = lo + int.from_bytes(rng.bytes(f.width_bits // 8 + 1), "big") % (
            1 << f.width_bits)
    return raw


def physical_values(spec: FrameSpec, raw: dict[str, object]) -> dict[str, object]:
    """Return the values to give ``ookframe.encode`` for ``raw`` (exact decimal strings)."""
    out: dict[str, object] = {}
    for f in spec.fields:
        r = raw[f.name]
        if f.role == "length":
            continue
        if isinstance(r, bytes):
            out[f.name] = r.hex()
        elif f.scale != 1.0 or f.offset != 0.0:
            out[f.name] = str(Decimal(r) * Decimal(repr(f.scale)) + Decimal(repr(f.offset)))
        else:
            out[f.name] = r
    return out


# ----------------------------------------------------------------------------- ideal receiver


@dataclass(frozen=True)
class AllowedRuns:
    """Run lengths (units) a frame of a spec can contain, per level (0 space, 1 mark)."""

    space: tuple[int, ...]
    mark: tuple[int, ...]

    def of(self, level: int) -> tuple[int, ...]:
        return self.mark if level else self.space


def inner_runs(levels: list[int], lengths: list[int]) -> list[tuple[int, int]]:
    """Return (level, length) of a copy's runs that lie wholly inside it: a space at either
    end merges with the gap and is left out."""
    pairs = list(zip(levels, lengths, strict=True))
    if pairs and pairs[-1][0] == 0:
        pairs = pairs[:-1]
    if pairs and pairs[0][0] == 0:
        pairs = pairs[1:]
    return pairs


def allowed_runs(spec: FrameSpec, body_lengths_bits: tuple[int, ...] = (8, 12),
                 long_bits: int = 64) -> AllowedRuns:
    """Return the run lengths per level that the spec's frames can contain.

    Exhaustive: every body of each length in ``body_lengths_bits`` (after this spec's
    preamble and sync, stuffed, line coded) contributes its inner runs. A level whose runs
    grow with ``long_bits`` equal bits (between two of the other value) is unbounded: it
    then allows every length up to a bound on the longest frame's chip count.
    """
    head = head_bits(spec)
    found: dict[int, set[int]] = {0: set(), 1: set()}
    for n in body_lengths_bits:
        for body in product((0, 1), repeat=n):
            for level, length in inner_runs(*runs(line_chips(spec, head + stuff(spec,
                                                                                list(body))))):
                found[level].add(length)
    for fill in (0, 1):
        body = [1 - fill] * 2 + [fill] * long_bits + [1 - fill] * 2
        for level, length in inner_runs(*runs(line_chips(spec, head + stuff(spec, body)))):
            if length > max(found[level], default=0):
                found[level] |= set(range(1, _max_frame_chips(spec) + 1))
    return AllowedRuns(tuple(sorted(found[0])), tuple(sorted(found[1])))


def _max_frame_chips(spec: FrameSpec) -> int:
    """Return a bound on any frame's chip count (8 units per bit, stuffing doubling bits)."""
    n_body = sum(8 * f.max_len_bytes if f.kind == "bytes" else f.width_bits
                 for f in spec.fields) + spec.check.width_bits
    return 8 * (len(head_bits(spec)) + 2 * n_body)


def nearest_allowed(units: np.ndarray, allowed: tuple[int, ...]) -> np.ndarray:
    """Return the allowed length nearest to each measured length (midpoint thresholds)."""
    a = np.asarray(allowed, dtype=np.float64)
    mids = (a[1:] + a[:-1]) / 2
    return a[np.searchsorted(mids, units)].astype(np.int64)


def ideal_copy_ok(measured_units: np.ndarray, true_units: np.ndarray, levels: np.ndarray,
                  allowed: AllowedRuns, copy_of_pulse: np.ndarray, n_copies: int) -> np.ndarray:
    """Return, per copy, True when every one of its inner pulses is classified right.

    ``measured_units``: pulse durations over the true unit; ``true_units``: the sent run
    lengths; ``copy_of_pulse``: the copy (0 .. n_copies - 1) each pulse belongs to.
    """
    got = np.empty(measured_units.size, np.int64)
    for level in (0, 1):
        sel = levels == level
        got[sel] = nearest_allowed(measured_units[sel], allowed.of(level))
    wrong = np.bincount(copy_of_pulse[got != true_units], minlength=n_copies)
    return wrong == 0

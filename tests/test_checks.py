"""Tests for ookframe.checks: CRC model, catalogue, algorithms, checksums, registry."""

from __future__ import annotations

import binascii
import re
import zlib
from importlib.metadata import version

import crccheck
import crccheck.checksum
import crccheck.crc
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ookframe.checks import (
    ALIASES,
    CATALOGUE,
    CHECK_INPUT,
    CHECKS,
    Check,
    Crc,
    Fletcher16,
    Sum8,
    Xor8,
    make_check,
    reflect,
)
from ookframe.checks import crc as crc_module
from ookframe.errors import SpecError
from ookframe.spec.model import CheckSpec, CrcParams

CRCCHECK_VERSION = "1.3"  # tests are written against crccheck 1.3.x
CATALOGUE_NAMES = sorted(CATALOGUE)
data_st = st.binary(max_size=64)


@st.composite
def crc_st(draw: st.DrawFn) -> Crc:
    """Any valid Crc: width 3..64 (crcmod widths drawn often), odd poly, any flags."""
    width = draw(st.one_of(st.sampled_from([8, 16, 24, 32, 64]), st.integers(3, 64)))
    top = (1 << width) - 1
    return Crc(width=width, poly=draw(st.integers(0, top)) | 1, init=draw(st.integers(0, top)),
               refin=draw(st.booleans()), refout=draw(st.booleans()),
               xorout=draw(st.integers(0, top)))


def crccheck_generic(c: Crc) -> crccheck.crc.Crc:
    """Return crccheck's generic (user-defined) CRC calculator for the same parameters."""
    return crccheck.crc.Crc(c.width, c.poly, c.init, c.refin, c.refout, c.xorout)


_CRCCHECK_CLASSES = {n.lower(): getattr(crccheck.crc, n) for n in dir(crccheck.crc)
                     if n.startswith("Crc")}


def crccheck_class(name: str) -> type:
    """Return crccheck's own class for a catalogue name ("CRC-16/KERMIT" -> Crc16Kermit)."""
    return _CRCCHECK_CLASSES[re.sub(r"[^a-z0-9]", "", name.lower())]


# ------------------------------------------------------------------ catalogue

def test_crccheck_version() -> None:
    """The cross-checks below are written against PyPI crccheck 1.3.x."""
    assert version("crccheck").startswith(CRCCHECK_VERSION)


def test_catalogue_holds_the_required_models() -> None:
    """At least 30 models, including the ones the foundation issue names (Greg Cook's
    catalogue names)."""
    required = """CRC-3/GSM CRC-4/G-704 CRC-5/USB CRC-6/G-704 CRC-7/MMC CRC-8/SMBUS
        CRC-8/MAXIM-DOW CRC-8/AUTOSAR CRC-10/ATM CRC-11/FLEXRAY CRC-12/UMTS CRC-15/CAN
        CRC-16/KERMIT CRC-16/XMODEM CRC-16/IBM-3740 CRC-16/ARC CRC-16/MODBUS CRC-16/DNP
        CRC-16/EN-13757 CRC-16/IBM-SDLC CRC-16/MAXIM-DOW CRC-16/USB CRC-17/CAN-FD
        CRC-21/CAN-FD CRC-24/OPENPGP CRC-24/BLE CRC-31/PHILIPS CRC-32/ISO-HDLC CRC-32/ISCSI
        CRC-32/BZIP2 CRC-32/MPEG-2 CRC-40/GSM CRC-64/ECMA-182 CRC-64/XZ""".split()
    assert not set(required) - set(CATALOGUE)
    assert len(CATALOGUE) >= 30
    assert all(name == entry.params.name for name, entry in CATALOGUE.items())


@pytest.mark.parametrize("name", CATALOGUE_NAMES)
def test_catalogue_check_value(name: str) -> None:
    """Check value over b"123456789" as published in Greg Cook, "Catalogue of parametrised
    CRC algorithms" (CRC RevEng; values from memory), by every algorithm we have."""
    c = Crc.named(name)
    published = CATALOGUE[name].check
    assert c.check == published
    assert c.compute_table256(CHECK_INPUT) == published
    assert c.compute_table16(CHECK_INPUT) == published
    assert c.compute_bitwise(CHECK_INPUT) == published


@pytest.mark.parametrize("name", CATALOGUE_NAMES)
def test_catalogue_matches_crccheck_model(name: str) -> None:
    """Independent transcription: crccheck 1.3.x's own class for the model (crccheck.crc.*)
    has the same parameters and stored check result, and computes the same check."""
    ours = Crc.named(name)
    theirs = crccheck_class(name)
    assert (theirs._width, theirs._poly, theirs._initvalue, theirs._reflect_input,
            theirs._reflect_output, theirs._xor_output) == (
        ours.width, ours.poly, ours.init, ours.refin, ours.refout, ours.xorout)
    assert theirs._check_result == CATALOGUE[name].check
    assert theirs.calc(CHECK_INPUT) == ours.check


@settings(max_examples=150, deadline=None)
@given(name=st.sampled_from(CATALOGUE_NAMES), data=data_st)
def test_catalogue_models_match_crccheck_on_random_data(name: str, data: bytes) -> None:
    """Every catalogue model agrees with crccheck 1.3.x (generic crccheck.crc.Crc,
    bit-by-bit reference) on random data."""
    c = Crc.named(name)
    assert c.compute(data) == crccheck_generic(c).calc(data)


# ------------------------------------------------------------------ residues

#: residue= values of Greg Cook's "Catalogue of parametrised CRC algorithms" (CRC RevEng,
#: reveng.sourceforge.io/crc-catalogue/all.htm), as its entry lines are reproduced in
#: Istvan Pasztor's public parametric_crc.py (2023); a few rows with a non-zero residue
PUBLISHED_RESIDUES = {
    "CRC-3/GSM": 0x2, "CRC-5/USB": 0x06, "CRC-8/SAE-J1850": 0xC4, "CRC-12/GSM": 0x178,
    "CRC-15/MPT1327": 0x6815, "CRC-16/IBM-SDLC": 0xF0B8, "CRC-16/USB": 0xB001,
    "CRC-16/DNP": 0x66C5, "CRC-16/EN-13757": 0xA366, "CRC-16/GSM": 0x1D0F,
    "CRC-16/KERMIT": 0x0000, "CRC-24/OS-9": 0x800FE3, "CRC-31/PHILIPS": 0x4EAF26F1,
    "CRC-32/ISO-HDLC": 0xDEBB20E3, "CRC-32/BZIP2": 0xC704DD7B, "CRC-32/ISCSI": 0xB798B438,
    "CRC-40/GSM": 0xC4FF8071FF, "CRC-64/XZ": 0x49958C9ABD7D353F,
    "CRC-64/GO-ISO": 0x5300000000000000,
}


def test_residue_published_values() -> None:
    """Crc.residue equals the residue= value published in the CRC RevEng catalogue
    (Greg Cook; read from the copy of its lines in Istvan Pasztor's parametric_crc.py)."""
    for name, published in PUBLISHED_RESIDUES.items():
        assert Crc.named(name).residue == published, name
        assert CATALOGUE[name].residue == published, name


@pytest.mark.parametrize("name", CATALOGUE_NAMES)
def test_catalogue_residue(name: str) -> None:
    """Every catalogue row's residue (CRC RevEng catalogue residue=, read from the copy of
    its lines in parametric_crc.py) equals the computed Crc.residue."""
    assert Crc.named(name).residue == CATALOGUE[name].residue


def _feed(c: Crc, register: int, bits: list[int]) -> int:
    """Shift ``bits`` into an unreflected (MSB-first) Rocksoft register (Williams' model)."""
    for b in bits:
        feedback = ((register >> (c.width - 1)) ^ b) & 1
        register = (register << 1) & c.mask
        if feedback:
            register ^= c.poly
    return register


@settings(max_examples=200, deadline=None)
@given(name=st.sampled_from(CATALOGUE_NAMES), data=data_st)
def test_residue_is_the_register_after_a_codeword(name: str, data: bytes) -> None:
    """The RevEng catalogue defines the residue as the register after an error-free
    codeword (message + its CRC), reflected when refout (crossed-endian models: in the
    refin orientation), without xorout. Computed here bit by bit: the message bits in
    feed order (LSB first per byte when refin), then the CRC bits in the order that
    cancels the register (LSB first when refout); for byte-wide models with refin ==
    refout also as crccheck 1.3.x's CRC (xorout 0) over message + CRC bytes (little-endian
    when reflected), the usual receiver check."""
    c = Crc.named(name)
    crc = c.compute(data)
    msg_bits = [(byte >> (i if c.refin else 7 - i)) & 1 for byte in data for i in range(8)]
    crc_bits = [(crc >> (i if c.refout else c.width - 1 - i)) & 1 for i in range(c.width)]
    register = _feed(c, c.init, msg_bits + crc_bits)
    assert (reflect(register, c.width) if c.refin else register) == c.residue
    if c.width % 8 == 0 and c.refin == c.refout:
        codeword = data + crc.to_bytes(c.width // 8, "little" if c.refin else "big")
        receiver = crccheck.crc.Crc(c.width, c.poly, c.init, c.refin, c.refout, 0)
        assert receiver.calc(codeword) == c.residue


# ------------------------------------------------------------------ algorithms

@settings(max_examples=300, deadline=None)
@given(c=crc_st(), data=data_st)
def test_all_algorithms_agree_with_crccheck(c: Crc, data: bytes) -> None:
    """For any parameters (widths 3..64, refin != refout too): compute (crcmod or table),
    256-table, 16-table and bitwise agree with crccheck 1.3.x's generic Crc."""
    expected = crccheck_generic(c).calc(data)
    assert c.compute(data) == expected
    assert c.compute_table256(data) == expected
    assert c.compute_table16(data) == expected
    assert c.compute_bitwise(data) == expected


@settings(max_examples=150, deadline=None)
@given(c=crc_st(), rows=st.lists(st.binary(min_size=7, max_size=7), min_size=1, max_size=12))
def test_compute_rows_agrees_with_crccheck(c: Crc, rows: list[bytes]) -> None:
    """Crc.compute_rows (row by row through crcmod where it applies, else the 256-table
    algorithm down the columns of a rows x bytes array) and compute_rows_table (that
    algorithm, any parameters, refin != refout too), whole rows and each row's first n
    bytes, give every row's value of crccheck 1.3.x's generic Crc."""
    import numpy as np

    data = np.frombuffer(b"".join(rows), np.uint8).reshape(len(rows), 7)
    whole = [crccheck_generic(c).calc(r) for r in rows]
    n_bytes = np.arange(len(rows)) % 9  # rows of 0..8 bytes (8: more than the row holds)
    cut = [crccheck_generic(c).calc(r[:k]) for r, k in zip(rows, n_bytes.tolist(), strict=True)]
    for rows_of in (c.compute_rows, c.compute_rows_table):
        got = rows_of(data)
        assert got.dtype == np.uint64
        assert got.tolist() == whole
        assert rows_of(data, n_bytes).tolist() == cut


@pytest.mark.parametrize("name", ["sum8", "xor8", "fletcher16"])
def test_checksum_rows_agree_with_crccheck(name: str) -> None:
    """Sum8 / Xor8 / Fletcher16 compute_rows, and check_rows over rows of different
    lengths, give each row's value of crccheck 1.3.x's Checksum8 / ChecksumXor8, and for
    Fletcher-16 of the running-sum definition (Fletcher 1982, RFC 1146 8-bit form)."""
    import numpy as np

    from ookframe.checks.base import check_rows

    ours = {"sum8": Sum8(), "xor8": Xor8(), "fletcher16": Fletcher16()}[name]
    theirs = {"sum8": crccheck.checksum.Checksum8.calc,
              "xor8": crccheck.checksum.ChecksumXor8.calc,
              "fletcher16": fletcher16_reference}[name]
    rng = np.random.default_rng(5)
    data = rng.integers(0, 256, (60, 40), dtype=np.uint8)
    assert ours.compute_rows(data).tolist() == [theirs(r.tobytes()) for r in data]
    n_bytes = rng.integers(0, 41, 60)
    assert check_rows(ours, data, n_bytes).tolist() == [
        theirs(r[:k].tobytes()) for r, k in zip(data, n_bytes.tolist(), strict=True)]


def test_crcmod_route_is_used_where_it_applies(monkeypatch: pytest.MonkeyPatch) -> None:
    """compute uses crcmod for widths 8/16/24/32/64 with refin == refout and our tables
    otherwise (crcmod 1.7 documents only those widths and a single rev flag)."""
    calls: list[int] = []
    real = crc_module._crcmod_fun

    def spy(width: int, *args: object) -> object:
        calls.append(width)
        return real(width, *args)

    monkeypatch.setattr(crc_module, "_crcmod_fun", spy)
    for name in ("CRC-8/SMBUS", "CRC-16/KERMIT", "CRC-24/BLE", "CRC-32/ISO-HDLC", "CRC-64/XZ"):
        Crc.named(name).compute(CHECK_INPUT)
    for name in ("CRC-12/UMTS", "CRC-5/USB", "CRC-17/CAN-FD", "CRC-40/GSM"):
        Crc.named(name).compute(CHECK_INPUT)
    assert calls == [8, 16, 24, 32, 64]
    Crc(width=16, poly=0x1021, refin=True, refout=False).compute(CHECK_INPUT)
    assert calls == [8, 16, 24, 32, 64]


def test_crcmod_runs_on_its_c_extension() -> None:
    """crcmod's C extension is installed on this machine (project brief)."""
    assert crc_module.CRCMOD_C_EXTENSION


@settings(max_examples=100, deadline=None)
@given(data=st.binary(max_size=256))
def test_crc32_iso_hdlc_matches_zlib(data: bytes) -> None:
    """CRC-32/ISO-HDLC equals zlib.crc32 and binascii.crc32 (Python stdlib)."""
    c = Crc.named("CRC-32/ISO-HDLC")
    assert c.compute(data) == zlib.crc32(data) == binascii.crc32(data)
    assert c.compute_table256(data) == zlib.crc32(data)


@settings(max_examples=100, deadline=None)
@given(init=st.integers(0, 0xFFFF), data=st.binary(max_size=128))
def test_ccitt_msb_first_matches_binascii_crc_hqx(init: int, data: bytes) -> None:
    """binascii.crc_hqx(data, init) (Python stdlib) is poly 0x1021, MSB-first, no final
    XOR: CRC-16/XMODEM for init 0, CRC-16/IBM-3740 for 0xFFFF, any init in general."""
    c = Crc(width=16, poly=0x1021, init=init)
    assert c.compute(data) == binascii.crc_hqx(data, init)
    assert c.compute_table16(data) == binascii.crc_hqx(data, init)
    assert Crc.named("CRC-16/XMODEM").compute(data) == binascii.crc_hqx(data, 0)
    assert Crc.named("CRC-16/IBM-3740").compute(data) == binascii.crc_hqx(data, 0xFFFF)


@pytest.mark.parametrize("name", CATALOGUE_NAMES)
def test_empty_input_gives_init_through_the_output_stage(name: str) -> None:
    """With no data the register stays at init: value = (reflected if refout) init ^ xorout
    (Rocksoft model, Williams 1993 "A Painless Guide to CRC Error Detection Algorithms")."""
    c = Crc.named(name)
    expected = (reflect(c.init, c.width) if c.refout else c.init) ^ c.xorout
    for algorithm in (c.compute, c.compute_table256, c.compute_table16, c.compute_bitwise):
        assert algorithm(b"") == expected


# ------------------------------------------------------------------ tables

def test_crc32_table_known_entries() -> None:
    """The reflected CRC-32 table starts 0, 0x77073096, 0xEE0E612C, 0x990951BA and entry
    128 is the reflected poly 0xEDB88320 (zlib crc32 table; from memory)."""
    t = Crc.named("CRC-32/ISO-HDLC").table()
    assert t[:4] == (0x00000000, 0x77073096, 0xEE0E612C, 0x990951BA)
    assert t[128] == 0xEDB88320


def test_xmodem_table_known_entries() -> None:
    """The left-shifting CRC-16 0x1021 table starts 0, 0x1021, 0x2042, 0x3063 and entry 255
    is 0x1EF0 (common practice, no source; from memory)."""
    t = Crc.named("CRC-16/XMODEM").table()
    assert t[:4] == (0x0000, 0x1021, 0x2042, 0x3063)
    assert t[255] == 0x1EF0


@settings(max_examples=100, deadline=None)
@given(c=crc_st())
def test_table_orientation(c: Crc) -> None:
    """Documented orientation: left-shifting table[i] = i*x^w mod P, so table[1] = poly and
    table(16) = table(256)[:16]; reflected table[0x80] = reflect(poly) and its 16-entry
    table[8] = reflect(poly) (algebra of the Rocksoft model, common practice, no source)."""
    t256, t16 = c.table(256), c.table(16)
    assert len(t256) == 256 and len(t16) == 16
    assert all(0 <= v <= c.mask for v in t256 + t16)
    if c.refin:
        assert t256[0x80] == t16[0x8] == reflect(c.poly, c.width)
    else:
        assert t256[1] == c.poly
        assert t16 == t256[:16]


def test_table_entries_must_be_256_or_16() -> None:
    """table() only builds the two sizes the C generator uses."""
    with pytest.raises(ValueError, match="256 or 16"):
        Crc.named("CRC-8/SMBUS").table(32)


# ------------------------------------------------------------------ model & lookup

def test_issue_example() -> None:
    """Crc(width=16, poly=0x1021, init=0, refin=True, refout=True, xorout=0) is
    CRC-16/KERMIT, check 0x2189 (Greg Cook's catalogue; from memory)."""
    c = Crc(width=16, poly=0x1021, init=0, refin=True, refout=True, xorout=0)
    assert c.compute(b"123456789") == 0x2189
    assert Crc.named("CRC-16/KERMIT").compute(b"123456789") == 0x2189
    assert c.kind == "crc" and c.width_bits == 16
    assert isinstance(c, Check)


@pytest.mark.parametrize("name", CATALOGUE_NAMES)
def test_params_round_trip(name: str) -> None:
    """Crc <-> CrcParams round trip keeps every parameter and the name."""
    c = Crc.named(name)
    assert c.params == CATALOGUE[name].params
    assert Crc.from_params(c.params) == c


@pytest.mark.parametrize(("query", "expected"), [
    ("crc-16/kermit", "CRC-16/KERMIT"),
    ("  CRC-16/Kermit ", "CRC-16/KERMIT"),
    ("KERMIT", "CRC-16/KERMIT"),
    ("CRC-CCITT", "CRC-16/KERMIT"),
    ("CRC-16/CCITT-FALSE", "CRC-16/IBM-3740"),
    ("modbus", "CRC-16/MODBUS"),
    ("CRC-32C", "CRC-32/ISCSI"),
    ("DNP", "CRC-16/DNP"),
    ("CAN", "CRC-15/CAN"),
])
def test_named_accepts_names_aliases_and_unique_suffixes(query: str, expected: str) -> None:
    """Lookup is case-insensitive; aliases are the catalogue's (Greg Cook; from memory);
    a bare suffix works only when one model ends in it."""
    assert Crc.named(query).name == expected


@pytest.mark.parametrize("query", ["GSM", "XZ", "CDMA2000", "MAXIM-DOW"])
def test_named_refuses_ambiguous_suffixes(query: str) -> None:
    """A suffix shared by several models (CRC-3/GSM, CRC-6/GSM ...) is an error listing them."""
    with pytest.raises(SpecError, match="ambiguous") as e:
        Crc.named(query)
    assert e.value.message.count("CRC-") >= 2


def test_named_unknown_model() -> None:
    """An unknown name is a SpecError on path "model" naming the allowed form."""
    with pytest.raises(SpecError, match="unknown CRC model 'CRC-16/BEEHIVE'") as e:
        Crc.named("CRC-16/BEEHIVE")
    assert e.value.path == "model"


def test_aliases_point_at_models_and_never_shadow_names() -> None:
    """Every alias resolves to a catalogue model and no alias is also a model name."""
    assert set(ALIASES.values()) <= set(CATALOGUE)
    assert not set(ALIASES) & set(CATALOGUE)


@pytest.mark.parametrize(("kwargs", "path", "message"), [
    ({"width": 2, "poly": 0x3}, "width", "3..64"),
    ({"width": 65, "poly": 0x3}, "width", "3..64"),
    ({"width": True, "poly": 0x1}, "width", "integer"),
    ({"width": 8, "poly": 0x107}, "poly", r"0\.\.0xff"),
    ({"width": 8, "poly": 0x06}, "poly", "x\\^0 term"),
    ({"width": 8, "poly": -7}, "poly", r"0\.\.0xff"),
    ({"width": 8, "poly": 0x07, "init": 0x100}, "init", r"0\.\.0xff"),
    ({"width": 5, "poly": 0x05, "xorout": 0x20}, "xorout", r"0\.\.0x1f"),
    ({"width": 8, "poly": 0x07, "refin": 1}, "refin", "true or false"),
    ({"width": 8, "poly": 0x07, "refout": "yes"}, "refout", "true or false"),
    ({"width": 8, "poly": 0x07, "name": 5}, "name", "string"),
])
def test_bad_params_raise_spec_error(kwargs: dict, path: str, message: str) -> None:
    """Invalid parameters are refused at construction with the key and the allowed values."""
    with pytest.raises(SpecError, match=message) as e:
        Crc(**kwargs)
    assert e.value.path == path
    with pytest.raises(SpecError):
        Crc.from_params(CrcParams(**kwargs))


def test_describe_line() -> None:
    """describe() prints the parameters and check in hex of the CRC's width."""
    assert Crc.named("CRC-5/USB").describe() == (
        "width=5 poly=0x05 init=0x1f refin=true refout=true xorout=0x1f check=0x19 "
        "residue=0x06 name='CRC-5/USB'")


# ------------------------------------------------------------------ checksums

def fletcher16_reference(data: bytes) -> int:
    """Straightforward Fletcher-16: running sums modulo 255 (Fletcher 1982)."""
    s1 = s2 = 0
    for b in data:
        s1 = (s1 + b) % 255
        s2 = (s2 + s1) % 255
    return (s2 << 8) | s1


@pytest.mark.parametrize(("text", "expected"), [
    (b"abcde", 0xC8F0), (b"abcdef", 0x2057), (b"abcdefgh", 0x0627)])
def test_fletcher16_worked_examples(text: bytes, expected: int) -> None:
    """Fletcher-16 examples from Wikipedia "Fletcher's checksum" (from memory)."""
    assert Fletcher16().compute(text) == expected


@settings(max_examples=200, deadline=None)
@given(data=st.binary(max_size=600))
def test_fletcher16_matches_running_sums(data: bytes) -> None:
    """The closed-form Fletcher-16 equals the running-sum definition (Fletcher 1982,
    RFC 1146 8-bit form), and two check bytes appended bring both sums to 0 (RFC 1146)."""
    value = Fletcher16().compute(data)
    assert value == fletcher16_reference(data)
    s1, s2 = value & 0xFF, value >> 8
    c0 = 255 - (s1 + s2) % 255
    c1 = 255 - (s1 + c0) % 255
    assert Fletcher16().compute(data + bytes([c0, c1])) == 0


@settings(max_examples=200, deadline=None)
@given(data=st.binary(max_size=300))
def test_sum8_and_xor8_match_crccheck(data: bytes) -> None:
    """sum8 = crccheck 1.3.x Checksum8, xor8 = crccheck ChecksumXor8; appending the XOR
    makes the XOR of the whole 0 (longitudinal parity, common practice, no source)."""
    assert Sum8().compute(data) == crccheck.checksum.Checksum8.calc(data)
    assert Xor8().compute(data) == crccheck.checksum.ChecksumXor8.calc(data)
    assert Xor8().compute(data + bytes([Xor8().compute(data)])) == 0


def test_sum8_xor8_check_string() -> None:
    """Over b"123456789": byte sum 477 = 0x1DD -> 0xDD; XOR 0x31 ^ ... ^ 0x39 = 0x31
    (worked by hand, common practice, no source)."""
    assert Sum8().compute(CHECK_INPUT) == 0xDD
    assert Xor8().compute(CHECK_INPUT) == 0x31


# ------------------------------------------------------------------ registry

@pytest.mark.parametrize("spec", [
    CheckSpec(kind="none"),
    CheckSpec(kind="sum8"),
    CheckSpec(kind="xor8"),
    CheckSpec(kind="fletcher16"),
    CheckSpec(kind="crc", crc=Crc.named("CRC-8/MAXIM-DOW").params),
    CheckSpec(kind="crc", crc=Crc.named("CRC-12/UMTS").params),
])
def test_make_check_kind_and_width(spec: CheckSpec) -> None:
    """make_check gives an object whose kind and width_bits match the CheckSpec and whose
    value fits that width."""
    check = make_check(spec)
    assert isinstance(check, Check)
    assert check.kind == spec.kind
    assert check.width_bits == spec.width_bits
    value = check.compute(CHECK_INPUT)
    assert 0 <= value < (1 << check.width_bits) or (check.width_bits == 0 and value == 0)


def test_make_check_values() -> None:
    """make_check computes the same values as the check classes (catalogue check values)."""
    assert make_check(CheckSpec(kind="none")).compute(b"anything") == 0
    assert make_check(CheckSpec(kind="crc", crc=Crc.named("CRC-16/DNP").params)
                      ).compute(CHECK_INPUT) == 0xEA82
    assert make_check(CheckSpec(kind="fletcher16")).compute(b"abcde") == 0xC8F0


def test_registry_covers_every_kind() -> None:
    """The registry holds exactly the kinds CheckSpec documents."""
    assert set(CHECKS) == {"none", "crc", "sum8", "xor8", "fletcher16"}


def test_make_check_errors() -> None:
    """Unknown kinds and a crc kind without parameters are SpecErrors naming the key."""
    with pytest.raises(SpecError, match="allowed: none, crc") as e:
        make_check(CheckSpec(kind="parity"))
    assert e.value.path == "check.kind"
    with pytest.raises(SpecError) as e:
        make_check(CheckSpec(kind="crc"))
    assert e.value.path == "check.crc"

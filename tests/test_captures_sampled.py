"""Tests for ookframe.captures.sampled: WAV, raw I/Q and raw real readers and writers.

Independent references: scipy.io.wavfile (scipy >= 1.11) writes and reads WAV files without
libsndfile; raw files are written and read with numpy's own ``tofile`` / ``fromfile``.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.io.wavfile as wavfile

from ookframe.captures.sampled import (
    SAMPLED_FORMATS,
    iter_samples,
    read_samples,
    sampled_format,
    sampled_info,
    write_samples,
)
from ookframe.errors import CaptureError

RATES_HZ = (8000, 44100, 48000, 192000, 1_000_000)


def _signal(n: int, channels: int, rng: np.random.Generator) -> np.ndarray:
    x = rng.uniform(-0.9, 0.9, size=(n, channels))
    return x[:, 0] if channels == 1 else x


# scipy.io.wavfile's dtype per bit depth and the scale to full scale 1.0 (scipy docs,
# "wavfile.read": 8-bit unsigned, 16/32-bit signed, 24-bit returned as int32 left-justified)
SCIPY_SCALE = {"u8": (np.uint8, 128.0, 128.0), "s16": (np.int16, 0.0, 32768.0),
               "s32": (np.int32, 0.0, 2.0**31), "f32": (np.float32, 0.0, 1.0)}


@pytest.mark.parametrize("rate_hz", RATES_HZ)
@pytest.mark.parametrize("kind", ["u8", "s16", "s32", "f32"])
@pytest.mark.parametrize("channels", [1, 2])
def test_wav_written_by_scipy_reads_back(tmp_path, rate_hz, kind, channels):
    """A WAV written by scipy.io.wavfile (scipy >= 1.11, its own writer) reads back with the
    values scipy stored, scaled to full scale 1.0 (u8 offset 128), every channel."""
    rng = np.random.default_rng(rate_hz + channels)
    dtype, offset, scale = SCIPY_SCALE[kind]
    x = _signal(1000, channels, rng)
    raw = (np.rint(x * scale + offset) if dtype != np.float32 else x).astype(dtype)
    path = tmp_path / "c.wav"
    wavfile.write(path, rate_hz, raw)
    expect = (raw.astype(np.float64) - offset) / scale
    for ch in range(channels):
        got, info = read_samples(path, channel=ch if channels > 1 else None)
        assert info.sample_rate_hz == rate_hz and info.channels == channels
        assert info.n_samples == 1000
        want = expect if channels == 1 else expect[:, ch]
        np.testing.assert_allclose(got, want, atol=1e-7)


@pytest.mark.filterwarnings("ignore:Chunk .non-data. not understood")  # float WAV's fact chunk
@pytest.mark.parametrize("kind", ["u8", "s16", "s24", "s32", "f32", "f64"])
def test_wav_written_here_matches_scipy_reader(tmp_path, kind):
    """write_samples' WAV (soundfile) read by scipy.io.wavfile (24-bit as left-justified
    int32) holds the samples to the bit depth's rounding; our reader agrees with scipy."""
    rng = np.random.default_rng(7)
    x = _signal(4000, 2, rng)
    path = tmp_path / "c.wav"
    write_samples(path, x, 96000, sample_type=kind)
    rate, raw = wavfile.read(path)
    assert rate == 96000 and raw.shape == (4000, 2)
    if raw.dtype == np.uint8:
        ref = (raw.astype(np.float64) - 128) / 128
    elif raw.dtype.kind == "i":
        ref = raw.astype(np.float64) / (2.0 ** (8 * raw.dtype.itemsize - 1))
    else:
        ref = raw.astype(np.float64)
    step = {"u8": 2**-7, "s16": 2**-15, "s24": 2**-23, "s32": 2**-31}.get(kind, 1e-7)
    np.testing.assert_allclose(ref, x, atol=step)
    for ch in (0, 1):
        got, _ = read_samples(path, channel=ch)
        np.testing.assert_allclose(got, ref[:, ch], atol=1e-7)


def test_stereo_as_iq(tmp_path):
    """channel='iq' reads left as I and right as Q."""
    x = _signal(500, 2, np.random.default_rng(3))
    path = tmp_path / "c.wav"
    write_samples(path, x, 48000, sample_type="f32")
    got, info = read_samples(path, channel="iq")
    assert info.is_complex and got.dtype == np.complex64
    np.testing.assert_allclose(got, x[:, 0] + 1j * x[:, 1], atol=1e-7)


@pytest.mark.parametrize("sample_type,dtype,offset,scale", [
    ("u8", np.uint8, 127.5, 127.5), ("s8", np.int8, 0.0, 128.0),
    ("s16", "<i2", 0.0, 32768.0), ("f32", "<f4", 0.0, 1.0)])
@pytest.mark.parametrize("fmt", ["iq", "real"])
def test_raw_files_written_by_numpy(tmp_path, fmt, sample_type, dtype, offset, scale):
    """Raw files written by numpy (interleaved I, Q for .iq) read as (raw - offset) / scale;
    u8 offset 127.5 is the usual unsigned I/Q convention (common practice, no source)."""
    rng = np.random.default_rng(11)
    per = 2 if fmt == "iq" else 1
    if np.dtype(dtype).kind == "f":
        raw = rng.uniform(-1, 1, 2000 * per).astype(dtype)
    else:
        info = np.iinfo(np.dtype(dtype))
        raw = rng.integers(info.min, info.max + 1, 2000 * per).astype(dtype)
    ext = SAMPLED_FORMATS[fmt].EXTENSIONS[0]
    path = tmp_path / f"c{ext}"
    raw.tofile(path)
    got, inf = read_samples(path, sample_rate_hz=2.4e6, sample_type=sample_type)
    ref = (raw.astype(np.float64) - offset) / scale
    if per == 2:
        ref = ref[0::2] + 1j * ref[1::2]
    assert inf.n_samples == 2000 and inf.is_complex == (per == 2)
    np.testing.assert_allclose(got, ref, atol=1e-6)
    # our writer gives back numpy's bytes
    out = tmp_path / f"d{ext}"
    write_samples(out, got, 2.4e6, sample_type=sample_type)
    assert np.array_equal(np.fromfile(out, dtype=dtype), raw)


@pytest.mark.parametrize("sample_type,dtype,offset,scale", [
    ("u8", np.uint8, 127.5, 127.5), ("s8", np.int8, 0.0, 128.0), ("s16", "<i2", 0.0, 32768.0)])
def test_every_integer_code_reads_exactly(tmp_path, sample_type, dtype, offset, scale):
    """Every code of an integer raw type reads as float32 arithmetic gives it, (float32(raw) - offset) * float32(1 / scale), and within
    two float32 roundings (2^-23 relative) of (raw - offset) / scale in float64; I/Q pairs
    the same."""
    info = np.iinfo(np.dtype(dtype))
    raw = np.arange(info.min, info.max + 1).astype(dtype)
    raw.tofile(tmp_path / "c.raw")
    raw.tofile(tmp_path / "c.iq")
    want = (raw.astype(np.float32) - np.float32(offset)) * np.float32(1.0 / scale)
    got, _ = read_samples(tmp_path / "c.raw", sample_rate_hz=1e6, sample_type=sample_type)
    assert got.dtype == np.float32 and np.array_equal(got, want)
    exact = (raw.astype(np.float64) - offset) / scale
    assert np.all(np.abs(got - exact) <= 2.0**-23 * np.abs(exact))
    iq, _ = read_samples(tmp_path / "c.iq", sample_rate_hz=1e6, sample_type=sample_type)
    assert np.array_equal(iq.real, want[0::2]) and np.array_equal(iq.imag, want[1::2])


def test_pcm16_wav_reads_as_libsndfile_floats(tmp_path):
    """A 16-bit WAV holding every code reads exactly as soundfile.read(dtype="float32")
    gives it (libsndfile's own conversion, value / 32768), each channel and as I/Q."""
    import soundfile as sf

    codes = np.arange(-32768, 32768, dtype=np.int16)
    pairs = np.stack((codes, codes[::-1]), axis=1)
    path = tmp_path / "c.wav"
    sf.write(path, pairs, 48000, subtype="PCM_16")
    ref = sf.read(path, dtype="float32", always_2d=True)[0]
    for ch in (0, 1):
        got, _ = read_samples(path, channel=ch)
        assert got.dtype == np.float32 and np.array_equal(got, ref[:, ch])
    iq, _ = read_samples(path, channel="iq")
    assert np.array_equal(iq.real, ref[:, 0]) and np.array_equal(iq.imag, ref[:, 1])


def test_sample_type_from_name(tmp_path):
    """A name like capture.s16.iq gives the sample type; the option overrides it."""
    path = tmp_path / "gate.s16.iq"
    np.array([100, -100, 32767, -32768], "<i2").tofile(path)
    got, info = read_samples(path, sample_rate_hz=1e6)
    assert info.sample_type == "s16" and got.size == 2
    np.testing.assert_allclose(got, [(100 - 100j) / 32768, (32767 - 32768j) / 32768])
    _, info = read_samples(path, sample_rate_hz=1e6, sample_type="u8")
    assert info.sample_type == "u8" and info.n_samples == 4


@pytest.mark.parametrize("block", [1, 7, 1000, 1 << 20])
def test_blocks_join_to_the_whole(tmp_path, block):
    """iter_samples in any block size yields the whole capture in order."""
    x = _signal(3001, 1, np.random.default_rng(5))
    for name in ("c.wav", "c.f32.raw"):
        path = tmp_path / name
        write_samples(path, x, 48000, sample_type="f32")
        info = sampled_info(path, sample_rate_hz=None if name.endswith("wav") else 48000)
        blocks = list(iter_samples(info, block))
        assert all(b.size <= block for b in blocks)
        np.testing.assert_allclose(np.concatenate(blocks), x, atol=1e-7)


def test_writer_takes_blocks(tmp_path):
    """write_samples accepts an iterable of blocks (a long capture made piece by piece)."""
    rng = np.random.default_rng(2)
    pieces = [rng.uniform(-1, 1, n) + 1j * rng.uniform(-1, 1, n) for n in (10, 1, 500)]
    path = tmp_path / "c.f32.iq"
    write_samples(path, iter(pieces), 1e6)
    got, _ = read_samples(path, sample_rate_hz=1e6)
    np.testing.assert_allclose(got, np.concatenate(pieces), atol=1e-6)


def test_format_names():
    """Extensions map to the registered formats; pulse captures are not sampled ones."""
    assert sampled_format("a.wav") == "wav" and sampled_format("a.u8.iq") == "iq"
    assert sampled_format("a.raw") == "real" and sampled_format("a.csv") is None
    assert sampled_format("a.bin", "iq") == "iq"


# ------------------------------------------------------------------------------ bad input
def _wav(tmp_path, n=1000, rate=48000):
    path = tmp_path / "c.wav"
    write_samples(path, np.zeros(n), rate)
    return path


def test_bad_input_is_clear(tmp_path):
    """Missing/wrong sample rate, truncated files, unknown formats, bad channels: one
    CaptureError naming the problem."""
    raw = tmp_path / "c.s16.iq"
    np.zeros(11, np.uint8).tofile(raw)
    cases = [
        (lambda: sampled_info(raw), "sample rate"),
        (lambda: sampled_info(raw, sample_rate_hz=1e6), "truncated"),
        (lambda: sampled_info(raw, sample_rate_hz=-5), "out of range"),
        (lambda: sampled_info(raw, sample_rate_hz=1e6, sample_type="u4"), "unknown"),
        (lambda: sampled_info(tmp_path / "c.flac"), "not a sampled capture format"),
        (lambda: sampled_info(_wav(tmp_path), sample_rate_hz=44100), "header says 48000"),
        (lambda: sampled_info(_wav(tmp_path), channel=1), "does not exist"),
        (lambda: sampled_info(_wav(tmp_path), channel="iq"), "two-channel"),
        (lambda: sampled_info(tmp_path / "missing.raw", sample_rate_hz=1e3,
                              sample_type="u8"), "cannot read"),
    ]
    for call, text in cases:
        with pytest.raises(CaptureError, match=text):
            call()
    empty = tmp_path / "e.u8.raw"
    empty.write_bytes(b"")
    with pytest.raises(CaptureError, match="empty"):
        sampled_info(empty, sample_rate_hz=1e3)
    noraw = tmp_path / "x.raw"
    noraw.write_bytes(b"\0\0")
    with pytest.raises(CaptureError, match="sample type"):
        sampled_info(noraw, sample_rate_hz=1e3)


def test_truncated_and_junk_wav(tmp_path):
    """A WAV cut off while recording (data chunk shorter than its header) and a file that is
    not a WAV are refused, not read short."""
    path = _wav(tmp_path, 20000)
    data = path.read_bytes()
    cut = tmp_path / "cut.wav"
    cut.write_bytes(data[:len(data) // 2])
    with pytest.raises(CaptureError, match="truncated"):
        sampled_info(cut)
    junk = tmp_path / "junk.wav"
    junk.write_bytes(b"not a wav file " * 20)
    with pytest.raises(CaptureError, match="cannot read as WAV"):
        sampled_info(junk)
    header_only = tmp_path / "h.wav"
    header_only.write_bytes(data[:30])
    with pytest.raises(CaptureError):
        sampled_info(header_only)


def test_write_leaves_nothing_on_failure(tmp_path):
    """A write that fails (unknown sample type) leaves no file and no temporary."""
    with pytest.raises(CaptureError):
        write_samples(tmp_path / "c.wav", np.zeros(10), 48000, sample_type="s12")
    with pytest.raises(CaptureError):
        write_samples(tmp_path / "c.wav", np.zeros(10), 44100.5)
    assert list(tmp_path.iterdir()) == []

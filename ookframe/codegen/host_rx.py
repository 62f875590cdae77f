"""The generated C receiver built for the host and driven through ctypes.

``host_receiver(spec)`` compiles the header (``emit --side rx``) with the system C compiler
(``OOKFRAME_CC``, else cc, gcc or clang) into a shared library cached per spec hash and
target under ``OOKFRAME_CACHE`` (default ``~/.cache/ookframe``); ``decode_c(spec, train)``
feeds a PulseTrain to it (durations to timer ticks, cumulative rounding so times do not
drift) and returns ``DecodedFrame``-like results.
"""

from __future__ import annotations

import ctypes
import hashlib
import os
import tempfile
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np

from ..errors import CodegenError
from ..frame import field_bits
from ..plan import as_plan
from ..pulses import PulseTrain
from ..spec.model import FrameSpec
from . import emit_header
from .model import CField
from .toolchains import STRICT_FLAGS, compile_c, find_tool

_CTYPES = {"uint8_t": ctypes.c_uint8, "int8_t": ctypes.c_int8, "uint16_t": ctypes.c_uint16,
           "int16_t": ctypes.c_int16, "uint32_t": ctypes.c_uint32, "int32_t": ctypes.c_int32,
           "uint64_t": ctypes.c_uint64, "int64_t": ctypes.c_int64}


class _Quality(ctypes.Structure):
    _fields_ = [("sync_time", ctypes.c_uint32), ("worst_dev_permille", ctypes.c_uint16),
                ("clock_error_permille", ctypes.c_int16), ("sync_errors", ctypes.c_uint8),
                ("code_errors", ctypes.c_uint8), ("corrected", ctypes.c_uint8)]


#: ``struct <p>_rx_counters`` member by member (the template's order and types)
COUNTER_FIELDS = (("frames_seen", ctypes.c_uint16), ("check_failures", ctypes.c_uint16),
                  ("overruns", ctypes.c_uint16), ("cut", ctypes.c_uint16),
                  ("edge_overruns", ctypes.c_uint16), ("hunt_skips", ctypes.c_uint16))


class _Counters(ctypes.Structure):
    _fields_ = list(COUNTER_FIELDS)


@dataclass(frozen=True)
class CFrame:
    """One frame from the C receiver (the fields ``match_frames`` and tests read)."""

    raw: dict[str, object]
    payload_hex: str
    crc_ok: bool
    start_us: float
    sync_errors: int
    code_errors: int
    worst_deviation: float
    clock_error: float
    corrected: int = 0


def cache_dir() -> Path:
    """Return the build cache folder (``OOKFRAME_CACHE`` or ``~/.cache/ookframe``)."""
    env = os.environ.get("OOKFRAME_CACHE")
    return Path(env) if env else Path.home() / ".cache" / "ookframe"


def find_cc() -> str:
    """Return the host C compiler; CodegenError when there is none."""
    for name in (os.environ.get("OOKFRAME_CC"), "cc", "gcc", "clang"):
        if name and find_tool(name):
            return str(find_tool(name))
    raise CodegenError("no C compiler found for the C receiver (tried $OOKFRAME_CC, cc, gcc, "
                       "clang); install one (e.g. apt-get install gcc) or use --decoder reference")



def raw_fields(model_fields: Sequence[CField], f: ctypes.Structure) -> dict[str, object]:
    """Raw field values of a filled ``struct <p>_fields`` (ctypes): ints as ints, bytes
    fields cut to the length field's value; ``model_fields`` from the header's model."""
    raw: dict[str, object] = {}
    length = 0
    for cf in model_fields:
        if cf.kind == "int":
            raw[cf.name] = int(getattr(f, cf.name))
            if cf.role == "length":
                length = int(raw[cf.name])
    for cf in model_fields:
        if cf.kind == "bytes":
            raw[cf.name] = bytes(getattr(f, cf.name)[:length])
    return raw

class HostReceiver:
    """A loaded receiver library for one spec."""

    def __init__(self, spec: FrameSpec, lib_path: Path) -> None:
        emitted = emit_header(spec, side="rx")
        self.spec = spec
        self.model = emitted.model
        self.tick_us = emitted.model.timing.tick_us
        self.lib = ctypes.CDLL(str(lib_path))
        members = []
        for f in self.model.fields:
            if f.kind == "bytes":
                members.append((f.name, ctypes.c_uint8 * f.max_len_bytes))
            else:
                members.append((f.name, _CTYPES[f.c_type]))
        self.fields_t = type("Fields", (ctypes.Structure,), {"_fields_": members})
        p = self.model.prefix
        self._init = getattr(self.lib, f"{p}_rx_init")
        self._feed = getattr(self.lib, f"{p}_rx_feed")
        self._feed.restype = ctypes.c_size_t
        self._edge = getattr(self.lib, f"{p}_rx_edge")
        self._edge.argtypes = (ctypes.c_uint8, ctypes.c_uint16)
        self._idle = getattr(self.lib, f"{p}_rx_idle")
        self._ready = getattr(self.lib, f"{p}_rx_ready")
        self._ready.restype = ctypes.c_bool
        self._take = getattr(self.lib, f"{p}_rx_take")
        self._take.restype = ctypes.c_bool
        self._invariants = getattr(self.lib, f"{p}_rx_invariants")
        self._invariants.restype = ctypes.c_uint8
        self._counters = getattr(self.lib, f"{p}_rx_counters")
        self._poll = getattr(self.lib, f"{p}_rx_poll")
        from ..decode.head import head_model
        self.body_chip = head_model(spec).body_chip

    def decode(self, train: PulseTrain, *, idle: bool = True) -> list[CFrame]:
        """Return the frames the C receiver finds in ``train`` (check failures included)."""
        lv = np.ascontiguousarray(train.levels, np.uint8)
        edges = np.concatenate(([0.0], np.cumsum(train.durations_us)))
        t = np.rint(edges / self.tick_us).astype(np.int64)
        ticks = np.ascontiguousarray(np.clip(np.diff(t), 0, 0xFFFFFFFF), np.uint32)
        n = lv.size
        cap = max(16, n // 8)
        out = (self.fields_t * cap)()
        q = (_Quality * cap)()
        ok = (ctypes.c_uint8 * cap)()
        self._init()
        got = self._feed(lv.ctypes.data_as(ctypes.c_void_p), ticks.ctypes.data_as(ctypes.c_void_p),
                         ctypes.c_size_t(n), ctypes.c_uint8(int(idle)), out, q, ok,
                         ctypes.c_size_t(cap))
        return [self._frame(out[i], q[i], bool(ok[i])) for i in range(got)]

    # edge by edge, as firmware calls it (fuzzing and queue tests)
    def init(self) -> None:
        """``<p>_rx_init()``."""
        self._init()

    def edge(self, level: int, ticks: int) -> None:
        """``<p>_rx_edge(level, ticks)`` (ticks 0..65535)."""
        self._edge(level, ticks)

    def idle(self) -> None:
        """``<p>_rx_idle()``."""
        self._idle()

    def poll(self) -> None:
        """``<p>_rx_poll()``: decode the edges queued by ``edge`` / ``idle``."""
        self._poll()

    def ready(self) -> bool:
        """``<p>_rx_ready()``."""
        return bool(self._ready())

    def take(self) -> CFrame | None:
        """``<p>_rx_take(&fields, &quality)``: the next frame whose check passes (after
        the recovery), None when the queue holds none."""
        f = self.fields_t()
        q = _Quality()
        if not self._take(ctypes.byref(f), ctypes.byref(q)):
            return None
        return self._frame(f, q, True)

    def invariants(self) -> int:
        """``<p>_rx_invariants()``: 0 when the state is within its bounds, else the number
        of the first broken one (see the template)."""
        return int(self._invariants())

    def counters(self) -> dict[str, int]:
        """``<p>_rx_counters()``: frames seen, check failures, overruns, frames cut, edges
        lost to a full edge FIFO, queued edges dropped while hunting after such a loss."""
        c = _Counters()
        self._counters(ctypes.byref(c))
        return {name: int(getattr(c, name)) for name, _ in _Counters._fields_}

    def _frame(self, f: ctypes.Structure, q: _Quality, ok: bool) -> CFrame:
        raw = raw_fields(self.model.fields, f)
        bits = field_bits(self.spec, raw)
        payload = np.packbits(bits).tobytes().hex() if bits.size else ""
        unit_us = self.spec.unit_us * (1 + q.clock_error_permille / 1000)
        start_us = q.sync_time * self.tick_us - self.body_chip * unit_us
        return CFrame(raw=raw, payload_hex=payload, crc_ok=ok, start_us=start_us,
                      sync_errors=q.sync_errors, code_errors=q.code_errors,
                      worst_deviation=q.worst_dev_permille / 1000,
                      clock_error=q.clock_error_permille / 1000, corrected=q.corrected)


#: compiler flags of the sanitized build (``sanitize=True``): AddressSanitizer and
#: UndefinedBehaviorSanitizer, first report aborts
SANITIZE_FLAGS = ("-O1", "-g", "-fno-omit-frame-pointer", "-fsanitize=address,undefined",
                  "-fno-sanitize-recover=all")


def build_host_receiver(spec: FrameSpec, *, sanitize: bool = False,
                        defines: tuple[tuple[str, str], ...] = ()) -> Path:
    """Return the path of the host receiver library of ``spec`` (built once, cached).

    ``sanitize``: built with ASan + UBSan (``SANITIZE_FLAGS``); a process loading it needs
    the ASan runtime first (``LD_PRELOAD`` of ``cc -print-file-name=libasan.so``).
    ``defines``: (name after the prefix, value) pairs set before the header, e.g.
    ``(("RX_RECOVERY", "0"),)`` for ``<PREFIX>_RX_RECOVERY 0``."""
    emitted = emit_header(spec, side="rx")
    cc = find_cc()
    opt = SANITIZE_FLAGS if sanitize else ("-O2",)
    P = emitted.model.PREFIX
    extra = {f"{P}_{k}": v for k, v in defines}
    key = hashlib.sha256((emitted.text + cc + " ".join(opt) + repr(sorted(extra.items()))
                          ).encode()).hexdigest()[:16]
    d = cache_dir() / "rx"
    lib = d / f"{emitted.model.prefix}-{'san-' if sanitize else ''}{key}.so"
    if lib.is_file():
        return lib
    d.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory(dir=d) as tmp:
        (Path(tmp) / emitted.filename).write_text(emitted.text)
        src = Path(tmp) / "rx.c"
        src.write_text(f'#include "{emitted.filename}"\n')
        out = Path(tmp) / lib.name
        compile_c(cc, [src], out, flags=(*STRICT_FLAGS, *opt, "-fPIC", "-shared"),
                  include_dirs=[tmp], defines={f"{P}_IMPLEMENTATION": None,
                                               f"{P}_RX_HOST_FEED": None, **extra})
        os.replace(out, lib)
    return lib


@lru_cache(maxsize=16)
def host_receiver(spec: FrameSpec, defines: tuple[tuple[str, str], ...] = ()) -> HostReceiver:
    """Return the loaded host receiver of ``spec`` (built and cached on first use);
    ``defines`` as for :func:`build_host_receiver`."""
    spec = as_plan(spec).spec
    return HostReceiver(spec, build_host_receiver(spec, defines=defines))


def decode_c(spec: FrameSpec, train: PulseTrain) -> list[CFrame]:
    """Return the C receiver's frames of ``train`` (check failures included)."""
    return host_receiver(spec).decode(train)

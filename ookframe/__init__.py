"""ookframe: design, encode, decode, stress and emit C for frames on cheap OOK radio links.

Pipeline: spec -> bits -> symbols (chips) -> pulse train -> (channel) -> decoder -> frames.
This module is the public API; everything else may change between versions.
"""

from __future__ import annotations

__version__ = "0.1.0"

from .captures import read_capture, write_capture
from .channel import PRESETS, ChannelSpec, apply_channel, get_preset
from .checks import CATALOGUE, Crc, make_check
from .codegen import TimerTarget, emit_header
from .decode import DecodedFrame
from .decode import decode as decode_frames  # the name 'decode' is the subpackage
from .errors import CaptureError, CodegenError, OokframeError, SpecError, ValueRangeError
from .frame import (
    ParsedFrame,
    encode,
    encode_many,
    frame_bits,
    frame_chips,
    parse_frame,
    random_values,
    values_equal,
)
from .layout import Layout, frame_layout
from .linecodes import LINE_CODES, get_line_code
from .plan import FramePlan, compile_plan
from .pulses import PulseTrain
from .spec.model import (
    CheckSpec,
    CrcParams,
    DecoderSpec,
    FieldSpec,
    FrameSpec,
    LineCodeSpec,
    PreambleSpec,
    SyncSpec,
    WhiteningSpec,
)
from .spec_io import load_spec, load_spec_and_defaults, spec_from_dict
from .stress import NoiseResult, StressResult, run_noise, run_stress
from .whitening import lfsr_bits, whiten

__all__ = [
    "DecodedFrame",
    "TimerTarget",
    "StressResult",
    "NoiseResult",
    "PRESETS",
    "ChannelSpec",
    "__version__",
    "CATALOGUE",
    "CaptureError",
    "Crc",
    "CheckSpec",
    "CodegenError",
    "CrcParams",
    "DecoderSpec",
    "FieldSpec",
    "FramePlan",
    "FrameSpec",
    "Layout",
    "LINE_CODES",
    "LineCodeSpec",
    "OokframeError",
    "ParsedFrame",
    "PreambleSpec",
    "PulseTrain",
    "SpecError",
    "SyncSpec",
    "ValueRangeError",
    "WhiteningSpec",
    "compile_plan",
    "encode",
    "encode_many",
    "frame_bits",
    "frame_chips",
    "frame_layout",
    "get_line_code",
    "lfsr_bits",
    "load_spec",
    "make_check",
    "load_spec_and_defaults",
    "parse_frame",
    "random_values",
    "spec_from_dict",
    "apply_channel",
    "get_preset",
    "run_noise",
    "run_stress",
    "read_capture",
    "write_capture",
    "emit_header",
    "decode_frames",
    "values_equal",
    "whiten",
]

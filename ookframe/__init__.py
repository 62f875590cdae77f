"""ookframe: design, encode, decode, stress and emit C for frames on cheap OOK radio links.

Pipeline: spec -> bits -> symbols (chips) -> pulse train -> (channel) -> decoder -> frames.
This module is the public API; everything else may change between versions.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

__version__ = "0.1.0"

#: public name -> (module, attribute); imported on first use so that `ookframe --version`
#: and `import ookframe` stay fast (scipy, jinja2 and the decoder load only when needed)
_LAZY: dict[str, tuple[str, str]] = {
    "read_capture": (".captures", "read_capture"),
    "write_capture": (".captures", "write_capture"),
    "SampledInfo": (".captures.sampled", "SampledInfo"),
    "iter_samples": (".captures.sampled", "iter_samples"),
    "read_samples": (".captures.sampled", "read_samples"),
    "sampled_info": (".captures.sampled", "sampled_info"),
    "write_samples": (".captures.sampled", "write_samples"),
    "FrontEndConfig": (".frontend", "FrontEndConfig"),
    "SampleSlicer": (".frontend", "SampleSlicer"),
    "SliceReport": (".frontend", "SliceReport"),
    "iter_sliced": (".frontend", "iter_sliced"),
    "slice_capture": (".frontend", "slice_capture"),
    "slice_samples": (".frontend", "slice_samples"),
    "SliceTrace": (".frontend", "SliceTrace"),
    "trace_capture": (".frontend", "trace_capture"),
    "PRESETS": (".channel", "PRESETS"),
    "ChannelSpec": (".channel", "ChannelSpec"),
    "apply_channel": (".channel", "apply_channel"),
    "get_preset": (".channel", "get_preset"),
    "LinkFile": (".channel", "LinkFile"),
    "load_link": (".channel", "load_link"),
    "Carrier": (".channel.physical", "Carrier"),
    "PathModel": (".channel.physical", "PathModel"),
    "PhysicalChannel": (".channel.physical", "PhysicalChannel"),
    "Receiver": (".channel.physical", "Receiver"),
    "Transmitter": (".channel.physical", "Transmitter"),
    "apply_physical": (".channel.physical", "apply_physical"),
    "get_receiver": (".channel.physical", "get_receiver"),
    "receive_carriers": (".channel.physical", "receive_carriers"),
    "render_baseband": (".channel.physical", "render_baseband"),
    "render_carriers": (".channel.physical", "render_carriers"),
    "write_iq": (".channel.physical", "write_iq"),
    "write_wav": (".channel.physical", "write_wav"),
    "CATALOGUE": (".checks", "CATALOGUE"),
    "Crc": (".checks", "Crc"),
    "make_check": (".checks", "make_check"),
    "TimerTarget": (".codegen", "TimerTarget"),
    "emit_header": (".codegen", "emit_header"),
    "DecodedFrame": (".decode", "DecodedFrame"),
    "decode_frames": (".decode", "decode"),
    "CaptureError": (".errors", "CaptureError"),
    "ChannelFileError": (".errors", "ChannelFileError"),
    "CodegenError": (".errors", "CodegenError"),
    "OokframeError": (".errors", "OokframeError"),
    "SpecError": (".errors", "SpecError"),
    "ValueRangeError": (".errors", "ValueRangeError"),
    "ParsedFrame": (".frame", "ParsedFrame"),
    "encode": (".frame", "encode"),
    "encode_many": (".frame", "encode_many"),
    "frame_bits": (".frame", "frame_bits"),
    "frame_chips": (".frame", "frame_chips"),
    "parse_frame": (".frame", "parse_frame"),
    "random_values": (".frame", "random_values"),
    "values_equal": (".frame", "values_equal"),
    "Layout": (".layout", "Layout"),
    "frame_layout": (".layout", "frame_layout"),
    "LINE_CODES": (".linecodes", "LINE_CODES"),
    "get_line_code": (".linecodes", "get_line_code"),
    "PulseTrain": (".pulses", "PulseTrain"),
    "load_spec": (".spec_io", "load_spec"),
    "load_spec_and_defaults": (".spec_io", "load_spec_and_defaults"),
    "spec_from_dict": (".spec_io", "spec_from_dict"),
    "FramePlan": (".plan", "FramePlan"),
    "compile_plan": (".plan", "compile_plan"),
    "CheckSpec": (".spec.model", "CheckSpec"),
    "CrcParams": (".spec.model", "CrcParams"),
    "DecoderSpec": (".spec.model", "DecoderSpec"),
    "FieldSpec": (".spec.model", "FieldSpec"),
    "FrameSpec": (".spec.model", "FrameSpec"),
    "LineCodeSpec": (".spec.model", "LineCodeSpec"),
    "PreambleSpec": (".spec.model", "PreambleSpec"),
    "SyncSpec": (".spec.model", "SyncSpec"),
    "WhiteningSpec": (".spec.model", "WhiteningSpec"),
    "NoiseResult": (".stress", "NoiseResult"),
    "StressResult": (".stress", "StressResult"),
    "NetworkConfig": (".stress.network", "NetworkConfig"),
    "NetworkResult": (".stress.network", "NetworkResult"),
    "run_network": (".stress.network", "run_network"),
    "run_noise": (".stress", "run_noise"),
    "run_stress": (".stress", "run_stress"),
    "RangeEstimate": (".stress.link_range", "RangeEstimate"),
    "estimate_range": (".stress.link_range", "estimate_range"),
    "lfsr_bits": (".whitening", "lfsr_bits"),
    "whiten": (".whitening", "whiten"),
}

__all__ = ["__version__", *_LAZY]


def __getattr__(name: str) -> Any:
    """Import a public name on first use (PEP 562) and cache it in the module."""
    if name not in _LAZY:  # a subpackage, e.g. ookframe.stress (as when all were eager)
        from importlib.util import find_spec

        if name.startswith("_") or find_spec(f"{__name__}.{name}") is None:
            raise AttributeError(f"module 'ookframe' has no attribute {name!r}")
        return import_module(f".{name}", __name__)
    module, attr = _LAZY[name]
    value = getattr(import_module(module, __name__), attr)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_LAZY))

"""Reference decoder: pulse train -> frames.

Stages, one module each: ``validate`` (input check) -> ``glitch`` (short pulses merged)
-> ``segment`` (pulses too long for a frame end a burst) -> ``detect`` (head signature,
unit estimate from the preamble) -> ``classify`` (drift tracking, whole units) -> line
code -> ``sync`` (sync word with bit errors) -> ``framer`` (unstuff, fields, check).
"""

from __future__ import annotations

from .framer import (
    DecodedFrame,
    DecodeReport,
    Receiver,
    compile_decoder,
    decode,
    decode_stream,
    diagnose,
)
from .head import HeadModel
from .validate import validate_train

__all__ = ["DecodeReport", "DecodedFrame", "HeadModel", "Receiver", "compile_decoder",
           "decode", "decode_stream", "diagnose", "validate_train"]

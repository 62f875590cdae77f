"""The receive front end: sampled captures -> envelope -> smoothing -> decimation ->
adaptive data slicer with hysteresis -> ``PulseTrain``, streamed block by block.

``FrontEndConfig`` holds the settings, ``SampleSlicer`` streams samples into pulses,
``SliceReport`` lists every level and threshold chosen; ``slice_capture`` and
``iter_sliced`` read sampled capture files (``ookframe.captures.sampled``);
``trace_capture`` keeps the per-sample view of a time window for plots.
"""

from __future__ import annotations

from .capture import iter_sliced, open_slicer, slice_capture
from .config import ENVELOPES, FrontEndConfig, config_for_unit
from .envelope import Smoothing, design_smoothing
from .slicer import SampleSlicer, SliceReport, slice_samples
from .trace import MAX_TRACE_SAMPLES, SliceTrace, trace_capture

__all__ = ["ENVELOPES", "MAX_TRACE_SAMPLES", "FrontEndConfig", "SampleSlicer", "SliceReport",
           "SliceTrace", "Smoothing", "config_for_unit", "design_smoothing", "iter_sliced",
           "open_slicer", "slice_capture", "slice_samples", "trace_capture"]

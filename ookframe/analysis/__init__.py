"""Design analysis: CRC strength, sync-word quality, line-code bounds, spectrum, airtime.

Each module is a pure engine over the frame spec (or plain numbers); the CLI commands and
the ``check`` design report format their results. Check strength (Hamming distance of a
CRC or checksum at a length) lives with the checks (``ookframe.checks.crc_strength``,
``ookframe.checks.strength``), since the decoder uses it too; it is re-exported here.
"""

from ..checks.crc_strength import (
    CrcStrength,
    HdReach,
    hd_reach,
    koopman_to_normal,
    normal_to_koopman,
)
from ..checks.strength import CheckStrength, alternatives, covered_bits
from .linecode_stats import LineCodeStats, chip_stats, frame_stats
from .report import design_report
from .syncword import SyncQuality, search_sync_words, spec_sync_quality, sync_quality

__all__ = [
    "CheckStrength",
    "CrcStrength",
    "HdReach",
    "LineCodeStats",
    "SyncQuality",
    "alternatives",
    "chip_stats",
    "covered_bits",
    "design_report",
    "frame_stats",
    "hd_reach",
    "koopman_to_normal",
    "normal_to_koopman",
    "search_sync_words",
    "spec_sync_quality",
    "sync_quality",
]

"""Design report of a frame spec: every figure ``ookframe check`` shows beyond the layout.

``design_report(spec)`` returns a JSON-ready dict (keys below); each figure comes from
one engine of this package:

* ``airtime_us``: one transmission (repeats and gaps included) for the longest frame over
  all payloads (:mod:`.linecode_stats`; a bound when check bits or a length field exist);
* ``line_code``: efficiency, exact worst-case run length, mark fraction and transition
  density over all payloads (:mod:`.linecode_stats`);
* ``sync``: sidelobes, distance to preamble-straddling windows, false syncs per hour on
  noise at the spec's bit rate (:mod:`.syncword`);
* ``check``: kind, covered data bits, HD and P(undetected frame) at ``ber``, the
  catalogue alternatives of the same width and a stronger one when it exists
  (:mod:`ookframe.checks.strength`);
* ``bandwidth_hz``: one-sided 99 % power bandwidth of the keyed baseband, mean removed
  (:mod:`.spectrum`); the RF signal occupies about twice that;
* ``cautions``: the regulatory caution first, then design advice;
* ``warnings``: design defects that make frames fail to decode (a sync word within the
  allowed errors of a preamble window cannot be located); ``check --strict`` rejects a
  spec that has any.
"""

from __future__ import annotations

from ..cautions import REGULATORY_CAUTION
from ..checks.strength import (
    DEFAULT_BER,
    alternatives,
    check_strength,
    covered_bits,
    stronger_alternative,
)
from ..spec.model import FrameSpec
from .linecode_stats import frame_stats
from .syncword import spec_sync_quality

#: runs longer than this many units strain a cheap receiver's data slicer and AGC
#: (common practice, no source)
LONG_RUN_UNITS = 8
#: false syncs per hour on noise above which a warning is given (a choice of ours)
FALSE_SYNC_WARN_PER_HOUR = 1.0
#: alternatives listed in the report
N_ALTERNATIVES = 5


def design_report(spec: FrameSpec, *, ber: float = DEFAULT_BER,
                  with_bandwidth: bool = True) -> dict[str, object]:
    """Return the design report of ``spec`` as a JSON-ready dict (see the module docstring).

    ``ber`` is the bit-error rate for ``check.undetected_per_frame_at_ber``;
    ``with_bandwidth`` False skips the PSD estimate (``bandwidth_hz`` None).
    """
    cautions = [REGULATORY_CAUTION]
    stats = frame_stats(spec)
    airtime_us = stats.max_frame_chips * spec.unit_us * spec.repeats + \
        spec.gap_us * (spec.repeats - 1)
    if stats.bounded:
        cautions.append("line-code figures and airtime are bounds over all payloads: "
                        + "; ".join(stats.bounded) + ".")
    if stats.max_run_units > LONG_RUN_UNITS:
        cautions.append(f"longest run of one level is {stats.max_run_units} units (> "
                        f"{LONG_RUN_UNITS}): a cheap receiver's slicer may drift; consider a "
                        "DC-balanced code or bit stuffing.")

    sync = spec_sync_quality(spec)
    sync_d = {"word": sync.hex, "n_bits": sync.n_bits, "max_errors": sync.max_errors,
              "max_sidelobe": sync.max_sidelobe,
              "min_distance_to_preamble": sync.min_distance_to_preamble,
              "margin_bits": sync.margin_bits,
              "false_syncs_per_hour_on_noise": sync.false_syncs_per_hour}
    warnings: list[str] = []
    if sync.margin_bits is not None and sync.margin_bits < 0:
        how = ("equals a window" if sync.min_distance_to_preamble == 0 else
               f"is {sync.min_distance_to_preamble} bit(s) from a window")
        warnings.append(f"sync word {sync.hex} {how} of the preamble, within the "
                        f"{sync.max_errors} bit error(s) allowed: the decoder cannot locate "
                        "it (it locks early); pick another word (ookframe syncword).")
    if (sync.false_syncs_per_hour or 0.0) > FALSE_SYNC_WARN_PER_HOUR:
        cautions.append(f"about {sync.false_syncs_per_hour:.3g} false sync detections per hour "
                        "on noise: the check must reject them; a longer sync word or fewer "
                        "allowed errors lowers this.")

    n_cov = covered_bits(spec)
    chosen = check_strength(spec.check, n_cov, ber)
    check_d: dict[str, object] = {
        "kind": chosen.kind, "name": chosen.name, "width_bits": chosen.width_bits,
        "data_bits": n_cov, "hd": chosen.hd, "hd_exact": chosen.hd_exact,
        "undetected_per_frame_at_ber": chosen.undetected_per_frame_at_ber, "ber": ber,
        "alternatives": [], "suggestion": None}
    if chosen.width_bits:
        alts = alternatives(chosen.width_bits, n_cov, ber)
        check_d["alternatives"] = [
            {"name": a.name, "kind": a.kind, "hd": a.hd, "hd_exact": a.hd_exact,
             "undetected_per_frame_at_ber": a.undetected_per_frame_at_ber}
            for a in alts[:N_ALTERNATIVES]]
        better = stronger_alternative(chosen, alts)
        if better is not None:
            hd = f"{better.hd}" if better.hd_exact else f">= {better.hd}"
            odds = (f", P(undetected) {better.undetected_per_frame_at_ber:.2g} vs "
                    f"{chosen.undetected_per_frame_at_ber:.2g} at BER {ber:g}" if ber > 0 else "")
            check_d["suggestion"] = (
                f"{better.name} (same width) has HD {hd} at {n_cov} covered bits vs "
                f"{chosen.hd} for {chosen.name}{odds}")
            cautions.append("stronger check available: " + str(check_d["suggestion"]))
    else:
        cautions.append("the frame has no check: every bit error goes undetected.")
    if chosen.hd <= 2 and chosen.width_bits:
        cautions.append(f"{chosen.name} detects only {chosen.hd - 1} bit error(s) for sure at "
                        f"{n_cov} covered bits (HD {chosen.hd}).")

    bandwidth = None
    if with_bandwidth:
        from .spectrum import bandwidth_hz

        bandwidth = bandwidth_hz(spec)
        cautions.append("bandwidth is for ideal rectangular keying (one-sided baseband, mean "
                        "removed); the RF signal occupies about twice it; measure the "
                        "transmitter.")
    return {
        "airtime_us": airtime_us,
        "line_code": {"name": stats.line_code, "efficiency": stats.efficiency,
                      "max_run_units": stats.max_run_units,
                      "mark_fraction": list(stats.mark_fraction),
                      "min_transitions_per_bit": stats.min_transitions_per_bit,
                      "exact": stats.exact, "bounded": list(stats.bounded)},
        "sync": sync_d,
        "check": check_d,
        "bandwidth_hz": bandwidth,
        "cautions": cautions,
        "warnings": warnings,
    }

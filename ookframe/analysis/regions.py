"""Region rule sets for low-power OOK links: each returns findings (rule, clause, limit, value).

The rules are transcribed from memory; verify every one against the current edition of the
regulation (they differ by region and change over time). Each rule set is one function in
``REGIONS`` (name -> RuleSet); adding a region is adding a function and one registry line.

A rule set lists *options*: alternative ways to comply (e.g. 10 mW at <= 10 % duty cycle, or
1 mW without a duty-cycle limit). The set is met when every finding of one option is ok.
A finding whose input is missing (e.g. no power given) has ``ok = None``: not assessed.
A value equal to its limit passes (compared with a relative tolerance of 1e-9 for float
rounding).

Inputs are per transmission: ``airtime_us`` is one whole transmission (all repeats and the
gaps between them, the conservative reading of "transmitter on"), ``interval_s`` the time
between the starts of consecutive transmissions, ``power_mw`` the e.r.p. in mW,
``rf_bandwidth_hz`` the occupied RF bandwidth and ``carrier_hz`` the carrier frequency.

Field strength from e.r.p. (47 CFR 15.231 states its limits as field strength at 3 m):
free-space far field, E [V/m] = sqrt(30 x EIRP [W]) / d [m] with EIRP = 1.64 x e.r.p.
(the gain of a half-wave dipole, 2.15 dBi) and d = 3 m, i.e. E = sqrt(49.2 x ERP) / 3
(common practice, no source; the relation FCC KDB 412172 uses, from memory).
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal

from ..errors import ValueRangeError

HOUR_S = 3600.0
_REL_TOL = 1e-9
FROM_MEMORY = "from memory; verify against the current edition"
Activation = Literal["automatic", "manual"]


@dataclass(frozen=True)
class Finding:
    """One rule checked: ``value`` against ``limit`` (both in ``unit``; None if not assessed)."""

    rule: str
    clause: str
    limit: float | None
    value: float | None
    ok: bool | None
    note: str = ""
    unit: str = ""
    relation: Literal["<=", ">=", "in"] = "<="
    option: str = ""
    #: upper end of the allowed range when ``relation`` is "in" (``limit`` is the lower end)
    limit_high: float | None = None
    #: a condition of use the rule set cannot check (e.g. what the transmissions are for)
    condition: str = ""


@dataclass(frozen=True)
class Usage:
    """What a rule set needs to know about one node's transmissions (validated by ``usage``)."""

    airtime_us: float
    interval_s: float
    power_mw: float | None = None
    rf_bandwidth_hz: float | None = None
    activation: Activation = "automatic"
    carrier_hz: float | None = None

    @property
    def airtime_s(self) -> float:
        return self.airtime_us * 1e-6

    @property
    def on_time_per_hour_s(self) -> float:
        """Transmitter-on time in the worst 1 h window, s (periodic transmissions)."""
        return worst_hour_on_time_s(self.airtime_s, self.interval_s)

    @property
    def duty_cycle_pct(self) -> float:
        """Duty cycle of the worst 1 h window, %."""
        return 100.0 * self.on_time_per_hour_s / HOUR_S


@dataclass(frozen=True)
class RuleSet:
    """A region's rules: ``name`` (CLI key), title, source citation and the check function."""

    name: str
    title: str
    source: str
    check: Callable[[Usage], list[Finding]]


def worst_hour_on_time_s(airtime_s: float, interval_s: float, window_s: float = HOUR_S) -> float:
    """Return the most on-time in s that any ``window_s`` window holds, one transmission of
    ``airtime_s`` starting every ``interval_s``.

    With q = floor(W / I) whole periods and r = W - q I left over, the worst window holds
    q A + min(A, r): exactly W / I * A when the interval divides the window.
    """
    q = int(window_s // interval_s)
    r = window_s - q * interval_s
    return q * airtime_s + min(airtime_s, r)


def _finding(rule: str, clause: str, limit: float | None, value: float | None, *, unit: str,
             relation: Literal["<=", ">="] = "<=", option: str = "", note: str = "",
             condition: str = "") -> Finding:
    if value is None or limit is None:
        ok = None
    elif relation == "<=":
        ok = value <= limit * (1.0 + _REL_TOL)
    else:
        ok = value >= limit * (1.0 - _REL_TOL)
    return Finding(rule, clause, limit, value, ok, note, unit, relation, option,
                   condition=condition)


def _band_finding(clause: str, low_hz: float, high_hz: float, u: Usage, option: str
                  ) -> Finding:
    """Finding "carrier frequency" inside [low_hz, high_hz] (not assessed without a carrier)."""
    f = u.carrier_hz
    ok = None if f is None else low_hz <= f <= high_hz
    note = "" if f is not None else _NO_CARRIER
    return Finding("carrier frequency", clause, low_hz, f, ok, note, "Hz", "in", option,
                   limit_high=high_hz)


def field_strength_uv_m(erp_mw: float, distance_m: float = 3.0) -> float:
    """Return the free-space field strength in µV/m at ``distance_m`` of a transmitter of
    ``erp_mw`` e.r.p.: E = sqrt(30 x 1.64 x ERP [W]) / d (module docstring)."""
    return math.sqrt(30.0 * ERP_TO_EIRP * erp_mw * 1e-3) / distance_m * 1e6


# --- CEPT ERC Recommendation 70-03, Annex 1 (non-specific short range devices) ------------

_CEPT_BAND = "ERC/REC 70-03 Annex 1, band 433.05-434.79 MHz"
_CEPT_SUB = "ERC/REC 70-03 Annex 1, band 434.04-434.79 MHz"
_OPT_10MW = "433.05-434.79 MHz: 10 mW e.r.p., duty cycle <= 10 %"
_OPT_1MW = "433.05-434.79 MHz: 1 mW e.r.p., no duty-cycle limit"
_OPT_SUB = "434.04-434.79 MHz: 10 mW e.r.p., duty cycle <= 100 %, channel <= 25 kHz"
_NO_POWER = "e.r.p. not given (--power-mw): not assessed"
_NO_CARRIER = "carrier frequency not given (--carrier-mhz): not assessed"
_NO_BANDWIDTH = "bandwidth not given: not assessed"
#: e.i.r.p. / e.r.p.: gain of a half-wave dipole over an isotropic radiator (2.15 dB)
ERP_TO_EIRP = 1.64
#: ERC/REC 70-03 Annex 1, 1 mW row: power-density limit above this modulation bandwidth
CEPT_WIDE_BANDWIDTH_HZ = 250_000.0
#: ... and the limit, dBm per 10 kHz
CEPT_WIDE_DENSITY_DBM_PER_10KHZ = -13.0


def _cept_433(u: Usage) -> list[Finding]:
    """CEPT 433 MHz non-specific SRD limits (from memory; verify against the current edition).

    The rule set is for the band 433.05-434.79 MHz: its carrier is checked when given; the
    sub-band option needs the carrier in 434.04-434.79 MHz (not assessed without one).
    """
    p = u.power_mw
    bw = u.rf_bandwidth_hz
    bw_note = ("estimate: 2 x the 99 % baseband bandwidth of ideal rectangular keying (real "
               "edges are slower, the spectrum narrower; measure the transmitter)"
               if bw is not None else _NO_BANDWIDTH)
    band = ([_band_finding(_CEPT_BAND, 433.05e6, 434.79e6, u, o) for o in (_OPT_10MW, _OPT_1MW)]
            if u.carrier_hz is not None else [])
    out = [
        _finding("e.r.p.", _CEPT_BAND, 10.0, p, unit="mW", option=_OPT_10MW,
                 note="" if p is not None else _NO_POWER),
        _finding("duty cycle (worst 1 h)", _CEPT_BAND, 10.0, u.duty_cycle_pct, unit="%",
                 option=_OPT_10MW, note="transmitter-on time in one hour, relative to one hour"),
        *band[:1],
        _finding("e.r.p.", _CEPT_BAND, 1.0, p, unit="mW", option=_OPT_1MW,
                 note=("no duty-cycle limit at 1 mW; with a modulation bandwidth above 250 kHz "
                       "also <= -13 dBm per 10 kHz (the 250 kHz threshold from memory)")
                 if p is not None
                 else _NO_POWER),
        *band[1:2],
    ]
    if bw is None or bw > CEPT_WIDE_BANDWIDTH_HZ:
        out.append(Finding(
            "power density (bandwidth > 250 kHz)", _CEPT_BAND, CEPT_WIDE_DENSITY_DBM_PER_10KHZ,
            None, None, unit="dBm/10 kHz", option=_OPT_1MW,
            note=("1 mW e.r.p. and <= -13 dBm per 10 kHz when the modulation bandwidth exceeds "
                  "250 kHz (from memory; older editions read \"1 mW or -13 dBm/10 kHz\"): needs "
                  "the measured spectrum, not assessed" if bw is not None else
                  "the 1 mW row adds <= -13 dBm per 10 kHz above 250 kHz modulation bandwidth; "
                  + _NO_BANDWIDTH)))
    return [
        *out,
        _finding("e.r.p.", _CEPT_SUB, 10.0, p, unit="mW", option=_OPT_SUB,
                 note="" if p is not None else _NO_POWER),
        _finding("channel bandwidth", _CEPT_SUB, 25_000.0, bw, unit="Hz",
                 option=_OPT_SUB, note=bw_note),
        _band_finding(_CEPT_SUB, 434.04e6, 434.79e6, u, _OPT_SUB),
    ]


# --- US 47 CFR 15.231 (periodic operation above 70 MHz) ----------------------------------

_OPT_A = ("15.231(a): control signal; periodic transmissions only to poll or supervise a "
          "security or safety transmitter, <= 2 s per hour")
_OPT_E = "15.231(e): any use, lower field strength; <= 1 s per transmission, long silent period"
_SECURITY_ONLY = ("regular periodic transmissions are allowed under 15.231(a)(3) only as "
                  "polling or supervision of a security or safety transmitter; any other "
                  "periodic use (e.g. sensor reports) needs 15.231(e)")

#: fundamental field-strength limits at 3 m, µV/m, of 15.231(b) and of 15.231(e) (from
#: memory): (low MHz, high MHz, limit at low, limit at high); between different end values
#: the limit is interpolated linearly in frequency (e.g. 260-470 MHz, 15.231(b):
#: 41.6667 F - 7083.333 µV/m), above 470 MHz it stays at the last value
FCC_15_231_FIELD_TABLES: dict[str, tuple[tuple[float, float, float, float], ...]] = {
    "b": ((40.66, 40.70, 2250.0, 2250.0), (70.0, 130.0, 1250.0, 1250.0),
          (130.0, 174.0, 1250.0, 3750.0), (174.0, 260.0, 3750.0, 3750.0),
          (260.0, 470.0, 3750.0, 12500.0), (470.0, math.inf, 12500.0, 12500.0)),
    "e": ((40.66, 40.70, 1000.0, 1000.0), (70.0, 130.0, 500.0, 500.0),
          (130.0, 174.0, 500.0, 1500.0), (174.0, 260.0, 1500.0, 1500.0),
          (260.0, 470.0, 1500.0, 5000.0), (470.0, math.inf, 5000.0, 5000.0)),
}


def fcc_15_231_field_limit_uv_m(carrier_hz: float, paragraph: Literal["b", "e"] = "b"
                                ) -> float | None:
    """Return the 47 CFR 15.231(b) or (e) field-strength limit of the fundamental at 3 m in
    µV/m for a carrier at ``carrier_hz`` (from memory), or None outside 40.66-40.70 MHz and
    70 MHz and up (where 15.231 does not apply)."""
    f_mhz = carrier_hz / 1e6
    for lo, hi, at_lo, at_hi in FCC_15_231_FIELD_TABLES[paragraph]:
        if lo <= f_mhz <= hi:
            if at_lo == at_hi:
                return at_lo
            return at_lo + (at_hi - at_lo) * (f_mhz - lo) / (hi - lo)
    return None


def fcc_15_231_bandwidth_limit_hz(carrier_hz: float) -> float | None:
    """Return the 47 CFR 15.231(c) emission bandwidth limit in Hz (from memory): 0.25 % of
    the centre frequency above 70 and below 900 MHz, 0.5 % above 900 MHz; None elsewhere."""
    if 70e6 < carrier_hz < 900e6:
        return 0.0025 * carrier_hz
    if carrier_hz > 900e6:
        return 0.005 * carrier_hz
    return None


def _fcc_carrier(u: Usage, option: str) -> Finding:
    f = u.carrier_hz
    if f is None:
        ok, note = None, _NO_CARRIER
    else:
        ok = 40.66e6 <= f <= 40.70e6 or f >= 70e6
        note = "" if ok else "15.231 covers 40.66-40.70 MHz and 70 MHz and up"
    return Finding("carrier frequency", "47 CFR 15.231(a)", 70e6, f, ok,
                   note or "restricted bands (15.205) are not checked", "Hz", ">=", option)


def _fcc_field(u: Usage, paragraph: Literal["b", "e"], option: str) -> Finding:
    """Field strength at 3 m against the 15.231(b) or (e) table. Without a carrier the
    value is still compared with the highest limit at any frequency: above it, it fails."""
    rule, clause = "field strength at 3 m", f"47 CFR 15.231({paragraph})"
    value = None if u.power_mw is None else field_strength_uv_m(u.power_mw)
    if value is None:
        return _finding(rule, clause, None, None, unit="µV/m", option=option, note=_NO_POWER)
    how = ("E = sqrt(30 x 1.64 x e.r.p.) / 3 m with the carrier on, against an "
           "average-detector limit: no credit for pulse averaging (15.35), so conservative")
    if u.carrier_hz is None:
        top = max(row[3] for row in FCC_15_231_FIELD_TABLES[paragraph])
        if value > top * (1.0 + _REL_TOL):
            return Finding(rule, clause, top, value, False,
                           f"above the highest 15.231({paragraph}) limit at any frequency "
                           f"(from memory); {how}", "µV/m", "<=", option)
        return _finding(rule, clause, None, value, unit="µV/m", option=option,
                        note=_NO_CARRIER)
    limit = fcc_15_231_field_limit_uv_m(u.carrier_hz, paragraph)
    if limit is None:
        return Finding(rule, clause, None, value, False,
                       "carrier outside the 15.231 bands", "µV/m", "<=", option)
    return _finding(rule, clause, limit, value, unit="µV/m", option=option,
                    note=f"limit from the 15.231({paragraph}) table (from memory); value: {how}")


def _fcc_bandwidth(u: Usage, option: str) -> Finding:
    bw = u.rf_bandwidth_hz
    limit = None if u.carrier_hz is None else fcc_15_231_bandwidth_limit_hz(u.carrier_hz)
    if bw is None:
        note = _NO_BANDWIDTH
    elif u.carrier_hz is None:
        note = _NO_CARRIER
    else:
        note = ("0.25 % of the centre frequency (0.5 % above 900 MHz), measured at the points "
                "20 dB down; value: 2 x the 99 % baseband bandwidth of ideal keying (an "
                "estimate; measure the transmitter)")
    return _finding("emission bandwidth", "47 CFR 15.231(c)", limit, bw, unit="Hz",
                    option=option, note=note)


def _fcc_15_231(u: Usage) -> list[Finding]:
    """47 CFR 15.231 rules (from memory; verify against the current edition)."""
    a = u.airtime_s
    if u.activation == "manual":
        first = _finding("deactivate after release", "47 CFR 15.231(a)(1)", 5.0, a, unit="s",
                         option=_OPT_A, note="manually operated: the transmitter stops within "
                         "5 s of the switch being released (value: one transmission)")
    else:
        first = _finding("cease after activation", "47 CFR 15.231(a)(2)", 5.0, a, unit="s",
                         option=_OPT_A, note="automatically activated: transmission ceases "
                         "within 5 s of activation")
    return [
        first,
        _finding("periodic transmissions, total per hour", "47 CFR 15.231(a)(3)", 2.0,
                 u.on_time_per_hour_s, unit="s", option=_OPT_A, condition=_SECURITY_ONLY,
                 note="transmissions at regular predetermined intervals are not permitted, "
                 "except polling/supervision of security or safety transmitters totalling "
                 "<= 2 s per hour per transmitter: this option holds only for such uses"),
        _fcc_field(u, "b", _OPT_A),
        _fcc_bandwidth(u, _OPT_A),
        _fcc_carrier(u, _OPT_A),
        _finding("duration of each transmission", "47 CFR 15.231(e)", 1.0, a, unit="s",
                 option=_OPT_E, note="under the lower field-strength limits of 15.231(e)"),
        _finding("silent period between transmissions", "47 CFR 15.231(e)",
                 max(30.0 * a, 10.0), u.interval_s - a, unit="s", relation=">=", option=_OPT_E,
                 note="at least 30 x the transmission duration and never less than 10 s"),
        _fcc_field(u, "e", _OPT_E),
        _fcc_bandwidth(u, _OPT_E),
        _fcc_carrier(u, _OPT_E),
    ]


REGIONS: dict[str, RuleSet] = {
    "cept-433": RuleSet("cept-433", "CEPT 433 MHz non-specific SRD",
                        f"CEPT ERC Recommendation 70-03, Annex 1 ({FROM_MEMORY})", _cept_433),
    "fcc-15.231": RuleSet("fcc-15.231", "US 47 CFR 15.231 periodic operation",
                          f"47 CFR 15.231 ({FROM_MEMORY})", _fcc_15_231),
}


def usage(airtime_us: float, interval_s: float, power_mw: float | None = None, *,
          rf_bandwidth_hz: float | None = None, activation: Activation = "automatic",
          carrier_hz: float | None = None) -> Usage:
    """Return a validated :class:`Usage` (airtime > 0, interval > airtime, power >= 0,
    carrier > 0)."""
    if not airtime_us > 0:
        raise ValueRangeError(f"airtime_us must be > 0, got {airtime_us}")
    if not (interval_s * 1e6 > airtime_us and math.isfinite(interval_s)):
        raise ValueRangeError(f"interval_s must be longer than one transmission "
                              f"({airtime_us * 1e-6:g} s), got {interval_s}")
    if power_mw is not None and not power_mw >= 0:
        raise ValueRangeError(f"power_mw must be >= 0, got {power_mw}")
    if rf_bandwidth_hz is not None and not rf_bandwidth_hz >= 0:
        raise ValueRangeError(f"rf_bandwidth_hz must be >= 0, got {rf_bandwidth_hz}")
    if activation not in ("automatic", "manual"):
        raise ValueRangeError(f"activation must be 'automatic' or 'manual', got {activation!r}")
    if carrier_hz is not None and not (carrier_hz > 0 and math.isfinite(carrier_hz)):
        raise ValueRangeError(f"carrier_hz must be > 0, got {carrier_hz}")
    return Usage(float(airtime_us), float(interval_s), power_mw, rf_bandwidth_hz, activation,
                 None if carrier_hz is None else float(carrier_hz))


def check_region(region: str, airtime_us: float, interval_s: float,
                 power_mw: float | None = None, *, rf_bandwidth_hz: float | None = None,
                 activation: Activation = "automatic",
                 carrier_hz: float | None = None) -> list[Finding]:
    """Return the findings of rule set ``region`` for one node transmitting every interval.

    ``power_mw``: e.r.p.; ``rf_bandwidth_hz``: occupied RF bandwidth (about 2 x the
    one-sided baseband 99 % bandwidth for OOK); ``carrier_hz``: carrier frequency. Rules
    needing a missing input are not assessed (``ok`` None). Raises ValueRangeError for an
    unknown region or bad inputs.
    """
    if region not in REGIONS:
        close = difflib.get_close_matches(region, list(REGIONS), n=1)
        hint = f" (did you mean '{close[0]}'?)" if close else ""
        raise ValueRangeError(f"unknown region '{region}'{hint}; allowed: {', '.join(REGIONS)}")
    return REGIONS[region].check(usage(airtime_us, interval_s, power_mw,
                                       rf_bandwidth_hz=rf_bandwidth_hz, activation=activation,
                                       carrier_hz=carrier_hz))


def verdict(findings: list[Finding]) -> bool | None:
    """Return True when every finding of some option is ok, False when every option has a
    failed finding, None otherwise (no option fails, but inputs are missing)."""
    options: dict[str, list[bool | None]] = {}
    for f in findings:
        options.setdefault(f.option, []).append(f.ok)
    if any(all(ok is True for ok in oks) for oks in options.values()):
        return True
    if all(any(ok is False for ok in oks) for oks in options.values()):
        return False
    return None


def met_options(findings: list[Finding]) -> list[tuple[str, tuple[str, ...]]]:
    """Return (option, conditions of use) for every option whose findings are all ok; the
    conditions are what the rules require but cannot check (e.g. security or safety use)."""
    options: dict[str, list[Finding]] = {}
    for f in findings:
        options.setdefault(f.option, []).append(f)
    return [(name, tuple(dict.fromkeys(f.condition for f in fs if f.condition)))
            for name, fs in options.items() if all(f.ok is True for f in fs)]

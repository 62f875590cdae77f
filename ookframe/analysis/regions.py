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
between the starts of consecutive transmissions, ``power_mw`` the e.r.p. in mW.
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
    relation: Literal["<=", ">="] = "<="
    option: str = ""


@dataclass(frozen=True)
class Usage:
    """What a rule set needs to know about one node's transmissions (validated by ``usage``)."""

    airtime_us: float
    interval_s: float
    power_mw: float | None = None
    rf_bandwidth_hz: float | None = None
    activation: Activation = "automatic"

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


def _finding(rule: str, clause: str, limit: float, value: float | None, *, unit: str,
             relation: Literal["<=", ">="] = "<=", option: str = "", note: str = "") -> Finding:
    if value is None:
        ok = None
    elif relation == "<=":
        ok = value <= limit * (1.0 + _REL_TOL)
    else:
        ok = value >= limit * (1.0 - _REL_TOL)
    return Finding(rule, clause, limit, value, ok, note, unit, relation, option)


# --- CEPT ERC Recommendation 70-03, Annex 1 (non-specific short range devices) ------------

_CEPT_BAND = "ERC/REC 70-03 Annex 1, band 433.05-434.79 MHz"
_CEPT_SUB = "ERC/REC 70-03 Annex 1, band 434.04-434.79 MHz"
_OPT_10MW = "433.05-434.79 MHz: 10 mW e.r.p., duty cycle <= 10 %"
_OPT_1MW = "433.05-434.79 MHz: 1 mW e.r.p., no duty-cycle limit"
_OPT_SUB = "434.04-434.79 MHz: 10 mW e.r.p., duty cycle <= 100 %, channel <= 25 kHz"
_NO_POWER = "e.r.p. not given (--power-mw): not assessed"


def _cept_433(u: Usage) -> list[Finding]:
    """CEPT 433 MHz non-specific SRD limits (from memory; verify against the current edition)."""
    p = u.power_mw
    bw_note = ("estimate: 2 x the 99 % baseband bandwidth of ideal rectangular keying (real "
               "edges are slower, the spectrum narrower; measure the transmitter)"
               if u.rf_bandwidth_hz is not None else "bandwidth not given: not assessed")
    return [
        _finding("e.r.p.", _CEPT_BAND, 10.0, p, unit="mW", option=_OPT_10MW,
                 note="" if p is not None else _NO_POWER),
        _finding("duty cycle (worst 1 h)", _CEPT_BAND, 10.0, u.duty_cycle_pct, unit="%",
                 option=_OPT_10MW, note="transmitter-on time in one hour, relative to one hour"),
        _finding("e.r.p.", _CEPT_BAND, 1.0, p, unit="mW", option=_OPT_1MW,
                 note=("no duty-cycle limit at 1 mW; a power-density limit applies to "
                       "wideband modulation") if p is not None else _NO_POWER),
        _finding("e.r.p.", _CEPT_SUB, 10.0, p, unit="mW", option=_OPT_SUB,
                 note="" if p is not None else _NO_POWER),
        _finding("channel bandwidth", _CEPT_SUB, 25_000.0, u.rf_bandwidth_hz, unit="Hz",
                 option=_OPT_SUB, note=bw_note),
    ]


# --- US 47 CFR 15.231 (periodic operation above 70 MHz) ----------------------------------

_OPT_A = "15.231(a): control signal; periodic only as supervision <= 2 s per hour"
_OPT_E = "15.231(e): lower field strength; <= 1 s per transmission, long silent period"


def _fcc_15_231(u: Usage) -> list[Finding]:
    """47 CFR 15.231 timing rules (from memory; verify against the current edition)."""
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
                 u.on_time_per_hour_s, unit="s", option=_OPT_A,
                 note="transmissions at regular predetermined intervals are not permitted, "
                 "except polling/supervision of security or safety transmitters totalling "
                 "<= 2 s per hour per transmitter"),
        _finding("duration of each transmission", "47 CFR 15.231(e)", 1.0, a, unit="s",
                 option=_OPT_E, note="under the lower field-strength limits of 15.231(e)"),
        _finding("silent period between transmissions", "47 CFR 15.231(e)",
                 max(30.0 * a, 10.0), u.interval_s - a, unit="s", relation=">=", option=_OPT_E,
                 note="at least 30 x the transmission duration and never less than 10 s"),
    ]


REGIONS: dict[str, RuleSet] = {
    "cept-433": RuleSet("cept-433", "CEPT 433 MHz non-specific SRD",
                        f"CEPT ERC Recommendation 70-03, Annex 1 ({FROM_MEMORY})", _cept_433),
    "fcc-15.231": RuleSet("fcc-15.231", "US 47 CFR 15.231 periodic operation",
                          f"47 CFR 15.231 ({FROM_MEMORY})", _fcc_15_231),
}


def usage(airtime_us: float, interval_s: float, power_mw: float | None = None, *,
          rf_bandwidth_hz: float | None = None, activation: Activation = "automatic") -> Usage:
    """Return a validated :class:`Usage` (airtime > 0, interval > airtime, power >= 0)."""
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
    return Usage(float(airtime_us), float(interval_s), power_mw, rf_bandwidth_hz, activation)


def check_region(region: str, airtime_us: float, interval_s: float,
                 power_mw: float | None = None, *, rf_bandwidth_hz: float | None = None,
                 activation: Activation = "automatic") -> list[Finding]:
    """Return the findings of rule set ``region`` for one node transmitting every interval.

    ``rf_bandwidth_hz``: occupied RF bandwidth (about 2 x the one-sided baseband 99 %
    bandwidth for OOK). Raises ValueRangeError for an unknown region or bad inputs.
    """
    if region not in REGIONS:
        close = difflib.get_close_matches(region, list(REGIONS), n=1)
        hint = f" (did you mean '{close[0]}'?)" if close else ""
        raise ValueRangeError(f"unknown region '{region}'{hint}; allowed: {', '.join(REGIONS)}")
    return REGIONS[region].check(usage(airtime_us, interval_s, power_mw,
                                       rf_bandwidth_hz=rf_bandwidth_hz, activation=activation))


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

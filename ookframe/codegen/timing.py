"""Timer-tick quantisation: choose a prescaler and turn every pulse duration into ticks.

Every distinct duration the transmitter produces (each run length of the line code, in
chip units, and the gap between repeats) is rounded to whole timer ticks on its own. The
prescaler is the one from the allowed list with the smallest worst relative error among
those where every duration fits the timer (1..2**timer_bits - 1 ticks); ties go to the
prescaler whose longest merged pulse still fits one timer period, then to the smaller one.

A repeat gap longer than one timer period is split into several periods (all at level 0)
when no allowed prescaler holds it whole: ``k = ceil(gap_ticks / timer_max_ticks)``
pieces, ``k - r`` of ``q`` ticks then ``r`` of ``q + 1`` (``q, r = divmod(gap_ticks, k)``),
so the pieces add up to the gap's ticks exactly. Chip runs are never split.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from ..errors import CodegenError

DEFAULT_PRESCALERS: tuple[int, ...] = (1, 8, 64, 256, 1024)
DEFAULT_CLOCK_HZ = 8_000_000
DEFAULT_TIMER_BITS = 16
DEFAULT_TOLERANCE = 0.01
#: most timer periods one repeat gap may be split into
MAX_GAP_PIECES = 65535
CRC_IMPLS: tuple[str, ...] = ("table256", "table16", "bitwise")
#: transmitter variants: ``buffer`` adds the run buffer (``<prefix>_tx_start`` fills it with
#: timer reload values, the compare ISR only loads the next one) to the streaming
#: ``<prefix>_tx_next``; ``stream`` emits the streaming one only; ``auto`` is ``buffer``
#: unless the timer cannot hold the run buffer's intervals (then ``stream``, and the
#: report says why)
TX_MODES: tuple[str, ...] = ("auto", "buffer", "stream")


@dataclass(frozen=True)
class TimerTarget:
    """The MCU timer the code is generated for (clock in Hz, counter width in bits)."""

    clock_hz: int = DEFAULT_CLOCK_HZ
    timer_bits: int = DEFAULT_TIMER_BITS
    prescalers: tuple[int, ...] = DEFAULT_PRESCALERS
    tolerance: float = DEFAULT_TOLERANCE
    crc_impl: str = "table256"
    tx_mode: str = "auto"

    def __post_init__(self) -> None:
        if isinstance(self.clock_hz, bool) or not isinstance(self.clock_hz, int) \
                or not 1_000 <= self.clock_hz <= 1_000_000_000:
            raise CodegenError(f"mcu clock {self.clock_hz!r} Hz not allowed; allowed: an "
                               "integer 1000..1000000000")
        if self.timer_bits not in (8, 16, 24, 32):
            raise CodegenError(f"timer width {self.timer_bits!r} bits not allowed; allowed: "
                               "8, 16, 24, 32")
        if not self.prescalers:
            raise CodegenError("prescaler list is empty; give at least one, e.g. 1,8,64,256,1024")
        for p in self.prescalers:
            if isinstance(p, bool) or not isinstance(p, int) or not 1 <= p <= 65536:
                raise CodegenError(f"prescaler {p!r} not allowed; allowed: integers 1..65536")
        if len(set(self.prescalers)) != len(self.prescalers):
            raise CodegenError(f"prescaler list {list(self.prescalers)} has duplicates")
        if not 0 < self.tolerance < 0.5:
            raise CodegenError(f"timing tolerance {self.tolerance!r} not allowed; allowed: "
                               "a fraction in (0, 0.5), e.g. 0.01 for 1 %")
        if self.crc_impl not in CRC_IMPLS:
            raise CodegenError(f"crc implementation {self.crc_impl!r} not allowed; allowed: "
                               f"{', '.join(CRC_IMPLS)}")
        if self.tx_mode not in TX_MODES:
            raise CodegenError(f"transmitter mode {self.tx_mode!r} not allowed; allowed: "
                               f"{', '.join(TX_MODES)}")

    @property
    def timer_max_ticks(self) -> int:
        """Longest duration one timer period can hold, in ticks."""
        return (1 << self.timer_bits) - 1


@dataclass(frozen=True)
class Duration:
    """One nominal duration (µs) and its quantised value in ticks."""

    name: str
    units: int  # chip units, 0 for the gap
    nominal_us: float
    ticks: int
    quantised_us: float

    @property
    def error(self) -> float:
        """Relative error (quantised - nominal) / nominal."""
        return (self.quantised_us - self.nominal_us) / self.nominal_us


@dataclass(frozen=True)
class Timing:
    """The chosen prescaler and every duration in ticks."""

    clock_hz: int
    prescaler: int
    timer_bits: int
    tick_us: float
    durations: tuple[Duration, ...]
    max_merged_ticks: int  # upper bound of a merged pulse (before the timer cap)
    tolerance: float
    gap_pieces: int = 1  # timer periods the repeat gap is sent as (1: not split)

    @property
    def timer_hz(self) -> float:
        """Timer counting frequency in Hz."""
        return self.clock_hz / self.prescaler

    @property
    def worst_error(self) -> float:
        """Largest relative timing error over all durations (fraction, >= 0)."""
        return max(abs(d.error) for d in self.durations)

    @property
    def max_pulse_ticks(self) -> int:
        """Longest pulse tx_next yields: merged pulses are capped at one timer period."""
        return min(self.max_merged_ticks, (1 << self.timer_bits) - 1)

    def ticks_of_units(self, units: int) -> int:
        """Ticks of a run of ``units`` chips (must be one of the quantised run lengths)."""
        for d in self.durations:
            if d.units == units:
                return d.ticks
        raise KeyError(units)

    @property
    def gap_ticks(self) -> int:
        """Ticks of the gap between repeats (0 when there is no gap)."""
        return next((d.ticks for d in self.durations if d.units == 0), 0)

    def gap_piece_ticks(self) -> tuple[int, ...]:
        """Ticks of each timer period the gap is sent as, in order (empty without a gap)."""
        total = self.gap_ticks
        if not total:
            return ()
        return split_ticks(total, self.gap_pieces)

    def table(self) -> list[dict[str, object]]:
        """Return one row per duration: name, nominal_us, ticks, quantised_us, error_pct."""
        return [{"name": d.name, "units": d.units, "nominal_us": d.nominal_us,
                 "ticks": d.ticks, "quantised_us": d.quantised_us,
                 "error_pct": 100.0 * d.error,
                 "timer_periods": self.gap_pieces if d.units == 0 else 1}
                for d in self.durations]


def split_ticks(total: int, pieces: int) -> tuple[int, ...]:
    """Return ``total`` ticks as ``pieces`` near-equal parts: the shorter ones first."""
    q, r = divmod(total, pieces)
    return (q,) * (pieces - r) + (q + 1,) * r


def _round_half_up(x: Fraction) -> int:
    return int((x + Fraction(1, 2)) // 1)


def quantise(target: TimerTarget, unit_us: float, run_units: list[int], gap_us: float | None,
             merged_bound: tuple[int, int]) -> Timing:
    """Return the best Timing for chip runs ``run_units`` (each x ``unit_us``) and the gap.

    ``merged_bound`` = (a, b): a merged pulse is at most ``a`` element-maxima plus ``b``
    gaps; used for the tie-break and the ``max_pulse_ticks`` bound. Raises CodegenError
    when no prescaler fits every duration, or the best one misses the tolerance.
    """
    wanted: list[tuple[str, int, Fraction]] = [
        (f"{u} unit{'s' if u > 1 else ''}", u, Fraction(unit_us) * u) for u in sorted(set(run_units))]
    if gap_us is not None:
        wanted.append(("repeat gap", 0, Fraction(gap_us)))
    candidates, misfits = _candidates(target, wanted, merged_bound, split_gap=False)
    within = [c for c in candidates if c[3].worst_error <= target.tolerance]
    if not within and gap_us is not None:
        # no prescaler holds the gap whole within the tolerance: split the gap
        split, misfits = _candidates(target, wanted, merged_bound, split_gap=True)
        within = [c for c in split if c[3].worst_error <= target.tolerance]
        candidates = split or candidates
    if not candidates:
        raise CodegenError("no prescaler fits every duration in the timer: " + "; ".join(misfits)
                           + ". Allow a larger prescaler, a wider timer or shorter durations")
    best = min(within or candidates, key=lambda c: c[:3])[3]
    if best.worst_error > target.tolerance:
        worst = max(best.durations, key=lambda d: abs(d.error))
        raise CodegenError(
            f"worst timing error {100 * best.worst_error:.3f} % ({worst.name}: "
            f"{worst.nominal_us:g} µs -> {worst.ticks} ticks = {worst.quantised_us:g} µs at "
            f"prescaler {best.prescaler}) exceeds the tolerance {100 * target.tolerance:g} %; "
            "use another clock, prescaler list or a larger tolerance")
    return best


def _candidates(target: TimerTarget, wanted: list[tuple[str, int, Fraction]],
                merged_bound: tuple[int, int], *, split_gap: bool
                ) -> tuple[list[tuple[float, int, int, Timing]], list[str]]:
    """Return (sort key, Timing) candidates of every prescaler that fits, and the reasons
    of those that do not. With ``split_gap`` the gap may span several timer periods."""
    candidates: list[tuple[float, int, int, Timing]] = []
    misfits: list[str] = []
    top = target.timer_max_ticks
    for p in target.prescalers:
        tick = Fraction(p * 1_000_000, target.clock_hz)
        rows = []
        bad = ""
        pieces = 1
        for name, units, nominal in wanted:
            ticks = _round_half_up(nominal / tick)
            limit = top * MAX_GAP_PIECES if split_gap and units == 0 else top
            if not 1 <= ticks <= limit:
                if ticks < 1:
                    held = "a pulse needs at least 1 tick"
                elif limit == top:
                    held = f"the {target.timer_bits}-bit timer holds 1..{top}"
                else:
                    held = (f"split over at most {MAX_GAP_PIECES} periods of the "
                            f"{target.timer_bits}-bit timer it holds 1..{limit}")
                bad = (f"prescaler {p}: {name} ({float(nominal):g} µs) is {float(nominal / tick):.1f} "
                       f"ticks; {held}")
                break
            if units == 0:
                pieces = -(-ticks // top)
            rows.append(Duration(name, units, float(nominal), ticks, float(ticks * tick)))
        if bad:
            misfits.append(bad)
            continue
        longest = max(r.ticks for r in rows if r.units) if any(r.units for r in rows) else 0
        gap = next((r.ticks for r in rows if r.units == 0), 0)
        gap_piece = -(-gap // pieces) if gap else 0
        merged = merged_bound[0] * longest + merged_bound[1] * gap_piece
        timing = Timing(target.clock_hz, p, target.timer_bits, float(tick), tuple(rows), merged,
                        target.tolerance, pieces)
        splits = int(merged > top)
        candidates.append((round(timing.worst_error, 12), pieces * 2 + splits, p, timing))
    return candidates, misfits

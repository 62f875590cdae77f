"""C code generation: a single C99 header per frame spec, timed in timer ticks.

Python computes every value (tick quantisation, tables, shifts, masks) in
:mod:`.model` / :mod:`.timing`; the Jinja2 templates in ``codegen_templates/`` place them.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from .._require import require, require_spec
from ..errors import CodegenError
from ..plan import FramePlan
from ..spec.model import FrameSpec
from .model import CModel, build_model
from .render import render_model
from .schedule import Schedule, schedule_from_bits, tx_schedule
from .timing import CRC_IMPLS, DEFAULT_PRESCALERS, TimerTarget, Timing


@dataclass(frozen=True)
class Emitted:
    """A rendered header: file name, text and the model it came from (for the report)."""

    filename: str
    text: str
    model: CModel

    @property
    def timing(self) -> Timing:
        """The tick quantisation used."""
        return self.model.timing

    def report(self) -> dict[str, object]:
        """Return the emit report as plain data (JSON-ready)."""
        m = self.model
        t = m.timing
        return {
            "header": self.filename,
            "prefix": m.prefix,
            "spec_sha256": m.spec_hash,
            "clock_hz": t.clock_hz,
            "timer_bits": t.timer_bits,
            "prescaler": t.prescaler,
            "timer_hz": t.timer_hz,
            "tick_us": t.tick_us,
            "ticks_type": m.ticks_type,
            "max_pulse_ticks": m.max_pulse_ticks,
            "worst_error_pct": 100.0 * t.worst_error,
            "tolerance_pct": 100.0 * t.tolerance,
            "crc_impl": m.target.crc_impl if m.spec.check.kind == "crc" else None,
            "durations": t.table(),
            "max_frame_bits": m.max_frame_bits,
            "gap_timer_periods": list(t.gap_piece_ticks()),
            "tx_mode": m.target.tx_mode,
            "run_buffer": None if m.txbuf is None else {
                "ram_bytes": dict(m.txbuf["ram"]),  # type: ignore[call-overload]
                "entries": m.txbuf["cap"],
                "max_interval_ticks": m.txbuf["max_interval_ticks"],
                "shortest_interval_cycles": m.txbuf["shortest_cycles"],
                "avr_isr_cycles": dict(m.txbuf["avr_isr_cycles"])  # type: ignore[call-overload]
                if m.txbuf["avr_isr"] else None},
            "run_buffer_refusal": m.txbuf_refusal or None,
            "streaming": {"ram_bytes": dict(m.stream_ram)},
            "side": m.side,
            # emit --side rx: the transmitter is in the header but off by default
            # (<PREFIX>_WANT_TX 0), so its RAM figures above apply only when it is turned on
            "transmitter_default_on": m.side != "rx",
            "receiver": None if m.rx is None else {
                "ram_bytes": m.rx.ram_bytes,
                "ram_bytes_without_recovery": m.rx.ram_bytes_plain},
        }


def emit_header(spec: FrameSpec | FramePlan, target: TimerTarget | None = None, *,
                side: str = "tx") -> Emitted:
    """Return the generated header for ``spec`` (CodegenError when it cannot be made);
    ``side`` "rx" / "both" adds the receiver behind ``<PREFIX>_WANT_RX`` and the
    transmitter behind ``<PREFIX>_WANT_TX`` (default 0 for "rx": a receive-only build)."""
    require_spec(spec, "spec")
    if target is not None:
        require(target, TimerTarget, "target")
    model = build_model(spec, target, side=side)
    return Emitted(f"{model.spec.name}.h", render_model(model), model)


def emit_problem(spec: FrameSpec, target: TimerTarget | None = None) -> str | None:
    """Return why :func:`emit_header` would refuse ``spec`` for ``target`` (default timer
    when None), or None when it would not: the very checks ``emit`` makes, so ``check``
    can report them."""
    try:
        build_model(spec, target)
    except CodegenError as exc:
        return str(exc)
    return None


def write_header(emitted: Emitted, out_dir: str | os.PathLike[str], *, force: bool = False
                 ) -> Path:
    """Write ``emitted`` into ``out_dir`` and return its path.

    Refuses (CodegenError) to replace an existing file unless ``force``; writes through a
    temporary file so an error never leaves a half-written header.
    """
    d = Path(out_dir)
    if d.exists() and not d.is_dir():
        raise CodegenError(f"output {d} exists and is not a directory")
    target = d / emitted.filename
    if target.exists() and not force:
        raise CodegenError(f"{target} exists; use --force to overwrite it")
    try:
        d.mkdir(parents=True, exist_ok=True)
        tmp = d / f".{emitted.filename}.tmp{os.getpid()}"
        tmp.write_text(emitted.text, encoding="utf-8", newline="\n")
        os.replace(tmp, target)
    except OSError as exc:
        if "tmp" in locals():
            tmp.unlink(missing_ok=True)
        raise CodegenError(f"cannot write {target}: {exc.strerror or exc}") from exc
    return target


__all__ = [
    "CRC_IMPLS",
    "DEFAULT_PRESCALERS",
    "CModel",
    "Emitted",
    "Schedule",
    "TimerTarget",
    "Timing",
    "build_model",
    "emit_header",
    "emit_problem",
    "schedule_from_bits",
    "tx_schedule",
    "write_header",
]

"""Battery life of a node that wakes, transmits and sleeps, counting sleep current and the
microcontroller's active time (the figure ``airtime`` gives beside the transmit-only one).

Model of one report interval ``T`` (every current drawn from one battery, no regulator):

- the microcontroller is awake for ``t_active`` per transmission (reading the sensor,
  building and sending the frame: the transmission's airtime belongs inside it), drawing
  ``I_mcu``;
- the transmitter adds ``I_tx`` while the carrier is on, i.e. during the marks (``t_mark``
  per transmission, repeats included);
- for the rest of the interval, ``T - t_active``, the node draws its sleep current
  ``I_sleep`` (microcontroller asleep, radio off, sensor off).

Charge per interval Q = I_tx t_mark + I_mcu t_active + I_sleep (T - t_active); mean current
Q / T; life = capacity / mean current. The sums are done in exact rational arithmetic on
the decimal values given (``Fraction(repr(x))``), so a hand-computed case is reproduced to
the last digit; the result is rounded to float once at the end.

Still left out (real life is shorter): self-discharge, temperature, the battery's cut-off
voltage and pulse-load capacity, regulator losses, transmitter start-up. This is an
estimate; measure the node's current profile.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from ..errors import ValueRangeError

#: hours per day
_H_PER_DAY = 24
BATTERY_IGNORES: tuple[str, ...] = (
    "self-discharge", "temperature", "cut-off voltage and pulse-load capacity",
    "regulator losses", "transmitter start-up",
)


@dataclass(frozen=True)
class BatteryBudget:
    """Charge per report interval by consumer (µC), mean current (µA) and battery life.

    ``battery_life_days`` is None when no capacity was given.
    """

    interval_s: float
    mark_us: float
    tx_current_ma: float
    mcu_active_ma: float
    mcu_active_ms: float
    sleep_current_ua: float
    tx_charge_uc: float
    mcu_charge_uc: float
    sleep_charge_uc: float
    charge_per_interval_uc: float
    mean_current_ua: float
    charge_per_day_mah: float
    battery_mah: float | None
    battery_life_days: float | None
    ignores: tuple[str, ...] = BATTERY_IGNORES


def _exact(name: str, value: float, *, positive: bool = False) -> Fraction:
    """Return ``value`` as the rational its decimal text names; check it is finite, >= 0
    (> 0 when ``positive``)."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise TypeError(f"{name} must be a number, got {type(value).__name__}")
    if not math.isfinite(value) or value < 0 or (positive and value == 0):
        need = "> 0" if positive else ">= 0"
        raise ValueRangeError(f"{name} must be a finite number {need}, got {value}")
    return Fraction(repr(float(value)))


def battery_budget(interval_s: float, mark_us: float, tx_current_ma: float, *,
                   sleep_current_ua: float = 0.0, mcu_active_ma: float = 0.0,
                   mcu_active_ms: float = 0.0,
                   battery_mah: float | None = None) -> BatteryBudget:
    """Return the charge budget of one report interval and the battery life it gives.

    Units as in the names: ``interval_s`` s, ``mark_us`` µs of carrier per transmission,
    currents in mA (transmitter, awake microcontroller) and µA (sleep), ``mcu_active_ms``
    ms awake per transmission (must fit in the interval), ``battery_mah`` mAh.

    Worked case (the unit test): T = 60 s, t_mark = 10 ms at 12 mA, awake 25 ms at 2 mA,
    sleep 3 µA, 1000 mAh. Q_tx = 12 mA x 0.010 s = 120 µC; Q_mcu = 2 mA x 0.025 s = 50 µC;
    Q_sleep = 3 µA x 59.975 s = 179.925 µC; Q = 349.925 µC per 60 s; mean current
    349.925 / 60 = 5.832083... µA; life = 1000 mAh / 5.832083 µA = 60e6 / 349.925 h
    = 2.5e6 / 349.925 days = 7144.388... days.
    """
    t = _exact("interval_s", interval_s, positive=True)
    mark = _exact("mark_us", mark_us)
    i_tx = _exact("tx_current_ma", tx_current_ma)
    i_sleep = _exact("sleep_current_ua", sleep_current_ua)
    i_mcu = _exact("mcu_active_ma", mcu_active_ma)
    awake = _exact("mcu_active_ms", mcu_active_ms)
    cap = None if battery_mah is None else _exact("battery_mah", battery_mah, positive=True)
    awake_s = awake / 1000
    if awake_s > t:
        raise ValueRangeError(f"mcu_active_ms ({mcu_active_ms:g} ms) must fit in the interval "
                              f"({interval_s:g} s)")
    # mA x s = mC -> x 1000 µC; µA x s = µC
    q_tx = i_tx * (mark / 1_000_000) * 1000
    q_mcu = i_mcu * awake_s * 1000
    q_sleep = i_sleep * (t - awake_s)
    q = q_tx + q_mcu + q_sleep
    mean_ua = q / t
    per_day_mah = mean_ua * _H_PER_DAY / 1000
    life = None
    if cap is not None:
        if mean_ua == 0:
            raise ValueRangeError("every current is 0: battery life is unbounded")
        life = float(cap * 1000 / mean_ua / _H_PER_DAY)
    return BatteryBudget(
        interval_s=interval_s, mark_us=mark_us, tx_current_ma=tx_current_ma,
        mcu_active_ma=mcu_active_ma, mcu_active_ms=mcu_active_ms,
        sleep_current_ua=sleep_current_ua, tx_charge_uc=float(q_tx),
        mcu_charge_uc=float(q_mcu), sleep_charge_uc=float(q_sleep),
        charge_per_interval_uc=float(q), mean_current_ua=float(mean_ua),
        charge_per_day_mah=float(per_day_mah), battery_mah=battery_mah,
        battery_life_days=life)

"""Link budget: path loss, thermal noise and received power, in dB units (pure functions)."""

from __future__ import annotations

import math

import numpy as np

#: reference temperature of thermal noise, K (the usual 290 K of noise-figure definitions)
T0_K = 290.0


def fspl_db(distance_m: float | np.ndarray, frequency_hz: float) -> float | np.ndarray:
    """Return the free-space path loss (Friis), dB, between isotropic antennas:
    ``20 log10(4 pi d f / c)`` = 20 log10(d) + 20 log10(f) - 147.55 (d in m, f in Hz)."""
    from scipy import constants  # here: the CLI's --help must not load scipy

    d = np.asarray(distance_m, dtype=np.float64)
    out = 20.0 * np.log10(4.0 * math.pi * d * frequency_hz / constants.c)
    return float(out) if out.ndim == 0 else out


def path_loss_db(
    distance_m: float | np.ndarray, frequency_hz: float, exponent: float = 2.0,
    reference_m: float = 1.0, extra_loss_db: float = 0.0,
) -> float | np.ndarray:
    """Return the log-distance path loss, dB: free space up to ``reference_m``, then
    ``10 * exponent * log10(d / reference_m)`` more, plus ``extra_loss_db`` (walls, fade
    margin). ``exponent`` 2 is free space at every distance."""
    d = np.asarray(distance_m, dtype=np.float64)
    near = np.minimum(d, reference_m)
    out = np.asarray(fspl_db(near, frequency_hz)) + extra_loss_db
    out = out + 10.0 * exponent * np.log10(np.maximum(d, reference_m) / reference_m)
    return float(out) if out.ndim == 0 else out


def distance_for_loss_m(
    loss_db: float, frequency_hz: float, exponent: float = 2.0, reference_m: float = 1.0,
    extra_loss_db: float = 0.0,
) -> float:
    """Return the distance (m) at which ``path_loss_db`` equals ``loss_db`` (the inverse)."""
    at_ref = float(fspl_db(reference_m, frequency_hz)) + extra_loss_db
    if loss_db <= at_ref:  # inside the reference distance: free space
        return reference_m * 10.0 ** ((loss_db - at_ref) / 20.0)
    return reference_m * 10.0 ** ((loss_db - at_ref) / (10.0 * exponent))


def thermal_noise_dbm_per_hz(temperature_k: float = T0_K) -> float:
    """Return the thermal noise density kT, dBm/Hz (-173.98 at 290 K)."""
    from scipy import constants

    return 10.0 * math.log10(constants.k * temperature_k * 1e3)


def noise_floor_dbm(bandwidth_hz: float, noise_figure_db: float = 0.0,
                    temperature_k: float = T0_K) -> float:
    """Return the noise power kTB plus the noise figure over ``bandwidth_hz``, dBm."""
    return thermal_noise_dbm_per_hz(temperature_k) + 10.0 * math.log10(bandwidth_hz) \
        + noise_figure_db


def dbm_to_mw(power_dbm: float | np.ndarray) -> float | np.ndarray:
    """Return the power in mW of ``power_dbm``."""
    return 10.0 ** (np.asarray(power_dbm, dtype=np.float64) / 10.0)


def mw_to_dbm(power_mw: float) -> float:
    """Return the power in dBm of ``power_mw`` (> 0)."""
    return 10.0 * math.log10(power_mw)

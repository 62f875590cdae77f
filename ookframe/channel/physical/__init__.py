"""Physical model of the cheap link at sample level: keyed transmitter, path loss,
thermal noise, superregenerative (or superheterodyne) receiver with its data slicer."""

from .apply import apply_physical, physical_time_map_us
from .budget import (
    dbm_to_mw,
    distance_for_loss_m,
    fspl_db,
    mw_to_dbm,
    noise_floor_dbm,
    path_loss_db,
    thermal_noise_dbm_per_hz,
)
from .capture import (
    WAV_KINDS,
    baseband_snr_db,
    pin_samples,
    render_baseband,
    scaled_samples,
    write_iq,
    write_wav,
)
from .carrier import Carrier, KeyedEnvelope, carriers_on_grid, render_carriers
from .model import (
    LICENCE_FREE_433_MW,
    MAX_CLOCK_PPM,
    RECEIVERS,
    PathModel,
    PhysicalChannel,
    Receiver,
    Transmitter,
    get_receiver,
)
from .receiver import (
    detect_probability,
    detection_level,
    detector_noise_dbm,
    idle_output_mean,
    quench_output,
    receive_carriers,
)

__all__ = [
    "WAV_KINDS",
    "baseband_snr_db",
    "pin_samples",
    "render_baseband",
    "scaled_samples",
    "write_iq",
    "write_wav",
    "LICENCE_FREE_433_MW",
    "MAX_CLOCK_PPM",
    "RECEIVERS",
    "Carrier",
    "KeyedEnvelope",
    "PathModel",
    "PhysicalChannel",
    "Receiver",
    "Transmitter",
    "apply_physical",
    "carriers_on_grid",
    "dbm_to_mw",
    "detect_probability",
    "detection_level",
    "detector_noise_dbm",
    "distance_for_loss_m",
    "fspl_db",
    "get_receiver",
    "idle_output_mean",
    "mw_to_dbm",
    "noise_floor_dbm",
    "path_loss_db",
    "physical_time_map_us",
    "quench_output",
    "receive_carriers",
    "render_carriers",
    "thermal_noise_dbm_per_hz",
]

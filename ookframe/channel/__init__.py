"""Channel stage: impairments of a cheap OOK link applied to pulse trains."""

from .apply import ORDER, apply_channel, channel_time_map_us
from .impairments import (
    add_glitches,
    add_idle_noise,
    bias_marks,
    drop_marks,
    idle_noise_train,
    jitter_edges,
    quantise_edges,
    scale_clock,
    tx_time_map_us,
)
from .linkfile import Estimate, LinkFile, link_from_text, link_to_toml, load_link
from .model import SIGNED, ChannelSpec, impairment_names
from .presets import PRESETS, get_preset

__all__ = [
    "ORDER",
    "PRESETS",
    "SIGNED",
    "ChannelSpec",
    "Estimate",
    "LinkFile",
    "add_glitches",
    "add_idle_noise",
    "apply_channel",
    "bias_marks",
    "channel_time_map_us",
    "drop_marks",
    "get_preset",
    "idle_noise_train",
    "impairment_names",
    "jitter_edges",
    "link_from_text",
    "link_to_toml",
    "load_link",
    "quantise_edges",
    "scale_clock",
    "tx_time_map_us",
]

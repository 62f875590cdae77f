"""The channel options shared by stress, sweep, margin, vectors and noise.

Where the channel comes from, lowest precedence first:
  1. ``--preset NAME`` (each command has its default preset), or ``--channel FILE``, a
     channel file (TOML, as ``ookframe calibrate`` writes; ``ookframe.channel.linkfile``);
     giving both is an error;
  2. every impairment option given (``--jitter-us 6``) overrides the value from 1.

``--channel`` also takes the words in ``CHANNEL_WORDS``: a model that is not a
``ChannelSpec`` (e.g. a sample-level one) registers its word there, and the commands that
support it test ``channel_word(args)`` before calling ``channel_from_args``.
"""

from __future__ import annotations

import argparse
from dataclasses import fields

from ..channel import PRESETS, ChannelSpec, get_preset
from ..channel.linkfile import LinkFile, load_link
from ..errors import ValueRangeError
from .output import err

#: meaning and unit of every impairment option (ChannelSpec's docstring says more)
IMPAIRMENT_HELP: dict[str, str] = {
    "jitter_us": "per-edge timing error, µs: Gaussian sigma or uniform half-width "
                 "(see --jitter-kind)",
    "jitter_kind": "edge jitter distribution: gauss (sigma) or uniform (±)",
    "mark_bias_us": "µs added to every mark and taken from the next space (negative: "
                    "marks shortened); transmitter start-up and ring-down",
    "clock_error_pct": "sender clock error, %% (positive: every pulse longer)",
    "drift_pct_per_s": "sender clock drift, %% per second from each transmission start",
    "quant_step_us": "receiver output edges moved to a grid of this step, µs (0: off)",
    "glitch_rate_per_ms": "spurious level flips per ms of signal (Poisson)",
    "glitch_width_us": "mean glitch width, µs (uniform in 0.5..1.5 times it)",
    "dropout_prob": "probability that a whole mark is lost (0..1)",
    "idle_noise_us": "idle-receiver noise before and after the train, µs each (0: none)",
    "idle_noise_mean_us": "mean duration of an idle-noise pulse, µs",
    "idle_quiet_us": "µs of space after which the idle receiver turns noisy again",
    "min_width_us": "narrowest pulse the model lets through, µs (narrower ones are widened)",
}

#: words ``--channel`` accepts instead of a file: word -> one-line help (see module doc)
CHANNEL_WORDS: dict[str, str] = {
    "physical": "the physical link model (transmitter, path, receiver; see the physical "
                "link options)",
}


def add_channel_source_arguments(g: argparse._ActionsContainer, default_preset: str) -> None:
    """Add ``--preset`` and ``--channel FILE`` to a parser or argument group; the default
    preset is remembered for ``base_channel``."""
    g.add_argument("--preset", default=None, choices=sorted(PRESETS),
                   help=f"channel preset to start from (default: {default_preset})")
    words = "".join(f"; or {w}: {h}" for w, h in CHANNEL_WORDS.items())
    g.add_argument("--channel", metavar="FILE", default=None,
                   help="channel file (TOML, e.g. written by 'ookframe calibrate') to start "
                   f"from instead of a preset{words}")
    g.set_defaults(default_preset=default_preset)


def add_channel_arguments(p: argparse.ArgumentParser, default_preset: str) -> None:
    """Add --preset, --channel and one option per ChannelSpec parameter (overriding them)."""
    g = p.add_argument_group(
        "channel", f"impairment options override the values of --preset (default "
        f"{default_preset}) or --channel FILE; an option not given keeps the chosen "
        f"channel's value, shown in [brackets] for {default_preset}")
    add_channel_source_arguments(g, default_preset)
    base = get_preset(default_preset)
    for f in fields(ChannelSpec):
        flag = "--" + f.name.replace("_", "-")
        text = f"{IMPAIRMENT_HELP[f.name]} [{getattr(base, f.name):g}]" \
            if f.name != "jitter_kind" else f"{IMPAIRMENT_HELP[f.name]} [{base.jitter_kind}]"
        if f.name == "jitter_kind":
            g.add_argument(flag, choices=("gauss", "uniform"), default=None, help=text)
        else:
            g.add_argument(flag, type=float, default=None, metavar="X", help=text)


def channel_word(args: argparse.Namespace) -> str | None:
    """Return the ``CHANNEL_WORDS`` word given as ``--channel``, or None (a file or unset)."""
    value = getattr(args, "channel", None)
    return value if value in CHANNEL_WORDS else None


def channel_file(args: argparse.Namespace) -> LinkFile | None:
    """Return the channel file given as ``--channel FILE`` (loaded and checked), or None;
    prints on stderr what the file says it could not measure."""
    path = getattr(args, "channel", None)
    if path is None:
        return None
    if path in CHANNEL_WORDS:
        raise ValueRangeError(f"--channel {path}: this command takes a channel file or a "
                              f"preset, not the model {path!r}")
    if getattr(args, "preset", None) is not None:
        raise ValueRangeError("give --preset or --channel, not both")
    link = load_link(path)
    if link.unknown:
        err.print(f"note: {path} does not measure {', '.join(k for k, _ in link.unknown)} "
                  "(model defaults used; see its [unknown] table)", markup=False)
    return link


def base_channel(args: argparse.Namespace) -> ChannelSpec:
    """Return the channel of ``--channel FILE``, else of ``--preset`` (or the command's
    default preset), before the impairment options."""
    link = channel_file(args)
    if link is not None:
        return link.channel
    return get_preset(args.preset or args.default_preset)


def channel_from_args(args: argparse.Namespace) -> ChannelSpec:
    """Return the base channel with every impairment option given on the command line applied."""
    changes = {f.name: getattr(args, f.name) for f in fields(ChannelSpec)
               if getattr(args, f.name, None) is not None}
    return base_channel(args).with_(**changes)


def channel_label(args: argparse.Namespace) -> str:
    """Return where the channel came from, for titles: the file or the preset name."""
    return getattr(args, "channel", None) or args.preset or args.default_preset


def channel_text(ch: ChannelSpec) -> str:
    """Return the non-default channel parameters as ``name=value`` text."""
    base = ChannelSpec()
    parts = [f"{f.name}={getattr(ch, f.name)}" for f in fields(ch)
             if getattr(ch, f.name) != getattr(base, f.name)]
    return ", ".join(parts) or "ideal"

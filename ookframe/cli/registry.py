"""Subcommand registry: add a command by adding its module name here (one line each)."""

COMMANDS: tuple[str, ...] = (
    "cmd_check",
    "cmd_encode",
    "cmd_decode",
    "cmd_slice",
    "cmd_demo",
    "cmd_emit",
    "cmd_stress",
    "cmd_noise",
    "cmd_sweep",
    "cmd_margin",
    "cmd_calibrate",
    "cmd_vectors",
    "cmd_airtime",
    "cmd_plot",
    "cmd_syncword",
    "cmd_crc_strength",
    "cmd_range",
    "cmd_render",
    "cmd_network",
)

"""Subcommand registry: add a command by adding its module name here (one line each)."""

COMMANDS: tuple[str, ...] = (
    "cmd_check",
    "cmd_encode",
    "cmd_decode",
    "cmd_demo",
)

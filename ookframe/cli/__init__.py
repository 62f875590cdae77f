"""Command-line interface: a thin layer over the public API (one file per command)."""

"""Design analysis: CRC strength, sync-word quality, line-code bounds, spectrum, airtime.

Each module is a pure engine over the frame spec (or plain numbers); the CLI commands and
the ``check`` design report format their results.
"""

"""The interface every check implements (one class per family, one registry line)."""

from __future__ import annotations

from typing import Protocol, runtime_checkable


@runtime_checkable
class Check(Protocol):
    """An error check over bytes: ``kind`` as in CheckSpec, value of ``width_bits`` bits."""

    @property
    def kind(self) -> str: ...

    @property
    def width_bits(self) -> int: ...

    def compute(self, data: bytes) -> int:
        """Return the check value of ``data`` (0 <= value < 2**width_bits)."""
        ...

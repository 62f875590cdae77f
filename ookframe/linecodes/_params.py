"""Reading and validating line-code parameters (``LineCodeSpec.params``)."""

from __future__ import annotations

import difflib
from collections.abc import Mapping

from ..errors import QUOTE_CHARS, SpecError, excerpt
from ..spec.model import LineCodeSpec


def suggestion(word: str, allowed: list[str] | tuple[str, ...]) -> str:
    """Return ' (did you mean X?)' for the closest allowed word, or '' when none is close."""
    close = difflib.get_close_matches(word, list(allowed), n=1, cutoff=0.6)
    return f" (did you mean {close[0]!r}?)" if close else ""


class ParamReader:
    """Typed access to a spec's parameters; rejects unknown names on construction.

    ``defaults`` maps every allowed parameter name to its default value.
    """

    def __init__(self, spec: LineCodeSpec, defaults: Mapping[str, object]) -> None:
        self._values = {**defaults, **dict(spec.params)}
        names = list(defaults)
        for key, _ in spec.params:
            if key not in defaults:
                key = key if len(key) <= QUOTE_CHARS else excerpt(key)
                shown = ", ".join(names) if names else "none"
                raise SpecError(
                    f"line_code.{key}",
                    f"unknown parameter for {spec.name}; allowed: {shown}{suggestion(key[:100], names)}",
                )

    def integer(self, key: str, lo: int, hi: int) -> int:
        """Return the integer parameter ``key`` (its default when absent), checked in lo..hi."""
        value = self._values[key]
        if isinstance(value, bool) or not isinstance(value, int) or not lo <= value <= hi:
            raise SpecError(f"line_code.{key}", f"must be an integer in {lo}..{hi}, got {excerpt(value)}")
        return value

    def choice(self, key: str, allowed: tuple[str, ...]) -> str:
        """Return the string parameter ``key`` (its default when absent), one of ``allowed``."""
        value = self._values[key]
        if value not in allowed:
            hint = suggestion(value[:100], allowed) if isinstance(value, str) else ""
            raise SpecError(
                f"line_code.{key}",
                f"must be one of {', '.join(map(repr, allowed))}, got {excerpt(value)}{hint}",
            )
        return str(value)

"""The one rule for frame and field names, shared by the spec loader and the C generator.

A frame name prefixes every generated C symbol and names the header file; a field name
becomes a C struct member and part of macro names. The loader refuses what the C
generator would refuse, so ``check`` and ``emit`` agree.
"""

from __future__ import annotations

import keyword
import re
from collections.abc import Sequence

from ..errors import excerpt

#: longest frame or field name (characters); keeps ``<name>.h`` and every C symbol short
MAX_NAME_CHARS = 64

#: C99 keywords (6.4.1) and the names the generated header's own headers (stdint.h,
#: stdbool.h, stddef.h) or a C program reserve, which a name must not be
C_RESERVED = frozenset(
    "auto break case char const continue default do double else enum extern float for goto "
    "if inline int long register restrict return short signed sizeof static struct switch "
    "typedef union unsigned void volatile while _Bool _Complex _Imaginary bool true false "
    "NULL main errno assert offsetof size_t ptrdiff_t wchar_t intptr_t uintptr_t intmax_t "
    "uintmax_t uint8_t uint16_t uint32_t uint64_t int8_t int16_t int32_t int64_t".split()
)
#: macro names stdint.h defines or reserves (C99 7.18, 7.26.8): INT8_MAX, UINT16_C, SIZE_MAX...
_STDINT_MACRO = re.compile(r"^U?INT\w*_(MAX|MIN|C)$|^(SIZE|PTRDIFF|WCHAR|WINT|SIG_ATOMIC)_(MAX|MIN)$")
_C_IDENT = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")


def name_problem(name: object, what: str, *, fold_case: bool = False) -> str | None:
    """Return why ``name`` cannot be a ``what`` (e.g. "field name"), or None when it can.

    A name is letters, digits and '_', starts with a letter (C reserves leading
    underscores, C99 7.1.3), has at most ``MAX_NAME_CHARS`` characters and is no C keyword,
    standard C name or Python keyword; ``fold_case`` also refuses any case variant of one
    (used for the frame name, which appears upper-cased as a macro prefix).
    """
    if not isinstance(name, str):
        return f"{excerpt(name)} is not a valid {what}: must be a string"
    if len(name) > MAX_NAME_CHARS:
        return (f"{excerpt(name)} is too long for a {what}; allowed at most {MAX_NAME_CHARS} "
                "characters")
    if not _C_IDENT.match(name):
        return (f"{excerpt(name)} is not a valid {what}: letters, digits and '_', starting "
                "with a letter")
    folded = {name, name.lower()} if fold_case else {name}
    if folded & C_RESERVED or _STDINT_MACRO.match(name) or keyword.iskeyword(name):
        return (f"{name!r} is a C or Python keyword or a standard C name; choose another "
                f"{what}")
    return None


def same_name(names: Sequence[str]) -> tuple[int, int] | None:
    """Return (first, second) indices of two names equal when upper-cased, or None.

    Field names appear upper-cased in generated macro names, so ``temp`` and ``TEMP``
    cannot both be fields.
    """
    seen: dict[str, int] = {}
    for i, n in enumerate(names):
        up = n.upper()
        if up in seen:
            return seen[up], i
        seen[up] = i
    return None

"""Output helpers shared by commands: JSON on stdout, messages on stderr, safe file writes."""

from __future__ import annotations

import json
import math
import os
import sys
import tempfile
from pathlib import Path
from typing import Any

from rich.console import Console

from ..cautions import REGULATORY_CAUTION  # noqa: F401 - re-exported for commands
from ..errors import OokframeError

#: data goes to stdout, messages to stderr
out = Console(highlight=False, soft_wrap=True, emoji=False)
err = Console(stderr=True, highlight=False, soft_wrap=True, emoji=False)



class OutputExists(OokframeError):
    """An output file exists and --force was not given (or its folder is missing)."""


def _clean(o: Any) -> Any:
    if isinstance(o, float):
        return o if math.isfinite(o) else None
    if isinstance(o, dict):
        return {str(k): _clean(v) for k, v in o.items()}
    if isinstance(o, list | tuple):
        return [_clean(v) for v in o]
    if isinstance(o, bytes):
        return o.hex()
    if hasattr(o, "item"):  # numpy scalar
        return _clean(o.item())
    return o


def dumps_json(obj: Any) -> str:
    """JSON text of ``obj`` (numpy scalars converted, NaN/inf as null)."""
    return json.dumps(_clean(obj), indent=2, sort_keys=False)


def print_json(obj: Any) -> None:
    """Print ``obj`` as JSON on stdout."""
    sys.stdout.write(dumps_json(obj) + "\n")
    sys.stdout.flush()


def check_writable(path: str | Path, force: bool) -> Path:
    """Return ``path`` after checking it may be written (exists -> OutputExists unless force)."""
    p = Path(path)
    if p.exists() and not force:
        raise OutputExists(f"{p} exists; use --force to overwrite")
    if p.exists() and p.is_dir():
        raise OutputExists(f"{p} is a directory")
    return p


def write_atomic(path: str | Path, data: str | bytes, force: bool = False, *,
                 make_parents: bool = False) -> Path:
    """Write a file all at once (temp file + rename) so nothing half-written is left.

    The folder must exist unless ``make_parents``; the file gets the mode a plain
    ``open()`` would give (umask respected; an overwritten file keeps its mode).
    """
    p = check_writable(path, force)
    if make_parents:
        _make_folder(p.parent)
    elif not p.parent.is_dir():
        raise OutputExists(f"folder {p.parent} does not exist")
    mode = p.stat().st_mode & 0o7777 if p.exists() else 0o666 & ~_umask()
    fd, tmp = tempfile.mkstemp(dir=p.parent, prefix=f".{p.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data.encode("utf-8") if isinstance(data, str) else data)
        os.chmod(tmp, mode)
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return p


def _make_folder(folder: Path) -> None:
    """Create ``folder`` and its parents; OutputExists naming the part that is a file (an
    existing path in the way of the output, README exit 6)."""
    for part in (folder, *folder.parents):
        if part.exists():
            if not part.is_dir():
                raise OutputExists(f"{part} is a file, not a folder; give a folder to write "
                                   "into (it is created if missing)")
            break
    folder.mkdir(parents=True, exist_ok=True)


def _umask() -> int:
    current = os.umask(0)
    os.umask(current)
    return current


def progress_enabled(args: Any) -> bool:
    """True when a progress bar should be shown: --progress on always (the bar goes to
    stderr, JSON to stdout), auto when stderr is a terminal and without --json."""
    mode = getattr(args, "progress", "auto")
    if mode != "auto":
        return mode == "on"
    return sys.stderr.isatty() and not getattr(args, "json", False)

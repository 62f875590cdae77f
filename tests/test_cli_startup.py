"""Start-up cost of the command line: `--version` and `--help` leave the heavy libraries alone."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

HEAVY = ("scipy", "matplotlib")

_PROBE = """
import json, sys
from ookframe.cli.main import main
try:
    code = main({argv!r})
except SystemExit as e:  # argparse's --help exits
    code = e.code
sys.stdout.flush()
print(json.dumps(sorted({{m.split('.')[0] for m in sys.modules}})), file=sys.stderr)
"""


def _loaded(argv: list[str]) -> tuple[str, set[str]]:
    """Run the CLI in a fresh interpreter; return its stdout and the top-level modules loaded."""
    r = subprocess.run([sys.executable, "-c", _PROBE.format(argv=argv)], capture_output=True,
                       text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    return r.stdout, set(json.loads(r.stderr.strip().splitlines()[-1]))


def test_version_imports_no_numeric_library():
    """`ookframe --version` answers before any command module, numpy or rich is imported
    (what a fast start means here: common practice, no source)."""
    out, mods = _loaded(["--version"])
    assert out.startswith("ookframe ")
    assert not mods & {*HEAVY, "numpy", "rich", "jinja2"}


@pytest.mark.parametrize("argv", [["--help"], ["stress", "--help"], ["check", "--help"]])
def test_help_imports_no_scipy_matplotlib_or_jinja2(argv):
    """Building every command's parser must not import scipy, matplotlib or jinja2 (they
    load only when a command computes, plots or renders C with them)."""
    out, mods = _loaded(argv)
    assert "usage: ookframe" in out
    assert not mods & {*HEAVY, "jinja2"}


def test_public_api_loads_on_first_use():
    """`import ookframe` is cheap; a public name imports its module when first used and
    `from ookframe import *` still gives every name of __all__."""
    probe = ("import sys, ookframe; a = 'scipy' in sys.modules; "
             "from ookframe import *; f = decode_frames; "
             "print(a, all(hasattr(ookframe, n) for n in ookframe.__all__), "
             "ookframe.stress.run_stress is run_stress)")
    r = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, timeout=120)
    assert r.stdout.split() == ["False", "True", "True"], r.stderr

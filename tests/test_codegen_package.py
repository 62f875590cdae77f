"""The C templates ship inside the wheel: build it from a clean copy, import the package
from the unpacked wheel (not the source tree) and render a header."""

from __future__ import annotations

import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
OFFLINE_HINTS = ("Could not find a version that satisfies", "No matching distribution",
                 "Failed to establish a new connection", "Temporary failure in name resolution")

PROBE = """
import sys
sys.path.insert(0, sys.argv[1])
import ookframe
from ookframe.codegen import emit_header
from ookframe.codegen.render import templates_dir
from ookframe.demo import example_text
from ookframe.spec_io import spec_from_dict
import tomllib
assert ookframe.__file__.startswith(sys.argv[1]), ookframe.__file__
assert str(templates_dir()).startswith(sys.argv[1]), templates_dir()
text = emit_header(spec_from_dict(tomllib.loads(example_text()))).text
assert "hive_scale_tx_next" in text
print(templates_dir())
"""


def _clean_copy(dest: Path) -> None:
    files = subprocess.run(["git", "ls-files", "--cached", "--others", "--exclude-standard"],
                           cwd=ROOT, capture_output=True, text=True, check=True).stdout.split()
    for rel in files:
        src = ROOT / rel
        if src.is_file():
            (dest / rel).parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(src, dest / rel)


@pytest.mark.slow
@pytest.mark.skipif(shutil.which("git") is None, reason="git not installed")
def test_wheel_contains_templates_and_renders(tmp_path):
    """pip wheel (PEP 517, setuptools) of a clean copy holds ookframe/codegen_templates/*.j2
    and every module of the source tree; imported from the unpacked wheel, emit works."""
    src = tmp_path / "src"
    _clean_copy(src)
    proc = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w",
                           str(tmp_path / "dist"), str(src)], capture_output=True, text=True,
                          timeout=300)
    if proc.returncode != 0 and any(h in proc.stderr for h in OFFLINE_HINTS):
        pytest.skip("the build backend (setuptools>=68) cannot be fetched: no package index")
    assert proc.returncode == 0, proc.stderr[-3000:]
    wheel = next((tmp_path / "dist").glob("ookframe-*.whl"))
    names = set(zipfile.ZipFile(wheel).namelist())
    assert "ookframe/codegen_templates/header.h.j2" in names
    modules = {p.relative_to(ROOT).as_posix() for p in (ROOT / "ookframe").rglob("*.py")}
    assert modules <= names, f"missing from the wheel: {sorted(modules - names)}"
    site = tmp_path / "site"
    zipfile.ZipFile(wheel).extractall(site)
    run = subprocess.run([sys.executable, "-c", PROBE, str(site)], capture_output=True,
                         text=True, cwd=tmp_path, timeout=120)
    assert run.returncode == 0, run.stderr[-3000:]
    assert run.stdout.strip() == str(site / "ookframe" / "codegen_templates")


def test_every_runtime_dependency_is_imported():
    """Each package in [project] dependencies of pyproject.toml is imported by the library
    (a declared dependency nothing imports is a defect; test-only helpers such as
    bitstring belong in the test extra). Import names: the distribution name, lower case,
    '-' as '_' (true for every current dependency)."""
    import re
    import tomllib

    deps = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["dependencies"]
    names = {re.split(r"[<>=!~\[ ;]", d, maxsplit=1)[0].lower().replace("-", "_") for d in deps}
    source = "\n".join(p.read_text(encoding="utf-8") for p in (ROOT / "ookframe").rglob("*.py"))
    imported = set(re.findall(r"^\s*(?:from|import)\s+([A-Za-z_]\w*)", source, re.M))
    assert names and not names - imported, f"declared but never imported: {names - imported}"
    extras = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["optional-dependencies"]
    assert any(d.startswith("bitstring") for d in extras["test"])
    assert "bitstring" not in imported

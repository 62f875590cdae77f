"""The built-in demo scenario: a beehive scale node's frame, encoded and decoded."""

from __future__ import annotations

from importlib import resources

EXAMPLES = "ookframe.examples"
DEMO_SPEC = "hive_scale.toml"


def example_names() -> list[str]:
    """File names of the example specs shipped with the package."""
    return sorted(p.name for p in resources.files(EXAMPLES).iterdir() if p.name.endswith(".toml"))


def example_text(name: str = DEMO_SPEC) -> str:
    """TOML text of a shipped example spec."""
    return resources.files(EXAMPLES).joinpath(name).read_text(encoding="utf-8")

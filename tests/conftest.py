"""Shared fixtures: example specs built through the public API."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

import ookframe
from ookframe.demo import example_names, example_text
from ookframe.spec_io import spec_and_defaults_from_dict

EXAMPLES_DIR = Path(__file__).resolve().parent.parent / "examples"


def example_spec(name: str) -> tuple[ookframe.FrameSpec, dict[str, object]]:
    return spec_and_defaults_from_dict(tomllib.loads(example_text(name)))


@pytest.fixture(params=example_names())
def example(request) -> tuple[ookframe.FrameSpec, dict[str, object]]:
    """(spec, default values) of every shipped example."""
    return example_spec(request.param)

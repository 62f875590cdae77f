"""Render the C header from the Jinja2 templates in ``codegen_templates/``.

One Environment (StrictUndefined, trim_blocks, lstrip_blocks, no autoescape); the
templates are looked up inside the installed package (``ookframe.codegen_templates``,
mapped from the top-level folder by pyproject.toml) and, in a source checkout that is
not installed, in the top-level folder itself.
"""

from __future__ import annotations

from functools import lru_cache
from importlib import resources
from pathlib import Path

import jinja2

from ..errors import CodegenError
from .model import CModel

TEMPLATE = "header.h.j2"


def templates_dir() -> Path:
    """Return the folder holding the C templates."""
    try:
        found = resources.files("ookframe.codegen_templates")
        path = Path(str(found))
        if (path / TEMPLATE).is_file():
            return path
    except ModuleNotFoundError:
        pass
    source = Path(__file__).resolve().parents[2] / "codegen_templates"
    if (source / TEMPLATE).is_file():
        return source
    raise CodegenError("C templates not found: the ookframe installation lacks "
                       "ookframe/codegen_templates (reinstall the package)")


@lru_cache(maxsize=1)
def environment() -> jinja2.Environment:
    """Return the one Jinja2 environment used for every template."""
    return jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(templates_dir())),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        autoescape=False,
    )


def render_model(model: CModel) -> str:
    """Return the header text for a validated model."""
    try:
        return environment().get_template(TEMPLATE).render(m=model)
    except jinja2.TemplateError as exc:  # a template bug, not a user error
        raise CodegenError(f"internal template error: {exc}") from exc

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
from typing import TYPE_CHECKING

from ..errors import CodegenError
from .model import CModel

if TYPE_CHECKING:  # jinja2 is imported when a header is rendered, not at start-up
    import jinja2

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
    import jinja2

    return jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(templates_dir())),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        autoescape=False,
        extensions=["jinja2.ext.do"],
    )


def render_model(model: CModel) -> str:
    """Return the header text for a validated model."""
    import jinja2

    try:
        return environment().get_template(TEMPLATE).render(m=model)
    except jinja2.TemplateError as exc:  # a template bug, not a user error
        raise CodegenError(f"internal template error: {exc}") from exc

"""Jinja2 templates of every line of C that ``ookframe emit`` writes (data, no code).

Installed as the package ``ookframe.codegen_templates`` (see pyproject.toml)."""

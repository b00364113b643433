"""Loading the Jinja2 templates shipped in ``scorecard.templates`` (the top-level templates/ folder)."""

from __future__ import annotations

import functools
from importlib import resources


@functools.cache
def environment():
    """Return the Jinja2 environment of the report templates, autoescaping on."""
    import jinja2

    folder = resources.files("scorecard.templates")
    return jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(folder)),
        autoescape=jinja2.select_autoescape(enabled_extensions=("html", "xml"), default_for_string=True, default=True),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )


def template_text(name: str) -> str:
    """Return a template's source text."""
    return resources.files("scorecard.templates").joinpath(name).read_text(encoding="utf-8")

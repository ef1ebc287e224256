"""Jinja2 templates and static files of the report and the sheets (package data).

Templates live in ``outputs/templates/``, CSS and JavaScript in ``outputs/static/``. Autoescaping is
on for every template; values are escaped with the standard library's :func:`html.escape` (quotes
included). Data reaches a page's script only through :func:`embed_json`, one
``<script type="application/json">`` block read with ``JSON.parse``.
"""
from __future__ import annotations

import html
import re
from functools import lru_cache
from importlib import resources
from typing import Any

from markupsafe import Markup

from strainline.optimizer.outputs.formatting import fmt, script_json

_PACKAGE = "strainline.optimizer.outputs"


def _escape(value: Any) -> Any:
    """Escape every value a template prints (Markup passes: it is already safe)."""
    if isinstance(value, Markup):
        return value
    return Markup(html.escape("" if value is None else str(value)))


@lru_cache(maxsize=1)
def environment():
    """The shared Jinja2 environment (autoescape on, undefined names are errors)."""
    from jinja2 import Environment, PackageLoader, StrictUndefined

    env = Environment(loader=PackageLoader(_PACKAGE, "templates"), autoescape=True, finalize=_escape,
                      undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    env.filters["fmt"] = fmt
    return env


@lru_cache(maxsize=8)
def static_text(name: str) -> str:
    """The text of ``outputs/static/<name>``."""
    return resources.files(_PACKAGE).joinpath("static", name).read_text(encoding="utf-8")


def inline_script(code: str) -> Markup:
    """Trusted script text (our static files, the plotly.js bundle) made safe inside ``<script>``:
    nothing in it can close the element."""
    return Markup(re.sub(r"</(script)", r"<\\/\1", code, flags=re.IGNORECASE))


def inline_style(css: str) -> Markup:
    """Trusted CSS text (our static files) made safe inside ``<style>``."""
    return Markup(re.sub(r"</(style)", r"<\\/\1", css, flags=re.IGNORECASE))


def embed_json(data: Any) -> Markup:
    """Page data for ``<script type="application/json">`` (see :func:`formatting.script_json`)."""
    return Markup(script_json(data))


def render(template: str, **context: Any) -> str:
    """Render ``templates/<template>`` with ``context``."""
    return environment().get_template(template).render(**context)


__all__ = ["environment", "static_text", "inline_script", "inline_style", "embed_json", "render"]

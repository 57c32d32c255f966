"""The template environment and the words the templates share.

:func:`make_environment` gives the strict, autoescaping Jinja environment over the site's own
templates, then the packaged ones (also reachable as ``sitegen:NAME``), with the filters pages use;
the rest turns numbers of the analysis into the words pages print beside them.
"""
from __future__ import annotations

import math
import re
import unicodedata
from dataclasses import fields
from pathlib import Path
from typing import Any, Sequence

import jinja2

from ..model import TIERS
from . import exports


def _pct(value: float | None, digits: int = 1) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    return f"{value * 100:.{digits}f}%"


#: A site template reaches the packaged template of the same name as ``sitegen:NAME``
#: (``{% extends "sitegen:base.html" %}``), so it can extend it and change one block.
PACKAGED_PREFIX = "sitegen"


#: Bidirectional classes (Unicode UAX #9) that can turn the text around them: right-to-left
#: letters and digits, embeddings, overrides and isolates.
_BIDI_TURNING = frozenset({"R", "AL", "AN", "RLE", "RLO", "LRE", "LRO", "PDF", "RLI", "LRI", "FSI", "PDI"})


def isolate(text: object) -> str:
    """Text wrapped in FIRST STRONG ISOLATE ... POP DIRECTIONAL ISOLATE (U+2068, U+2069) when it
    holds right-to-left letters or direction controls, so that it cannot reorder the text around
    it (a page's <title>, where no markup can isolate); other text is left as it is."""
    text = str(text)
    if any(unicodedata.bidirectional(c) in _BIDI_TURNING for c in text):
        return f"\u2068{text}\u2069"
    return text


def firmness_words(stability: float | None) -> str:
    """A reader's words for an archetype's stability (see sitegen.analysis.stability)."""
    from ..analysis.stability import words
    return words(stability)


def make_environment(templates_dirs: Sequence[Path]) -> jinja2.Environment:
    """A strict, autoescaping environment over the template folders, first wins.

    The packaged templates are also reachable under :data:`PACKAGED_PREFIX`
    (``sitegen:base.html``), whatever the site's own folder holds.
    """
    from ..resources import default_templates_dir

    packaged = jinja2.PrefixLoader({PACKAGED_PREFIX: jinja2.FileSystemLoader(str(default_templates_dir()))},
                                   delimiter=":")
    loader = jinja2.ChoiceLoader([jinja2.FileSystemLoader(str(d)) for d in templates_dirs] + [packaged])
    # auto_reload off: one environment serves one build, so templates need not be checked for changes per page.
    env = jinja2.Environment(loader=loader, autoescape=True, undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True, auto_reload=False)
    env.filters["pct"] = _pct
    env.filters["fixed"] = exports.fixed
    env.filters["isolate"] = isolate
    return env


def _template_place(exc: jinja2.TemplateError, template: str) -> tuple[str, int | None]:
    """File and line of a template error: from a syntax error, else from the traceback.

    Jinja rewrites tracebacks so template frames carry the template's file
    name and line; the innermost such frame is where the mistake is.
    """
    if isinstance(exc, jinja2.TemplateSyntaxError):
        return exc.filename or exc.name or template, exc.lineno
    where, line = template, None
    tb = exc.__traceback__
    while tb is not None:
        name = tb.tb_frame.f_code.co_filename
        if name.endswith((".html", ".xml", ".txt")):
            where, line = name, tb.tb_lineno
        tb = tb.tb_next
    return where, line


def _context(page: Any) -> dict[str, Any]:
    # Shallow on purpose: nested dataclasses stay objects for the template.
    return {f.name: getattr(page, f.name) for f in fields(page)}


def other_reason(k_reason: str) -> str:
    """The clauses of a partition's ``k_reason`` that say what its other decks are: how many decks fit
    no archetype, and the groups given up (whose decks are among them)."""
    parts = [p.strip().rstrip(".") for p in re.split(r"(?<=\.)\s+|;\s+", k_reason or "")]
    keep = [p for p in parts if "fit no archetype" in p or "given up" in p]
    return ("; ".join(keep) + ".") if keep else ""


def tier_words() -> tuple[tuple[str, str], ...]:
    """(tier word, what it means) for every tier of :data:`sitegen.model.TIERS`."""
    out = []
    for i, (name, least) in enumerate(TIERS):
        if i == 0:
            out.append((name, f"played by {least:.0%} of the decks or more"))
        else:
            out.append((name, f"played by {least:.0%} or more and under {TIERS[i - 1][1]:.0%}" if least > 0
                        else f"played by under {TIERS[i - 1][1]:.0%} of the decks"))
    return tuple(out)

"""User text (titles) as it is displayed: one line, at most a set length, safe for rich.

A study's title is whatever its author wrote, of any length. Files of data (the result
JSON) keep it whole; screens and pages show it shortened, so that a title of 100,000
characters neither floods the output nor slows it: rich's highlighter takes time that
grows with the square of a long run of word characters in a printed string.
"""

from __future__ import annotations

from rich.markup import escape

TITLE_DISPLAY_LENGTH = 120
"""Characters of a title shown on screens and pages, the ellipsis included."""

ELLIPSIS = "\u2026"
_SCAN_LENGTH = 10_000


def short_title(text: str, limit: int = TITLE_DISPLAY_LENGTH) -> str:
    """``text`` on one line (runs of whitespace and control characters become one
    space), cut to ``limit`` characters with an ellipsis when longer."""
    # Never scan more of a huge title than can matter (this is linear, and quick).
    head = text[:_SCAN_LENGTH]
    flat = " ".join("".join(c if c.isprintable() else " " for c in head).split())
    if len(flat) > limit:
        return flat[:limit - 1].rstrip() + ELLIPSIS
    return flat + ELLIPSIS if len(text) > len(head) else flat


def console_title(text: str, limit: int = TITLE_DISPLAY_LENGTH) -> str:
    """:func:`short_title` with rich markup escaped, for ``console.print`` (a title with
    square brackets, such as "Main [phase 2]", is printed as written)."""
    return escape(short_title(text, limit))

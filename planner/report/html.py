"""Self-contained HTML pages: one file, images embedded, no scripts or outside links."""

from __future__ import annotations

import base64
import html
from collections.abc import Iterable

import pandas as pd

CAUTION = (
    "Decision support only. Staffing and capacity decisions follow local policy, "
    "safe-staffing review and professional judgement; nurse ratios are minimums, not "
    "guarantees of safe care."
)

#: Said (terminal and report) when the forecast's backtest was read from the backtest cache.
CACHED_BACKTEST = "backtest reused from cache (same history and settings)"

STYLE = """
body { font-family: system-ui, sans-serif; margin: 2em auto; max-width: 70em; color: #222; }
h1 { font-size: 1.6em; margin-bottom: 0.2em; } h2 { font-size: 1.2em; margin-top: 1.6em; }
.caution { border: 1px solid #888; padding: 0.6em 1em; background: #f4f4f4; }
.headline { font-size: 1.15em; }
.answer { font-size: 1.05em; } .answer dt { margin-top: 0.5em; }
caption { text-align: left; font-size: 0.95em; padding: 0.3em 0; }
table { border-collapse: collapse; font-size: 0.85em; }
th, td { border-bottom: 1px solid #ddd; padding: 0.25em 0.6em; text-align: right; }
th { background: #eef2f7; }
td:first-child, th:first-child { text-align: left; }
td { white-space: nowrap; }
img { max-width: 100%; } dt { font-weight: 600; } dd { margin: 0 0 0.4em 1.5em; }
"""


def escape(text: object) -> str:
    return html.escape(str(text))


def image(png: bytes, alt: str) -> str:
    data = base64.b64encode(png).decode("ascii")
    return f'<img alt="{escape(alt)}" src="data:image/png;base64,{data}">'


def table(frame: pd.DataFrame, formats: dict[str, str] | None = None) -> str:
    """An HTML table; ``formats`` maps columns to format specs (e.g. ".1%")."""
    formats = formats or {}
    head = "".join(f"<th>{escape(column)}</th>" for column in frame.columns)
    rows = []
    for values in frame.itertuples(index=False):
        cells = []
        for column, value in zip(frame.columns, values, strict=True):
            spec = formats.get(column)
            cells.append(f"<td>{escape(format(value, spec) if spec else value)}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def facts(items: Iterable[tuple[str, str]]) -> str:
    """A definition list of (term, description) pairs."""
    body = "".join(f"<dt>{escape(term)}</dt><dd>{escape(text)}</dd>" for term, text in items)
    return f"<dl>{body}</dl>"


def page(title: str, sections: Iterable[tuple[str, str]], subtitle: str = "") -> str:
    """A whole page: title, the caution, then (heading, HTML body) sections."""
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>{escape(title)}</title><style>{STYLE}</style></head><body>",
        f"<h1>{escape(title)}</h1>",
    ]
    if subtitle:
        parts.append(f"<p>{escape(subtitle)}</p>")
    parts.append(f'<p class="caution"><strong>Caution.</strong> {escape(CAUTION)}</p>')
    for heading, body in sections:
        parts.append(f"<h2>{escape(heading)}</h2>{body}" if heading else body)
    parts.append("</body></html>")
    return "\n".join(parts)

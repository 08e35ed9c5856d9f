"""HTML and figure helpers shared by the section report, the batch index and the comparison page.

The pages are self-contained: one style sheet (`CSS`) inlined, figures embedded as PNG
``data:`` URIs (`figure_png`). Figures are `matplotlib.figure.Figure` objects rendered
without pyplot, so drawing a report needs no display and never changes the caller's
matplotlib backend.

Examples
--------
>>> grid(("Batch", "Sections"), [("A", 3)])
'<div class="tablewrap"><table class="grid"><thead><tr><th>Batch</th><th>Sections</th></tr></thead><tbody><tr><td class="txt">A</td><td>3</td></tr></tbody></table></div>'
>>> kv_table([("Pixel size", "0.5 µm")])
'<div class="tablewrap"><table class="kv"><tr><th>Pixel size</th><td>0.5 µm</td></tr></table></div>'
"""

from __future__ import annotations

import base64
import html
import io
import re

from matplotlib.figure import Figure

CAUTION = (
    "These numbers are estimates computed from one image of one section. They are meant for "
    "screening, ranking and comparing materials and batches, not as design values. Verify "
    "them by measurement on the material itself, and follow local codes, applicable standards "
    "and licensed engineering practice for any design or qualification decision."
)

CAUTION_SECTION = (f'<section class="caution"><strong>Caution.</strong> {html.escape(CAUTION)}'
                   "</section>")
"""`CAUTION` as the first section of a page."""

CAUTION_MANY = (
    "These numbers are estimates computed from images of polished sections, each section one "
    "sample of its batch. They are meant for screening, ranking and comparing materials and "
    "batches, not as design values. Verify them by measurement on the material itself, and "
    "follow local codes, applicable standards and licensed engineering practice for any "
    "design or qualification decision."
)

CAUTION_MANY_SECTION = (f'<section class="caution"><strong>Caution.</strong> '
                        f"{html.escape(CAUTION_MANY)}</section>")
"""The caution of a page over many sections (batch index, comparison)."""

PALETTE = ("#20304f", "#e0a030", "#3f9e74", "#c8553d", "#7b68b5", "#4fb0c6", "#d98cb3",
           "#8c8c6a")
"""Colours of phases and batches, in order."""


STANDALONE_CSP = ("default-src 'none'; img-src data:; style-src 'unsafe-inline'; "
                  "base-uri 'none'; form-action 'none'")
"""Content-Security-Policy of every page written to disk: no script runs, nothing loads
from elsewhere, even if a user's string slipped through unescaped."""


def csp_meta(policy: str = STANDALONE_CSP) -> str:
    """The ``<meta http-equiv>`` element that carries *policy* in a written page."""
    return (f'<meta http-equiv="Content-Security-Policy" '
            f'content="{html.escape(policy, quote=False)}">')


def page(title: str, meta: str, body: str) -> str:
    """A whole self-contained HTML page.

    Parameters
    ----------
    title : str
        Plain text (escaped here): the window title and the heading.
    meta : str
        HTML of the line under the heading.
    body : str
        HTML of the sections.

    Returns
    -------
    str
    """
    t = html.escape(title)
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">{csp_meta()}'
            f'<title>{t}</title><meta name="viewport" content="width=device-width, '
            'initial-scale=1">'
            f"<style>{CSS}</style></head><body><header><h1>{t}</h1>"
            f'<p class="meta">{meta}</p></header><main>{body}</main></body></html>\n')


def kv_table(rows) -> str:
    """A two-column table of (name, value) rows, both escaped."""
    body = "".join(f"<tr><th>{html.escape(str(k))}</th><td>{html.escape(str(v))}</td></tr>"
                   for k, v in rows)
    return f'<div class="tablewrap"><table class="kv">{body}</table></div>'


def grid(head, rows, raw: bool = False) -> str:
    """A table with a header row.

    Parameters
    ----------
    head : sequence of str
        Column headings (escaped).
    rows : iterable of sequence
        The cells of each row, escaped unless *raw*.
    raw : bool
        The cells are HTML already.

    Returns
    -------
    str
    """
    esc = (lambda s: s) if raw else (lambda s: html.escape(str(s)))
    body = [[_cell(esc(c)) for c in r] for r in rows]
    words = [i for i, c in enumerate(body[0]) if 'class="txt"' in c] if body else []
    h = "".join(f'<th class="txt">{html.escape(c)}</th>' if i in words and i
                else f"<th>{html.escape(c)}</th>" for i, c in enumerate(head))
    b = "".join("<tr>" + "".join(r) + "</tr>" for r in body)
    return (f'<div class="tablewrap"><table class="grid"><thead><tr>{h}</tr></thead>'
            f"<tbody>{b}</tbody></table></div>")


_NUMERIC = re.compile(r"^(<[^>]*>)*[-+−–±0-9.]")


def _cell(text: str) -> str:
    """A body cell: numbers right-aligned (the default), words left-aligned; a list or range
    of numbers (``a / b / c``, ``a – b``) may wrap at its separators in a narrow frame."""
    if text and not _NUMERIC.match(text):
        return f'<td class="txt">{text}</td>'
    if " / " in text or " – " in text:
        return f'<td class="wrap">{text}</td>'
    return f"<td>{text}</td>"


def new_axes(figsize: tuple[float, float], nrows: int = 1, ncols: int = 1, **kwargs):
    """A figure and its axes (``Figure.subplots``), to be turned into a URI by `figure_png`."""
    fig = Figure(figsize=figsize)
    return fig, fig.subplots(nrows, ncols, **kwargs)


def figure_png(fig) -> str:
    """A matplotlib figure as a ``data:`` URI (and close it)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110, bbox_inches="tight")
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;margin:0;color:#1d232b;
background:#f6f5f1;line-height:1.45}
header{background:#1f3a3d;color:#f6f5f1;padding:18px 32px}
header h1{margin:0;font-size:1.45rem;font-weight:600}
.meta{margin:4px 0 0;opacity:.8;font-size:.9rem}
main{max-width:1100px;margin:0 auto;padding:12px 32px 48px}
section{background:#fff;border:1px solid #dedbd2;border-radius:6px;padding:14px 20px;
margin:16px 0}
h2{font-size:1.1rem;margin:0 0 10px;color:#1f3a3d}
h3{font-size:1rem;margin:14px 0 6px}
.caution{background:#fff7e0;border-color:#e6c35c}
.warn{background:#fdecea;border-color:#e3a39a}
table{border-collapse:collapse;font-size:.92rem;margin:6px 0}
.kv th{text-align:left;padding:3px 14px 3px 0;color:#4a5560;font-weight:500;vertical-align:top}
.kv td{padding:3px 0;overflow-wrap:anywhere}
.grid th,.grid td{border-bottom:1px solid #e6e3da;padding:4px 7px;text-align:right}
.grid th:first-child,.grid td:first-child{text-align:left}
.grid thead th{background:#eef1ee}
.figs{display:flex;flex-wrap:wrap;gap:16px}
figure{margin:0}
figure{max-width:100%}
figure img{max-width:480px;width:100%;border:1px solid #dedbd2;box-sizing:border-box}
figure.wide{width:100%}
figure.wide img{max-width:100%;width:auto}
section{min-width:0}
.tablewrap{max-width:100%;overflow-x:auto}
.grid th{vertical-align:bottom;min-width:3.5em}
.grid td{white-space:nowrap}
.grid td:first-child{white-space:normal;min-width:8em}
.grid td.txt,.grid th.txt{text-align:left;white-space:normal}
.grid td.wrap{white-space:normal;min-width:4.5em}
.matrix td:first-child{min-width:0;text-align:right}
.sig{font-size:.75rem;background:#fdecea;color:#8a2a1d;border-radius:3px;padding:1px 6px;
font-weight:500}
.nsig{font-size:.75rem;background:#eef1ee;color:#4a5560;border-radius:3px;padding:1px 6px;
font-weight:400}
code{background:#f3f2ee;padding:0 3px;border-radius:3px}
figcaption{font-size:.85rem;color:#4a5560}
.swatch{display:inline-block;width:.9em;height:.9em;border-radius:2px;margin-right:6px;
vertical-align:-1px;border:1px solid #0003}
.note{font-size:.86rem;color:#4a5560}
.prism{background:#eef4f6;border-left:4px solid #3f7f8c;padding:8px 12px}
pre{background:#f3f2ee;padding:10px;overflow-x:auto;font-size:.82rem}
"""
"""The style sheet every page inlines."""

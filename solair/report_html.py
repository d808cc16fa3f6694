"""HTML building blocks of the report: the style sheet, escaping, numbers, tables, figures.

Pure string functions, with no knowledge of solair results (those are in
:mod:`solair.report`). Every piece of text is escaped with :func:`html.escape`.
"""

from __future__ import annotations

import base64
import html

import numpy as np
import pandas as pd

__all__ = ["CSS", "esc", "figure", "fmt", "is_numeric", "table"]

CSS = """
body{font-family:"DejaVu Sans",Arial,sans-serif;font-size:10.5pt;color:#222;max-width:60em;
margin:1.5em auto;padding:0 1em;line-height:1.4}
h1{font-size:1.6em;margin-bottom:.2em}h2{font-size:1.25em;border-bottom:2px solid #c33;
padding-bottom:.15em;margin-top:1.6em}h3{font-size:1.05em;margin:1.2em 0 .4em}
table{border-collapse:collapse;margin:.4em 0 1em;font-size:9.5pt}
th,td{border:1px solid #bbb;padding:.2em .5em;text-align:right}
th{background:#eee}td.t,th.t{text-align:left}
.caution{background:#fff4e5;border-left:6px solid #e67e00;padding:.6em 1em;font-weight:bold}
figure{margin:1em 0;page-break-inside:avoid}figure img{max-width:100%;height:auto}
figcaption{font-size:9pt;color:#555}.meta{color:#555;font-size:9pt}
ol.sources li{margin-bottom:.3em}
@media print{body{max-width:none}h2{page-break-after:avoid}}
"""


def esc(value: object) -> str:
    """``str(value)`` escaped for HTML text and attribute values."""
    return html.escape(str(value), quote=True)


def fmt(value: object, digits: int = 1) -> str:
    """A number as a table shows it: ``digits`` decimals, no "-0.0", "–" for NaN/inf."""
    if isinstance(value, (float, np.floating)):
        if not np.isfinite(value):
            return "–"
        text = f"{value:.{digits}f}"
        return text[1:] if text.startswith("-") and float(text) == 0.0 else text
    if isinstance(value, (int, np.integer)):
        return f"{value:d}"
    return str(value)


def table(frame: pd.DataFrame, *, digits: int = 1, index: bool = True,
          caption: str = "") -> str:
    """An escaped HTML table; text columns left-aligned."""
    head = []
    if index:
        head.append(f'<th class="t">{esc(frame.index.name or "")}</th>')
    head += [f'<th class="{"t" if not is_numeric(frame[c]) else ""}">{esc(c)}</th>'
             for c in frame.columns]
    rows = []
    for key, row in frame.iterrows():
        cells = [f'<td class="t">{esc(key)}</td>'] if index else []
        for c in frame.columns:
            cls = "" if is_numeric(frame[c]) else ' class="t"'
            cells.append(f"<td{cls}>{esc(fmt(row[c], digits))}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    return (f"<table>{cap}<thead><tr>{''.join(head)}</tr></thead><tbody>"
            + "".join(rows) + "</tbody></table>")


def is_numeric(series: pd.Series) -> bool:
    """Whether a column is numeric (right-aligned in tables)."""
    return bool(pd.api.types.is_numeric_dtype(series))


def figure(fig_bytes: bytes, caption: str) -> str:
    """A PNG embedded as a base64 ``data:`` URI in a ``<figure>`` with its caption."""
    data = base64.b64encode(fig_bytes).decode("ascii")
    return (f'<figure><img alt="{esc(caption)}" src="data:image/png;base64,{data}">'
            f"<figcaption>{esc(caption)}</figcaption></figure>")

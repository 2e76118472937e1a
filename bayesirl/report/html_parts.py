"""Building blocks of the HTML report: style sheet, escaping, number cells, tables, figures.

Kept apart from :mod:`bayesirl.report.html` (the sections) so that new sections, such as the
demonstration suggestions, reuse the same cells and tables.
"""

from __future__ import annotations

from html import escape

import numpy as np

from bayesirl.report import plots

CSS = """
:root { --ink: #22303c; --muted: #5d6976; --line: #d8dde3; --paper: #f6f4ef;
  --strong: #2e6b3a; --mid: #7d6415; --weak: #a33b20; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink);
  font: 15px/1.55 "Segoe UI", "Helvetica Neue", Arial, sans-serif; }
main { max-width: 1100px; margin: 0 auto; padding: 26px 28px 60px; }
h1 { font-size: 1.65rem; margin: 0 0 2px; letter-spacing: -0.01em; }
h2 { font-size: 1.2rem; margin: 14px 0 10px; padding-bottom: 4px;
  border-bottom: 2px solid var(--line); }
h3 { font-size: 1rem; margin: 16px 0 6px; }
.run { color: var(--muted); margin: 0 0 14px; font-size: 0.9rem; }
.verdict { font-size: 1.06rem; background: #fff; border-left: 6px solid var(--ink);
  padding: 14px 18px; margin: 0; }
.banner { background: #fbe3dc; border: 2px solid var(--weak); color: #5e1a0b;
  padding: 12px 18px; border-radius: 5px; margin: 14px 0; }
.banner strong { display: block; font-size: 1.2rem; margin-bottom: 4px; }
.banner ul { margin: 6px 0 0; padding-left: 20px; }
nav { display: flex; flex-wrap: wrap; gap: 4px 14px; margin: 16px 0 6px; font-size: 0.9rem; }
nav a { color: var(--ink); }
section { background: #fff; border: 1px solid var(--line); border-radius: 6px;
  padding: 4px 22px 16px; margin: 16px 0; }
#verdict { background: transparent; border: 0; padding: 0; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; font-size: 0.9rem; margin: 6px 0 10px; }
th, td { padding: 4px 11px; border-bottom: 1px solid var(--line); text-align: right;
  font-variant-numeric: tabular-nums; vertical-align: top; }
th { background: #eceff2; font-weight: 600; }
.l { text-align: left; }
tbody tr:nth-child(even) { background: #f8f9fa; }
.v-strong, .ok { color: var(--strong); font-weight: 600; }
.v-mid { color: var(--mid); font-weight: 600; }
.v-weak, .fail { color: var(--weak); font-weight: 600; }
.v-fixed { color: var(--muted); font-style: italic; }
.note { color: var(--muted); font-size: 0.9rem; }
figure { margin: 10px 0 6px; }
figure img { max-width: 100%; height: auto; display: block; }
figcaption { color: var(--muted); font-size: 0.88rem; margin-top: 4px; }
code { background: #eceff2; padding: 1px 5px; border-radius: 3px; font-size: 0.88em;
  white-space: nowrap; }
ul.plain { padding-left: 20px; margin: 6px 0; }
ul.plain li { margin: 3px 0; }
.caution { background: #fbf3dc; border: 1px solid #cdb46c; padding: 12px 16px; margin: 8px 0; }
"""


class Raw(str):
    """Markup that is already safe and must not be escaped again."""


def _cell(x) -> str:
    return x if isinstance(x, Raw) else escape(str(x))


def num(x, fmt: str = ".3g") -> str:
    """Format a number for a table cell (None as a dash, NaN as ``n/a``).

    Parameters
    ----------
    x : float, int or None
    fmt : str
        Format specification.

    Returns
    -------
    str
    """
    if x is None:
        return "\u2013"
    x = float(x)
    return "n/a" if np.isnan(x) else format(x, fmt)


def interval(pair, fmt: str = ".3g") -> str:
    """``[lo, hi]`` with both ends formatted by :func:`num`."""
    return f"[{num(pair[0], fmt)}, {num(pair[1], fmt)}]"


def table(head, rows, align: str = "") -> str:
    """An HTML table; cells are escaped unless they are :class:`Raw`.

    Parameters
    ----------
    head : sequence of str
    rows : sequence of sequences
    align : str
        One letter per column, ``l`` for left-aligned text (default: right, for numbers).

    Returns
    -------
    str
    """
    def cls(k):
        return ' class="l"' if k < len(align) and align[k] == "l" else ""

    out = ['<div class="scroll"><table><thead><tr>']
    out += [f"<th{cls(k)}>{_cell(h)}</th>" for k, h in enumerate(head)]
    out.append("</tr></thead><tbody>")
    for row in rows:
        out.append("<tr>" + "".join(f"<td{cls(k)}>{_cell(c)}</td>"
                                    for k, c in enumerate(row)) + "</tr>")
    out.append("</tbody></table></div>")
    return "".join(out)


def figure(fig, alt: str, caption: str, missing: str) -> str:
    """An embedded figure, or the ``missing`` note when there is nothing to draw."""
    if fig is None:
        return f'<p class="note">{escape(missing)}</p>'
    return (f'<figure><img src="{plots.data_uri(fig)}" alt="{escape(alt)}">'
            f"<figcaption>{escape(caption)}</figcaption></figure>")


def mark(ok: bool) -> Raw:
    return Raw('<span class="ok">ok</span>' if ok else '<span class="fail">fails</span>')

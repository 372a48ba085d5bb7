"""A tiny document model rendered both to Markdown and to self-contained HTML.

Reports are built as a list of blocks (headings, paragraphs, bullet lists, tables and
images); :func:`to_markdown` and :func:`to_html` render the same content, so the two
never drift apart.  Images are embedded into the HTML as base64 data URIs.
"""

from __future__ import annotations

import base64
import html
from dataclasses import dataclass, field
from pathlib import Path


@dataclass(frozen=True)
class Heading:
    text: str
    level: int = 2


@dataclass(frozen=True)
class Para:
    text: str


@dataclass(frozen=True)
class Bullets:
    items: tuple[str, ...]


@dataclass(frozen=True)
class Table:
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]


@dataclass(frozen=True)
class Banner:
    """The answer at the top of a report: a one-word label and the sentence that says why.

    In HTML a coloured box whose label is spelled out in capitals and marked with a
    symbol, so that it reads the same without colour."""

    label: str
    text: str


#: banner label -> (symbol, background, border) in HTML; unknown labels are grey
BANNER_STYLE = {"consistent": ("\u2714", "#e3f4e6", "#2e7d32"),
                "tension": ("\u26a0", "#fff4d6", "#b26a00"),
                "uncertain": ("?", "#eceff1", "#546e7a"),
                "excluded": ("\u2716", "#fde4e4", "#b71c1c"),
                "imposed": ("\u2714", "#e3f4e6", "#2e7d32"),
                "bounds-driven": ("\u26a0", "#fff4d6", "#b26a00"),
                "not converged": ("\u2716", "#fde4e4", "#b71c1c")}


@dataclass(frozen=True)
class Image:
    path: Path
    alt: str


@dataclass
class Document:
    """An ordered list of blocks."""

    title: str
    blocks: list = field(default_factory=list)

    def add(self, *blocks) -> Document:
        self.blocks.extend(blocks)
        return self


def to_markdown(doc: Document) -> str:
    out = [f"# {doc.title}", ""]
    for b in doc.blocks:
        if isinstance(b, Banner):
            out += [f"> **{b.label.upper()}**: {b.text}", ""]
        elif isinstance(b, Heading):
            out += ["#" * b.level + " " + b.text, ""]
        elif isinstance(b, Para):
            out += [b.text, ""]
        elif isinstance(b, Bullets):
            out += [f"- {i}" for i in b.items] + [""]
        elif isinstance(b, Table):
            out.append("| " + " | ".join(b.header) + " |")
            out.append("|" + "|".join("---" for _ in b.header) + "|")
            out += ["| " + " | ".join(r) + " |" for r in b.rows]
            out.append("")
        elif isinstance(b, Image):
            out += [f"![{b.alt}]({b.path.name})", ""]
    return "\n".join(out).rstrip() + "\n"


_CSS = ("body{font-family:system-ui,sans-serif;max-width:60em;margin:2em auto;padding:0 1em;"
        "color:#1d2733;line-height:1.45}"
        "table{border-collapse:collapse;margin:1em 0;display:block;overflow-x:auto;"
        "max-width:100%}"
        "td,th{border:1px solid #c9d1da;padding:.25em .6em;font-size:.92em}"
        "th{background:#eef2f6}code{background:#f3f5f7;padding:0 .2em}"
        "img{max-width:100%;border:1px solid #e1e6eb}h1{border-bottom:2px solid #2b6f8f}"
        ".verdict{padding:.8em 1em;margin:1em 0;font-size:1.1em;border-radius:.3em}"
        ".verdict .label{font-weight:bold;letter-spacing:.05em;margin-right:.4em}"
        "footer{margin-top:2em;font-size:.85em;color:#4a5866}")


def _inline(text: str) -> str:
    """Escape, then render `code` spans."""
    parts = html.escape(text).split("`")
    return "".join(f"<code>{p}</code>" if i % 2 else p for i, p in enumerate(parts))


def to_html(doc: Document) -> str:
    out = ["<!DOCTYPE html>", "<html lang='en'><head><meta charset='utf-8'>",
           f"<title>{html.escape(doc.title)}</title><style>{_CSS}</style></head><body>",
           f"<h1>{html.escape(doc.title)}</h1>"]
    for b in doc.blocks:
        if isinstance(b, Banner):
            sym, bg, border = BANNER_STYLE.get(b.label, ("\u2022", "#eceff1", "#546e7a"))
            out.append(f"<div class='verdict' role='status' style='background:{bg};"
                       f"border-left:.5em solid {border}'><span class='label' "
                       f"style='color:{border}'>{sym} {html.escape(b.label.upper())}</span> "
                       f"{_inline(b.text)}</div>")
        elif isinstance(b, Heading):
            out.append(f"<h{b.level}>{_inline(b.text)}</h{b.level}>")
        elif isinstance(b, Para):
            out.append(f"<p>{_inline(b.text)}</p>")
        elif isinstance(b, Bullets):
            out.append("<ul>" + "".join(f"<li>{_inline(i)}</li>" for i in b.items) + "</ul>")
        elif isinstance(b, Table):
            head = "".join(f"<th>{_inline(h)}</th>" for h in b.header)
            rows = "".join("<tr>" + "".join(f"<td>{_inline(c)}</td>" for c in r) + "</tr>"
                           for r in b.rows)
            out.append(f"<table><tr>{head}</tr>{rows}</table>")
        elif isinstance(b, Image) and b.path.is_file():
            data = base64.b64encode(b.path.read_bytes()).decode("ascii")
            out.append(f"<p><img alt='{html.escape(b.alt)}' src='data:image/png;base64,{data}'>"
                       "</p>")
    out.append("</body></html>")
    return "\n".join(out) + "\n"

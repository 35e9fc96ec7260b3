"""report.html: a report's Markdown as one self-contained page.

:func:`report_html` turns the text of a report.md and the bytes of the images it shows
into one HTML page with nothing outside it: the images are inline ``data:`` URIs, the
style sheet is in the page, and no script runs. The page reads on a phone (viewport,
a bounded text width, images that shrink, tables that scroll sideways) and prints to
PDF (no figure or table row split across pages). The caution stands above and below
the report. Markdown is rendered by markdown-it-py (CommonMark with tables) with raw
HTML switched off, so any text a user wrote (a title, a label) is escaped, never run.
Pure: no file is read or written here.
"""

from __future__ import annotations

import base64
import html
import mimetypes
from collections.abc import Mapping

from infer.core.text import caution_sentence

__all__ = ["report_html", "image_sources"]

_STYLE = """
:root { color-scheme: light; }
* { box-sizing: border-box; }
body { margin: 0 auto; padding: 1rem; max-width: 52rem; font: 16px/1.5 system-ui,
  -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; color: #1b1b1b;
  background: #fff; overflow-wrap: break-word; }
h1 { font-size: 1.6rem; line-height: 1.25; }
h2 { font-size: 1.3rem; margin-top: 2rem; border-bottom: 1px solid #ddd; }
h3 { font-size: 1.1rem; }
h1, h2, h3 { break-after: avoid; page-break-after: avoid; }
.caution { margin: 0.5rem 0 1rem; padding: 0.5rem 0.75rem; border-left: 4px solid #b45309;
  background: #fff7ed; font-weight: 600; }
.table { overflow-x: auto; margin: 1rem 0; -webkit-overflow-scrolling: touch; }
table { border-collapse: collapse; font-size: 0.9rem; }
th, td { border: 1px solid #ccc; padding: 0.25rem 0.5rem; text-align: left;
  vertical-align: top; }
th { background: #f3f3f3; }
tr, img, figure, pre, blockquote { break-inside: avoid; page-break-inside: avoid; }
img { display: block; max-width: 100%; height: auto; margin: 0.5rem auto; }
code { font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace;
  font-size: 0.9em; background: #f3f3f3; padding: 0 0.2em; border-radius: 3px; }
pre { overflow-x: auto; background: #f3f3f3; padding: 0.5rem; }
pre code { padding: 0; }
td code { white-space: nowrap; }
@media print {
  @page { margin: 15mm; }
  body { max-width: none; padding: 0; font-size: 10pt; }
  h2 { margin-top: 1.2rem; }
  .table { overflow: visible; }
  table { font-size: 8pt; }
  img { max-height: 230mm; width: auto; }
  a { color: inherit; text-decoration: none; }
}
"""


def _markdown():
    from markdown_it import MarkdownIt

    return MarkdownIt("commonmark", {"html": False}).enable("table")


def _data_uri(name: str, data: bytes) -> str:
    kind = "image/png" if data[:8] == b"\x89PNG\r\n\x1a\n" else (
        mimetypes.guess_type(name)[0] or "application/octet-stream")
    return f"data:{kind};base64,{base64.b64encode(data).decode('ascii')}"


def _title(tokens) -> str:
    for i, token in enumerate(tokens):
        if token.type == "heading_open" and token.tag == "h1":
            inline = tokens[i + 1]
            return "".join(child.content for child in inline.children or ()
                           if child.type in ("text", "code_inline")) or inline.content
    return "qhat report"


def image_sources(markdown: str) -> list[str]:
    """The image sources a report's Markdown shows, in order, each once.

    Parameters
    ----------
    markdown : str
        The text of a report.md.

    Returns
    -------
    list of str
        The ``src`` of every image (``![alt](src)``), as written.
    """
    found: dict[str, None] = {}
    for token in _markdown().parse(markdown):
        for child in token.children or ():
            if child.type == "image":
                found.setdefault(str(child.attrs.get("src", "")), None)
    return list(found)


def report_html(markdown: str, images: Mapping[str, bytes], *,
                caution: str | None = None) -> str:
    """The self-contained HTML page of a report.

    Parameters
    ----------
    markdown : str
        The text of the report.md (CommonMark with GitHub-style tables).
    images : mapping of str to bytes
        Image source as written in the Markdown (a file name such as ``balance.png``) ->
        the file's bytes; each is embedded as a base64 ``data:`` URI. An image whose
        source is not a key keeps its source as written (a path beside the page).
    caution : str, optional
        The line shown above and below the report; by default
        :func:`infer.core.text.caution_sentence`.

    Returns
    -------
    str
        A complete HTML5 document: ``<title>`` from the first level-1 heading, the
        caution first and last in ``<body>``, tables wrapped in ``<div class="table">``
        (scrolling sideways on a narrow screen), no script.
    """
    md = _markdown()
    tokens = md.parse(markdown)
    for token in tokens:
        for child in token.children or ():
            if child.type == "image":
                src = str(child.attrs.get("src", ""))
                if src in images:
                    child.attrs["src"] = _data_uri(src, images[src])
    rules = md.renderer.rules

    def table_open(tokens, idx, options, env):
        return '<div class="table">\n' + md.renderer.renderToken(tokens, idx, options, env)

    def table_close(tokens, idx, options, env):
        return md.renderer.renderToken(tokens, idx, options, env) + "</div>\n"

    rules["table_open"], rules["table_close"] = table_open, table_close
    body = md.renderer.render(tokens, md.options, {})
    note = html.escape(caution if caution is not None else caution_sentence())
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f"<title>{html.escape(_title(tokens))}</title>\n"
        f"<style>{_STYLE}</style>\n</head>\n<body>\n"
        f'<header><p class="caution" role="note">{note}</p></header>\n'
        f"<main>\n{body}</main>\n"
        f'<footer><p class="caution" role="note">{note}</p></footer>\n'
        "</body>\n</html>\n")

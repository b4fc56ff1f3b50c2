"""HTML to text with the stdlib parser.  Nothing is rendered, fetched or executed.

Block elements end lines, entities are decoded, ``<table>`` rows become table structure,
and form controls are shown as text: a ticked checkbox or radio button as ``[x]``, an
unticked one as ``[ ]``, a text input as its value.  Markup in the text (``&lt;script&gt;``,
``{{7*7}}``) stays literal text; script, style and template content is dropped.  A file
larger than ``limits.text_bytes`` is ``failed: too_large``.
"""

from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path

from ..options import ExtractOptions
from ..types import Document
from .builder import TextBuilder
from .decode import decode_bytes, read_limited

_BLOCK = {
    "address", "article", "aside", "blockquote", "body", "dd", "div", "dl", "dt", "fieldset",
    "figcaption", "figure", "footer", "form", "h1", "h2", "h3", "h4", "h5", "h6", "header",
    "hr", "legend", "li", "main", "nav", "ol", "p", "pre", "section", "ul", "caption",
}
_SKIP = {"script", "style", "head", "template", "noscript", "svg", "object", "iframe"}
_VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}


class _Converter(HTMLParser):
    def __init__(self, builder: TextBuilder, quotes: bool = False) -> None:
        super().__init__(convert_charrefs=True)
        self.out = builder
        self.quotes = quotes
        #: one entry per open ``<blockquote>``: where its text starts, or None for one that
        #: opened inside a table (its text goes into cells, written when the table ends)
        self.quote_starts: list[int | None] = []
        self.line: list[str] = []
        self.skip_depth = 0
        self.pre_depth = 0
        self.tables: list[list[list[str]]] = []  # stack of tables, each a list of rows
        self.cell: list[str] | None = None
        self.cell_stack: list[list[str] | None] = []

    # text accumulation ---------------------------------------------------------------

    def _emit(self, text: str) -> None:
        if self.cell is not None:
            self.cell.append(text)
        else:
            self.line.append(text)

    def _flush(self) -> None:
        text = "".join(self.line)
        self.line = []
        text = text if self.pre_depth else " ".join(text.split())
        if text.strip():
            for piece in text.split("\n"):
                self.out.add_line(piece.rstrip())

    # parser callbacks -------------------------------------------------------------------

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if self.skip_depth:
            if tag in _SKIP:
                self.skip_depth += 1
            return
        if tag in _SKIP:
            self.skip_depth = 1
            return
        attributes = {key: (value or "") for key, value in attrs}
        if tag == "table":
            self._flush_or_break()
            self.cell_stack.append(self.cell)
            self.cell = None
            self.tables.append([])
        elif tag == "tr" and self.tables:
            self.tables[-1].append([])
        elif tag in ("td", "th") and self.tables:
            if not self.tables[-1]:
                self.tables[-1].append([])
            self.cell = []
        elif tag == "br":
            self._emit(" / " if self.cell is not None else "\n")
            if self.cell is None and not self.pre_depth:
                self._flush()
        elif tag == "input":
            self._emit(_control_text(attributes))
        elif tag == "pre":
            self._flush_or_break()
            self.pre_depth += 1
        elif tag in _BLOCK:
            if self.cell is not None:
                self._emit(" ")
            else:
                self._flush()
                if tag == "li":
                    self.line.append("- ")
            if tag == "blockquote" and self.quotes:
                self.quote_starts.append(None if self.tables else self.out.offset)
        elif tag == "option" and "selected" in attributes:
            self._emit("[x] ")

    def handle_endtag(self, tag: str) -> None:
        if self.skip_depth:
            if tag in _SKIP:
                self.skip_depth -= 1
            return
        if tag in ("td", "th") and self.tables and self.cell is not None:
            self.tables[-1][-1].append("".join(self.cell))
            self.cell = None
        elif tag == "table" and self.tables:
            rows = self.tables.pop()
            self.cell = self.cell_stack.pop() if self.cell_stack else None
            if self.cell is not None:  # nested table: flatten into the outer cell
                self.cell.append(" ".join(" ".join(row) for row in rows))
            else:
                self.out.add_table(rows)
        elif tag == "pre":
            self._flush()
            self.pre_depth = max(0, self.pre_depth - 1)
        elif tag in _BLOCK and self.cell is None:
            self._flush()
            if tag == "blockquote" and self.quote_starts:
                self._end_quote()
            if tag in ("p", "h1", "h2", "h3", "h4", "h5", "h6", "div", "table", "ul", "ol"):
                self.out.blank()
        elif tag == "blockquote" and self.quote_starts and self.tables:
            self.quote_starts.pop()  # opened inside the table: never tracked

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.handle_starttag(tag, attrs)
        if tag not in _VOID:
            self.handle_endtag(tag)

    def handle_data(self, data: str) -> None:
        if not self.skip_depth:
            self._emit(data)

    def parse_marked_section(self, i: int, report: int = 1) -> int:
        """``<![...`` with a keyword the stdlib does not know raises AssertionError (3.11);
        browsers treat it as a bogus comment, and so does this: skip to its ``>``."""
        try:
            return super().parse_marked_section(i, report)
        except AssertionError:
            end = self.rawdata.find(">", i + 3)
            return -1 if end < 0 else end + 1

    def _flush_or_break(self) -> None:
        if self.cell is None:
            self._flush()

    def _end_quote(self) -> None:
        """A ``<blockquote>`` ends: the outermost one tracked becomes a ``quoted`` region."""
        start = self.quote_starts.pop()
        if start is None or any(outer is not None for outer in self.quote_starts):
            return  # untracked, or nested in a quote that is marked as a whole
        last = next((span.end for span in reversed(self.out.lines) if span.end > span.start), start)
        self.out.mark("quoted", start, max(start, last))

    def close(self) -> None:
        super().close()
        self._flush()
        while self.quote_starts:  # unclosed blockquotes run to the end of the text
            self._end_quote()


def _control_text(attributes: dict[str, str]) -> str:
    kind = attributes.get("type", "text").lower()
    if kind in ("checkbox", "radio"):
        return "[x] " if "checked" in attributes else "[ ] "
    if kind in ("text", "email", "date", "number", "tel", ""):
        return attributes.get("value", "") + " "
    return ""


def html_to_builder(html: str, builder: TextBuilder, *, quotes: bool = False) -> None:
    """Convert ``html`` and append the result to ``builder``.

    With ``quotes`` (an email body), each outermost ``<blockquote>`` outside a table is
    marked as a ``quoted`` region: mail clients put a quoted reply there.  Elsewhere a
    blockquote is just indented text of the document.
    """
    converter = _Converter(builder, quotes)
    converter.feed(html)
    converter.close()


def read_html(path: Path, source: str, options: ExtractOptions) -> Document:
    decoded = decode_bytes(read_limited(path, options.limits.text_bytes), options.encodings)
    builder = TextBuilder()
    html_to_builder(decoded.text, builder)
    return builder.build(
        source,
        "reader.html.v1",
        encoding=decoded.encoding,
        encoding_guessed=decoded.guessed,
        warnings=decoded.warnings,
    )

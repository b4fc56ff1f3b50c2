"""Email messages (.eml, RFC 5322) through the stdlib ``email`` package, ``policy.default``.

The text starts with the message's own header block (From, Sender, Reply-To, To, Cc, Date,
Subject), decoded per RFC 2047 and unfolded, each header also kept as a structured
:class:`Header` with its addresses or date.  Then comes the body: the text/plain part if
there is one, otherwise the HTML part converted to text.  Quoted replies and forwarded
messages inside the body are marked as regions, so that fields describe this message and
never the headers quoted in it.
"""

from __future__ import annotations

import datetime
import email
import email.policy
import re
from email.errors import HeaderParseError
from email.header import decode_header, make_header
from email.utils import getaddresses
from email.message import EmailMessage
from pathlib import Path

from ..errors import ReadFailure
from ..options import ExtractOptions
from ..types import Address, Document, Header, Region, Span
from .builder import TextBuilder
from .html import html_to_builder

HEADER_ORDER = ("From", "Sender", "Reply-To", "To", "Cc", "Date", "Subject")
_ADDRESS_HEADERS = {"From", "Sender", "Reply-To", "To", "Cc"}

_QUOTE_INTRO = re.compile(r"^\s*On\b.{4,200}\bwrote:\s*$", re.IGNORECASE)
_FORWARD_MARK = re.compile(
    r"^\s*(-{2,}\s*(Forwarded message|Original Message)\s*-{2,}|Begin forwarded message:)\s*$", re.IGNORECASE
)
_OUTLOOK_FROM = re.compile(r"^\s*From:\s+\S")
_OUTLOOK_NEXT = re.compile(r"^\s*(Sent|Date|To|Subject):\s", re.IGNORECASE)


def read_email(path: Path, source: str, options: ExtractOptions) -> Document:
    raw = path.read_bytes()
    if not raw.strip():
        raise ReadFailure("failed", "empty_file", "the file is empty")
    message = email.message_from_bytes(raw, policy=email.policy.default)
    if not isinstance(message, EmailMessage) or not any(message.get(name) for name in ("From", "To", "Date", "Subject")):
        raise ReadFailure("failed", "not_an_email", "no message headers found")
    builder = TextBuilder()
    warnings: list[str] = []
    raw_headers = [(key.lower(), str(value)) for key, value in message.raw_items()]
    for name in HEADER_ORDER:
        raws = [value for key, value in raw_headers if key == name.lower()]
        for index, value in enumerate(message.get_all(name, []) or []):
            _add_header(builder, name, value, warnings, raws[index] if index < len(raws) else "")
    builder.blank()
    body_start = builder.offset
    _add_body(builder, message, warnings)
    _mark_quotes(builder, body_start)
    if message.defects:
        warnings.append("email_defects")
    return builder.build(source, "reader.email.v1", encoding="utf-8", warnings=tuple(warnings))


def _add_header(builder: TextBuilder, name: str, value: object, warnings: list[str], raw: str) -> None:
    prefix = f"{name}: "
    value_start = builder.offset + len(prefix)
    groups = ()
    if name in _ADDRESS_HEADERS:
        try:
            groups = value.groups  # type: ignore[attr-defined]
        except Exception:  # a malformed address header: keep its text only
            warnings.append("bad_address_header")
    if groups:
        text, addresses = _render_groups(groups, value_start, _encoded_names(raw))
        span = builder.add_line(prefix + text)
        builder.headers.append(Header(name, Span(value_start, span.end), addresses=addresses))
        return
    span = builder.add_line(prefix + " ".join(str(value).split()))
    when = None
    if name == "Date":
        try:
            when = value.datetime  # type: ignore[attr-defined]
        except Exception:
            when = None
        if when is None:
            warnings.append("bad_date_header")
        else:
            when = _rfc5322_year(when, raw)
    builder.headers.append(Header(name, Span(value_start, span.end), date=when))


_OBSOLETE_YEAR = re.compile(r"\b\d{1,2}\s+[A-Za-z]{3}\s+(\d{2,3})\s")


def _rfc5322_year(when: datetime.datetime, raw: str) -> datetime.datetime:
    """Two- and three-digit years as RFC 5322 §4.3 reads them (the stdlib uses a POSIX pivot).

    00–49 → 2000–2049, 50–99 → 1950–1999, three digits → + 1900.
    """
    match = _OBSOLETE_YEAR.search(raw + " ")
    if match is None:
        return when
    written = int(match.group(1))
    if len(match.group(1)) == 3:
        year = written + 1900
    else:
        year = written + (2000 if written < 50 else 1900)
    try:
        return when.replace(year=year)
    except ValueError:
        return when


def _encoded_names(raw: str) -> dict[str, str]:
    """Display names decoded from the raw header, by address.

    RFC 2047 §6.2: white space between adjacent encoded words is ignored.  Python 3.11's
    address parser keeps it (CPython gh-128110), so names made of encoded words are decoded
    again here with ``email.header``, which follows the RFC.
    """
    if "=?" not in raw:
        return {}
    names = {}
    for phrase, address in getaddresses([raw]):
        if "=?" in phrase:
            try:
                names[address.lower()] = str(make_header(decode_header(phrase)))
            except (LookupError, UnicodeError, ValueError, HeaderParseError):
                continue
    return names


def _render_groups(groups: tuple, start: int, decoded: dict[str, str]) -> tuple[str, tuple[Address, ...]]:
    """Render address groups as ``Name <addr>, addr, Group: a, b;`` with spans for each part."""
    out: list[str] = []
    addresses: list[Address] = []

    def put(piece: str) -> int:
        offset = start + sum(len(p) for p in out)
        out.append(piece)
        return offset

    for group_index, group in enumerate(groups):
        if group_index:
            put(", ")
        if group.display_name is not None:
            put(f"{group.display_name}: ")
        for index, address in enumerate(group.addresses):
            if index:
                put(", ")
            addr = address.addr_spec or ""
            display = decoded.get(addr.lower(), address.display_name or "")
            if display:
                at = put(f"{display} <{addr}>")
                name_span = Span(at, at + len(display))
                email_span = Span(at + len(display) + 2, at + len(display) + 2 + len(addr))
            else:
                at = put(addr)
                name_span, email_span = None, Span(at, at + len(addr))
            addresses.append(Address(display, addr.lower(), name_span, email_span))
        if group.display_name is not None:
            put(";")
    return "".join(out), tuple(addresses)


def _add_body(builder: TextBuilder, message: EmailMessage, warnings: list[str]) -> None:
    try:
        part = message.get_body(preferencelist=("plain", "html"))
    except Exception:
        part = None
        warnings.append("bad_mime_structure")
    if part is None:
        return
    try:
        content = part.get_content()
    except (LookupError, UnicodeError, AssertionError, ValueError):
        payload = part.get_payload(decode=True) or b""
        content = payload.decode("latin-1", errors="replace") if isinstance(payload, bytes) else str(payload)
        warnings.append("unknown_charset")
    if not isinstance(content, str):
        return
    content = content.replace("\r\n", "\n").replace("\r", "\n")
    if part.get_content_subtype() == "html":
        html_to_builder(content, builder)
    else:
        builder.add_text(content.rstrip("\n"))


def _mark_quotes(builder: TextBuilder, body_start: int) -> None:
    """Mark quoted replies (``> ...``, "On ... wrote:") and forwarded blocks in the body."""
    lines = [span for span in builder.lines if span.start >= body_start]
    text = builder.text()
    for index, span in enumerate(lines):
        line = text[span.start : span.end]
        following = [text[s.start : s.end] for s in lines[index + 1 : index + 4]]
        if _FORWARD_MARK.match(line):
            builder.mark("forwarded", span.start)
            return
        if _QUOTE_INTRO.match(line) or (
            _OUTLOOK_FROM.match(line) and sum(bool(_OUTLOOK_NEXT.match(f)) for f in following) >= 2
        ):
            builder.mark("quoted", span.start)
            return
        if line.lstrip().startswith(">"):
            previous = builder.regions[-1] if builder.regions else None
            if previous is not None and previous.kind == "quoted" and previous.span.end + 1 >= span.start:
                builder.regions[-1] = Region("quoted", Span(previous.span.start, span.end))
            else:
                builder.mark("quoted", span.start, span.end)

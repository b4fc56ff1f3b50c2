"""Email messages (.eml, RFC 5322) through the stdlib ``email`` package, ``policy.default``.

The text starts with the message's own header block (From, Sender, Reply-To, To, Cc, Date,
Subject), decoded per RFC 2047 and unfolded, each header also kept as a structured
:class:`Header` with its addresses or date.  Then comes the body: the text/plain part if
there is one, otherwise the HTML part converted to text.  Quoted replies and forwarded
messages inside the body are marked as regions (:func:`_mark_quotes`; in an HTML body a
``<blockquote>`` too), so that fields describe this message and never the headers quoted
in it.  The header lines of a forwarded or quoted message stay text inside its region: they
are not added to the document's headers, which are this message's own.

Hostile messages (catalogue E1–E5 in tests/CATALOGUE.md; Python ``email.policy`` docs) are
bounded before the stdlib parser sees them: a file larger than ``limits.email_bytes`` is
``failed: too_large`` before it is read; the file is streamed through :func:`bounded_message`, which drops the content of
any MIME part larger than ``limits.email_part_bytes`` (warning ``attachment_skipped``; the
rest of the message is still read) and stops at ``limits.email_parts`` parts or
``limits.email_depth`` levels of nesting (``partial: mime_limits``; what came before is
read).  When the dropped part is the one the message's text comes from — the body of a
message without MIME parts, or the inline text/plain or text/html part chosen as the body —
the text is lost, so the message is ``partial: mime_limits`` too (not
``attachment_skipped``).  A MIME structure the stdlib
cannot search for the body (``get_body`` raises) is ``partial: bad_mime_structure``: the
headers are read, the body is not.  A body in an unknown charset is decoded with a fallback (warning
``unknown_charset``, and the document's encoding counts as guessed, which lowers the
confidence of its values); undecodable encoded words in headers become U+FFFD with the
warning ``header_decode``.  Attachments are never written anywhere, under their declared
names or any other.
"""

from __future__ import annotations

import bisect
import datetime
import email
import email.policy
import re
from dataclasses import dataclass
from email.header import decode_header, make_header
from email.utils import getaddresses
from email.message import EmailMessage
from pathlib import Path

from ..errors import ReadFailure
from ..options import ExtractOptions, Limits
from ..types import Address, Document, DocStatus, Header, Span
from .builder import TextBuilder, clean
from .decode import MOJIBAKE, decode_fallback, shown_size, too_large
from .html import html_to_builder

HEADER_ORDER = ("From", "Sender", "Reply-To", "To", "Cc", "Date", "Subject")
_ADDRESS_HEADERS = {"From", "Sender", "Reply-To", "To", "Cc"}

#: The attribution line mail clients write above a quoted reply ("On <date>, <name> wrote:"),
#: in the forms of the common clients' English, German, French and Spanish locales (common
#: practice, no source).  A long one may be wrapped over two lines.
_QUOTE_INTRO = re.compile(
    r"^\s*(?:On\b.{4,250}\bwrote|Am\b.{4,250}\bschrieb.{0,80}|Le\b.{4,250}\ba\s+écrit\s*|El\b.{4,250}\bescribió)\s*:\s*$",
    re.IGNORECASE,
)
_INTRO_START = re.compile(r"^\s*(?:On|Am|Le|El)\b")
#: "<name> wrote:" alone: an attribution only when a quoted block follows it.
_WEAK_INTRO = re.compile(r"^\s*\S.{0,150}\bwrote:\s*$", re.IGNORECASE)
#: The line that starts a forwarded message (Gmail, Thunderbird, Apple Mail; common practice, no source).
_FORWARD_MARK = re.compile(r"^\s*(?:-{2,}\s*Forwarded message\s*-{2,}|Begin forwarded message:)\s*$", re.IGNORECASE)
#: Outlook's separator above the earlier message's headers, in a reply or a forward.
_ORIGINAL_MARK = re.compile(r"^\s*-{2,}\s*Original Message\s*-{2,}\s*$", re.IGNORECASE)
#: A rule drawn above such headers ("________________________________").
_RULE = re.compile(r"^\s*(?:_{8,}|-{8,})\s*$")
#: A header line of an earlier message inside the body, the way clients render it.
_INNER_HEADER = re.compile(r"^\s*(From|Sent|Date|To|Cc|Subject|Reply-To)\s*:\s*(\S.*)?$", re.IGNORECASE)
#: A subject that says the message is a forward ("Fwd:", "FW:", after any "Re:").
_FORWARD_SUBJECT = re.compile(r"^\s*(?:re\s*:\s*)*fwd?\s*:", re.IGNORECASE)


def read_email(path: Path, source: str, options: ExtractOptions) -> Document:
    if path.stat().st_size > options.limits.email_bytes:
        raise too_large(options.limits.email_bytes)  # before any byte is parsed
    bounded = bounded_message(path, options.limits)
    raw = bounded.data
    if not raw.strip():
        raise ReadFailure("failed", "empty_file", "the file is empty")
    message = email.message_from_bytes(raw, policy=email.policy.default)
    raw_headers = [(key.lower(), str(value)) for key, value in message.raw_items()] if isinstance(message, EmailMessage) else []
    present = {key for key, value in raw_headers if value.strip()}
    if not present & {"from", "to", "date", "subject"}:
        raise ReadFailure("failed", "not_an_email", "no message headers found")
    builder = TextBuilder()
    warnings: list[str] = []
    for name in HEADER_ORDER:
        raws = [value for key, value in raw_headers if key == name.lower()]
        try:
            values = list(message.get_all(name, []) or [])
        except Exception:  # noqa: BLE001 - the stdlib's header parser raises many types (fuzzed)
            _add_raw_headers(builder, name, raws, warnings)
            continue
        for index, value in enumerate(values):
            _add_header(builder, name, value, warnings, raws[index] if index < len(raws) else "")
    builder.blank()
    body_start = builder.offset
    fallback = _add_body(builder, message, warnings, options)
    text = builder.text()
    subject = next((text[h.span.start : h.span.end] for h in builder.headers if h.name == "Subject"), "")
    _mark_quotes(builder, body_start, forward=bool(_FORWARD_SUBJECT.match(subject)))
    if _has_defects(message, options.limits):
        warnings.append("email_defects")
    # the text is lost when the part the body was taken from was dropped (it is empty now);
    # a dropped alternative (the HTML of a message read from its text/plain part) is not
    text_lost = bool(bounded.text_skipped) and not text[body_start:].strip()
    if bounded.skipped > (bounded.text_skipped if text_lost else 0):
        warnings.append("attachment_skipped")
    status, reason, note = DocStatus.OK, "", ""
    if bounded.limit_hit:
        warnings.append("mime_limits")
        status, reason, note = DocStatus.PARTIAL, "mime_limits", f"the message has {bounded.limit_hit}; the rest was not read"
    elif text_lost:
        warnings.append("mime_limits")
        status, reason = DocStatus.PARTIAL, "mime_limits"
        note = f"the message text is larger than the per-part limit ({shown_size(options.limits.email_part_bytes)}) and was not read"
    elif "bad_mime_structure" in warnings:
        status, reason = DocStatus.PARTIAL, "bad_mime_structure"
        note = "the message's MIME structure could not be searched for its text; only the headers were read"
    return builder.build(
        source,
        "reader.email.v1",
        encoding=fallback or "utf-8",
        encoding_guessed=fallback is not None,
        warnings=tuple(warnings),
        status=status,
        reason=reason,
        note=note,
    )


def _has_defects(message: EmailMessage, limits: Limits) -> bool:
    """Defects anywhere in the (already bounded) MIME tree, walked without recursion."""
    todo = [message]
    seen = 0
    while todo and seen <= limits.email_parts + 1:
        part = todo.pop()
        seen += 1
        if part.defects:
            return True
        payload = part.get_payload() if part.is_multipart() else None
        if isinstance(payload, list):
            todo.extend(item for item in payload if isinstance(item, EmailMessage))
    return False


def _add_header(builder: TextBuilder, name: str, value: object, warnings: list[str], raw: str) -> None:
    prefix = f"{name}: "
    value_start = builder.offset + len(prefix)
    if _badly_decoded(value, raw):
        warnings.append("header_decode")
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


def _add_raw_headers(builder: TextBuilder, name: str, raws: list[str], warnings: list[str]) -> None:
    """Headers the stdlib cannot parse: their raw text, unfolded, without structure."""
    warnings.append("bad_address_header" if name in _ADDRESS_HEADERS else "bad_date_header" if name == "Date" else "header_decode")
    prefix = f"{name}: "
    for raw in raws:
        value_start = builder.offset + len(prefix)
        span = builder.add_line(prefix + " ".join(raw.split()))
        builder.headers.append(Header(name, Span(value_start, span.end)))


def _badly_decoded(value: object, raw: str) -> bool:
    """An encoded word (RFC 2047) or raw 8-bit text that did not decode cleanly."""
    text = str(value)
    if "\ufffd" in text or any("\udc80" <= ch <= "\udcff" for ch in text):
        return True
    defects = getattr(value, "defects", ()) or ()
    return "=?" in raw and any(type(defect).__name__ in _HEADER_DEFECTS for defect in defects)


_HEADER_DEFECTS = {"CharsetError", "UndecodableBytesDefect", "InvalidBase64CharactersDefect", "InvalidBase64PaddingDefect", "InvalidBase64LengthDefect"}


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
            except Exception:  # noqa: BLE001 - LookupError, CharsetError, HeaderParseError ... (fuzzed)
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
            addr = clean(address.addr_spec or "")
            display = clean(decoded.get(addr.lower(), address.display_name or ""))  # lone surrogates → U+FFFD
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


def _add_body(builder: TextBuilder, message: EmailMessage, warnings: list[str], options: ExtractOptions) -> str | None:
    """Append the body text; return the fallback encoding when the declared charset failed."""
    try:
        part = message.get_body(preferencelist=("plain", "html"))
    except MemoryError:
        raise
    except Exception:  # noqa: BLE001 - the stdlib walks a malformed tree with many errors (fuzzed)
        part = None
        warnings.append("bad_mime_structure")
    if part is None:
        return None
    fallback = None
    try:
        content = part.get_content()
    except (LookupError, UnicodeError, AssertionError, ValueError, TypeError):
        try:
            payload = part.get_payload(decode=True) or b""
        except Exception:  # noqa: BLE001 - a broken transfer encoding
            payload = b""
        if not isinstance(payload, bytes):
            payload = str(payload).encode("utf-8", errors="replace")
        content, fallback = decode_fallback(payload, _declared_charset(part), options.encodings)
        warnings.append("unknown_charset")
    if not isinstance(content, str):
        return fallback
    if MOJIBAKE.search(content):
        warnings.append("suspect_mojibake")
    content = content.replace("\r\n", "\n").replace("\r", "\n")
    if part.get_content_subtype() == "html":
        html_to_builder(content, builder, quotes=True)
    else:
        builder.add_text(content.rstrip("\n"))
    return fallback


def _declared_charset(part: EmailMessage) -> str:
    try:
        return str(part.get_param("charset", "") or "")
    except Exception:  # noqa: BLE001 - RFC 2231 oddities (CPython gh-80361)
        return ""


# --- bounding the message before parsing -------------------------------------------------------


@dataclass(frozen=True)
class Bounded:
    """The bytes of a message with oversized parts emptied, and what was left out."""

    data: bytes
    skipped: int  #: parts whose content was dropped for size
    limit_hit: str  #: "" or which limit stopped the read ("more than 1000 MIME parts")
    text_skipped: int = 0  #: of those, parts that held the message's text (not attachments)


_LINE = 1 << 16  #: bytes read at a time; a line longer than this is read in pieces
_HEADER_BLOCK_BYTES = 1 << 20
_BOUNDARY = re.compile(rb'boundary\s*=\s*(?:"([^"\r\n]{1,200})"|([^\s;"]{1,200}))', re.IGNORECASE)
_CONTENT_TYPE = re.compile(rb"^content-type\s*:\s*([a-z0-9!#$&^_.+-]+/[a-z0-9!#$&^_.+-]+)", re.IGNORECASE | re.MULTILINE)
_ATTACHMENT = re.compile(rb"^content-disposition\s*:\s*attachment\b", re.IGNORECASE | re.MULTILINE)
_TEXT_MEDIA = (b"text/plain", b"text/html")


def bounded_message(path: Path, limits: Limits) -> Bounded:
    """Stream ``path`` and keep what the MIME limits allow (catalogue E4/E5 in tests/CATALOGUE.md).

    A light MIME scan follows the boundaries declared in each header block: a part's
    content is buffered up to ``limits.email_part_bytes`` and dropped (headers kept) when it
    grows past that; parts beyond ``limits.email_parts`` or nested deeper than
    ``limits.email_depth`` end the read there.  A message within the limits comes back byte
    for byte, so the stdlib parser sees exactly the file.  A dropped part is counted in
    ``text_skipped`` too when it held the message's text: a text/plain or text/html part
    (the default for a message without MIME parts) that is not marked as an attachment.
    More than ``limits.email_bytes`` read in all (a file that grew) is ``failed: too_large``.
    """
    out = bytearray()
    skipped = 0
    text_skipped = 0
    text_part = False  #: the current part's content is message text, not an attachment
    total = 0
    limit_hit = ""
    #: open nesting levels, outermost first: a multipart's delimiter ("--" + boundary), or
    #: None for an enclosed message (message/rfc822), which ends with its enclosing part
    levels: list[bytes | None] = []
    parts = 0
    in_headers = True  #: the next lines are a header block (of the message or of a part)
    header = bytearray()
    body = bytearray()
    dropping = False
    at_line_start = True

    def end_headers() -> None:
        nonlocal in_headers, limit_hit, text_part
        block = bytes(header)
        out.extend(block)
        header.clear()
        in_headers = False
        unfolded = re.sub(rb"\r?\n[ \t]+", b" ", block)
        kind = _CONTENT_TYPE.search(unfolded)
        media = kind.group(1).lower() if kind else b"text/plain"
        text_part = media in _TEXT_MEDIA and _ATTACHMENT.search(unfolded) is None
        if media.startswith(b"multipart/"):
            found = _BOUNDARY.search(unfolded)
            if found:
                levels.append(b"--" + (found.group(1) or found.group(2)))
        elif media == b"message/rfc822":
            levels.append(None)
            in_headers = True  # the part's content starts with the enclosed message's headers
        if len(levels) > limits.email_depth:
            limit_hit = f"more than {limits.email_depth} levels of nesting"

    def end_body() -> None:
        nonlocal dropping
        if not dropping:
            out.extend(body)
        body.clear()
        dropping = False

    with path.open("rb") as handle:
        while not limit_hit:
            piece = handle.readline(_LINE)
            if not piece:
                break
            total += len(piece)
            if total > limits.email_bytes:
                raise too_large(limits.email_bytes)  # the file grew after its size was checked
            line_start, at_line_start = at_line_start, piece.endswith(b"\n")
            if line_start and piece.startswith(b"--") and any(levels):
                delimiter = piece.rstrip(b"\r\n").rstrip(b" \t")
                level = next(
                    (i for i in range(len(levels) - 1, -1, -1) if levels[i] is not None and delimiter.startswith(levels[i])),  # type: ignore[arg-type]
                    None,
                )
                if level is not None and delimiter[len(levels[level]) :] in (b"", b"--"):  # type: ignore[arg-type]
                    closing = delimiter.endswith(b"--") and len(delimiter) == len(levels[level]) + 2  # type: ignore[arg-type]
                    if in_headers:
                        out.extend(header)
                        header.clear()
                    end_body()
                    out.extend(piece)
                    del levels[level + 1 :]
                    if closing:
                        levels.pop()
                        in_headers = False
                        text_part = False  # what follows is an epilogue, not message text
                    else:
                        parts += 1
                        if parts > limits.email_parts:
                            limit_hit = f"more than {limits.email_parts} MIME parts"
                            break
                        in_headers = True
                    continue
            if in_headers:
                header.extend(piece)
                if (line_start and piece in (b"\r\n", b"\n")) or len(header) > _HEADER_BLOCK_BYTES:
                    end_headers()
                continue
            if dropping:
                continue
            body.extend(piece)
            if len(body) > limits.email_part_bytes:
                body.clear()
                dropping = True
                skipped += 1
                text_skipped += text_part
    if in_headers:
        out.extend(header)
    end_body()
    return Bounded(bytes(out), skipped, limit_hit, text_skipped)


def _mark_quotes(builder: TextBuilder, body_start: int, *, forward: bool = False) -> None:
    """Mark quoted replies and forwarded messages in the body, so fields describe this message.

    * ``>`` lines (any depth: ``>>`` is a quote inside the quote) are ``quoted``, one region
      per block; a block may hold blank lines.  Lines of the writer's own between blocks
      (an inline reply) stay unmarked.
    * An HTML ``<blockquote>`` (already marked by the HTML converter) is ``quoted``.
    * An attribution ("On <date>, <name> wrote:") starts the quoted region of the block that
      follows it; with no marked block after it, the rest of the body is quoted, up to a
      forwarded message.
    * A forward mark ("---------- Forwarded message ---------", "Begin forwarded message:")
      starts a ``forwarded`` region that runs to the end: the forwarded message's own header
      lines (From:, Date:, Subject:, To:) and everything after them belong to it.
    * A block of an earlier message's header lines the way Outlook writes them (From: then
      Sent:/Date:, To:, Subject: ...; under a rule or "-----Original Message-----") starts a
      region to the end: ``forwarded`` when this message's subject says it is a forward
      ("Fwd:", "FW:"), otherwise ``quoted``.

    The regions do not overlap; a forward after a quoted reply is a region of its own.
    """
    text = builder.text()
    end = builder.offset
    lines = [span for span in builder.lines if span.start >= body_start]
    html_quotes = sorted(
        (region.span for region in builder.regions if region.kind == "quoted" and region.span.start >= body_start),
        key=lambda span: span.start,
    )
    quote_starts = [span.start for span in html_quotes]
    builder.regions[:] = [region for region in builder.regions if not (region.kind == "quoted" and region.span.start >= body_start)]

    def line(index: int) -> str:
        return text[lines[index].start : lines[index].end]

    def html_quote(index: int) -> Span | None:
        at = lines[index].start
        found = bisect.bisect_right(quote_starts, at) - 1  # the converter's quotes never overlap
        return html_quotes[found] if found >= 0 and at < html_quotes[found].end else None

    def quoted_block(index: int) -> tuple[int, int] | None:
        """The block of quoted lines starting at line ``index``: (its end offset, the next line's index)."""
        found = html_quote(index)
        if found is not None:
            after = index
            while after < len(lines) and lines[after].start < found.end:
                after += 1
            return found.end, after
        if not line(index).lstrip().startswith(">"):
            return None
        last = index
        probe = index + 1
        while probe < len(lines):
            current = line(probe)
            if current.lstrip().startswith(">"):
                last = probe
            elif current.strip():
                break
            probe += 1
        return lines[last].end, last + 1

    def next_filled(index: int) -> int | None:
        return next((i for i in range(index, len(lines)) if line(i).strip()), None)

    index = 0
    while index < len(lines):
        current = line(index)
        start = lines[index].start
        block = quoted_block(index)
        if block is not None:
            builder.mark("quoted", start, block[0])
            index = block[1]
            continue
        if _FORWARD_MARK.match(current):
            builder.mark("forwarded", start, end)
            return
        header_rows = _inner_headers(lines, index, text)
        if _ORIGINAL_MARK.match(current) or header_rows:
            previous = next((i for i in range(index - 1, -1, -1) if line(i).strip()), None)
            if header_rows and previous is not None and _RULE.match(line(previous)):
                start = lines[previous].start  # the rule above the headers belongs to them
            builder.mark("forwarded" if forward else "quoted", start, end)
            return
        intro = _intro_length(lines, index, text)
        following = next_filled(index + intro) if intro else None
        block = quoted_block(following) if following is not None else None
        if block is not None:  # "On ... wrote:" (or "<name> wrote:") and the quote it introduces
            builder.mark("quoted", start, block[0])
            index = block[1]
            continue
        if intro and _QUOTE_INTRO.match(" ".join(line(i).strip() for i in range(index, index + intro))):
            # an unmarked quote: the rest of the body, unless a forwarded message follows it
            stop = next((i for i in range(index + intro, len(lines)) if _FORWARD_MARK.match(line(i))), None)
            if stop is None:
                builder.mark("quoted", start, end)
                return
            builder.mark("quoted", start, lines[stop - 1].end)
            index = stop
            continue
        index += 1


def _intro_length(lines: list[Span], index: int, text: str) -> int:
    """How many lines the attribution at ``lines[index]`` takes (0: none): one, or two when wrapped."""
    first = text[lines[index].start : lines[index].end]
    if not first.strip() or len(first) > 300:
        return 0
    if _QUOTE_INTRO.match(first) or _WEAK_INTRO.match(first):
        return 1
    if index + 1 < len(lines) and _INTRO_START.match(first):
        both = first.strip() + " " + text[lines[index + 1].start : lines[index + 1].end].strip()
        if len(both) <= 300 and _QUOTE_INTRO.match(both):
            return 2
    return 0


def _inner_headers(lines: list[Span], index: int, text: str) -> int:
    """The number of header lines of an earlier message starting at ``lines[index]`` (0: none).

    An earlier message's headers start with ``From:`` and go on, within the next five
    lines, with at least two more of Sent/Date/To/Cc/Subject, one of them ``Sent:`` or
    ``Subject:`` (every client writes one of those; a form's "From: / To: / Date:" lines
    alone are not a message's headers).
    """
    found = _INNER_HEADER.match(text[lines[index].start : lines[index].end])
    if found is None or found.group(1).lower() != "from" or not found.group(2):
        return 0
    names = []
    count = 1
    for span in lines[index + 1 : index + 6]:
        row = _INNER_HEADER.match(text[span.start : span.end])
        if row is None:
            break
        names.append(row.group(1).lower())
        count += 1
    if len(names) >= 2 and {"sent", "subject"} & set(names):
        return count
    return 0

"""Broken and hostile email messages: catalogue E1–E5, E9, E10 and E11 (tests/CATALOGUE.md).

Every message is written here as bytes.  Reason codes and warnings:

=====  ==========================================================================
E1     ``unknown_charset`` warning, fallback decoding, encoding counted as guessed
E2     U+FFFD in the header text + ``header_decode`` warning
E3     attachment names are never used as paths: nothing is written anywhere
E4     ``attachment_skipped`` warning for a part over ``limits.email_part_bytes``;
       the body is still read; when the dropped part is the message's text (no MIME
       parts, or an inline text part): ``partial: mime_limits``
E5     ``partial: mime_limits`` past ``limits.email_parts`` / ``limits.email_depth``
E10    ``partial: bad_mime_structure`` when the stdlib cannot find the body (``get_body`` raises)
E11    ``failed: too_large`` past ``limits.email_bytes``, before parsing
=====  ==========================================================================
"""

from __future__ import annotations

import base64
import os
from pathlib import Path

import pytest

from structurize.api import extract_document, extract_folder
from structurize.options import ExtractOptions, Limits
from structurize.readers import read_document
from structurize.readers.mail import bounded_message
from structurize.types import DocStatus
from structurize.write import write_outputs

from conftest import make_schema

RULES = ExtractOptions(ner=None)
HEAD = b"From: Ana Ruiz <ana@example.org>\r\nTo: hr@example.org\r\nSubject: Leave request\r\nDate: Fri, 14 Mar 2025 09:00:00 +0000\r\nMIME-Version: 1.0\r\n"
SCHEMA = make_schema(
    {"name": "employee", "type": "string", "extract": {"as": "person", "cues": ["employee"]}},
)


def write(tmp_path: Path, data: bytes, name: str = "message.eml") -> Path:
    path = tmp_path / name
    path.write_bytes(data)
    return path


def read(path: Path, options: ExtractOptions = RULES):
    return read_document(path, path.name, options)


def multipart(parts: list[bytes], boundary: bytes = b"BOUNDARY", head: bytes = HEAD) -> bytes:
    out = head + b'Content-Type: multipart/mixed; boundary="' + boundary + b'"\r\n\r\npreamble\r\n'
    for part in parts:
        out += b"--" + boundary + b"\r\n" + part
    return out + b"--" + boundary + b"--\r\n"


def text_part(body: bytes, charset: bytes = b"utf-8") -> bytes:
    return b"Content-Type: text/plain; charset=" + charset + b"\r\n\r\n" + body + b"\r\n"


# --- E1: unknown body charset ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "charset, body, expected",
    [
        pytest.param(b'"x-bogus"', "Employee: José Núñez".encode("cp1252"), "Employee: José Núñez", id="E1-x-bogus-cp1252-bytes"),
        pytest.param(b'"cp-850"', "Employee: José Núñez".encode("utf-8"), "Employee: José Núñez", id="E1-cp-850-utf8-bytes"),
        pytest.param(b'"utf-8 euao6y69zh2w"', "Employee: José Núñez".encode("utf-8"), "Employee: José Núñez", id="E1-utf-8-junk"),
        pytest.param(b"_iso-2022-jp$esc", b"Employee: Ana Ruiz", "Employee: Ana Ruiz", id="E1-iso-2022-jp-esc"),
    ],
)
def test_e1_unknown_charset_falls_back_with_a_warning(tmp_path, charset, body, expected):
    data = HEAD + b"Content-Type: text/plain; charset=" + charset + b"\r\nContent-Transfer-Encoding: 8bit\r\n\r\n" + body + b"\r\n"
    doc = read(write(tmp_path, data))
    assert doc.status is DocStatus.OK  # no LookupError escaping (imbox #113/#169)
    assert "unknown_charset" in doc.warnings
    assert expected in doc.text
    assert doc.encoding_guessed is True  # extract/extractors.py _candidate flags encoding_guessed (×0.9)


def test_e1_confidence_is_lowered_against_a_known_charset(tmp_path):
    body = "Employee: José Núñez".encode("utf-8")
    good = write(tmp_path, HEAD + b"Content-Type: text/plain; charset=utf-8\r\n\r\n" + body + b"\r\n", "good.eml")
    bogus = write(tmp_path, HEAD + b"Content-Type: text/plain; charset=x-bogus\r\n\r\n" + body + b"\r\n", "bogus.eml")
    known = extract_document(good, SCHEMA, options=RULES).value("employee")
    guessed = extract_document(bogus, SCHEMA, options=RULES).value("employee")
    assert known.value == guessed.value == "José Núñez"
    assert guessed.confidence < known.confidence


# --- E2: malformed encoded words ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "header, shown",
    [
        pytest.param(b"From: =?x-unknown?Q?Jos=E9?= <jose@example.org>", "Jos\ufffd", id="E2-unknown-charset-word"),
        pytest.param(b"Subject: =?utf-8?B?bad!!?= request", "\ufffd", id="E2-bad-base64-word"),
        pytest.param(b"Subject: =?utf-8?Q?caf=C3?= menu", "caf\ufffd", id="E2-truncated-utf8-word"),
        pytest.param(b"Subject: Caf\xe9 menu (raw 8-bit)", "Caf\ufffd", id="E2-raw-8bit-header"),
    ],
)
def test_e2_bad_encoded_words_become_replacement_characters(tmp_path, header, shown):
    rest = b"\r\n".join(line for line in HEAD.split(b"\r\n") if line and not line.startswith(header.split(b":")[0] + b":"))
    data = header + b"\r\n" + rest + b"\r\nContent-Type: text/plain\r\n\r\nEmployee: Ana Ruiz\r\n"
    doc = read(write(tmp_path, data))
    assert doc.status is DocStatus.OK
    assert "header_decode" in doc.warnings
    assert shown in doc.text
    assert not any("\ud800" <= ch <= "\udfff" for ch in doc.text)  # no lone surrogate reaches a writer


def test_e2_undecodable_display_name_is_written_safely(tmp_path):
    # policy.default keeps the bytes of an unknown-charset name as lone surrogates ('Jos\udce9'):
    # the address's name must come out as U+FFFD, and every output must still be written
    data = b"From: =?x-unknown?Q?Jos=E9?= <jose@example.org>\r\n" + HEAD.split(b"\r\n", 1)[1] + b"Content-Type: text/plain\r\n\r\nhello\r\n"
    doc = read(write(tmp_path, data))
    address = doc.header("From").addresses[0]
    assert address.name == "Jos\ufffd" and doc.text[address.name_span.start : address.name_span.end] == address.name
    result = extract_folder(tmp_path, SCHEMA, options=ExtractOptions(ner=None, workers=0))
    write_outputs(result, tmp_path / "out")
    assert (tmp_path / "out" / "table.csv").exists()


# --- E3: attachment file names are never paths ------------------------------------------------------------------


@pytest.mark.parametrize(
    "disposition",
    [
        pytest.param(b"attachment; filename*=utf-8''..%2F..%2F.bashrc", id="E3-rfc2231-traversal"),
        pytest.param(b'attachment; filename="/tmp/structurize-e3-absolute.txt"', id="E3-absolute-path"),
        pytest.param(b'attachment; filename="CON"', id="E3-device-name"),
        pytest.param(b'attachment; filename="../../../../structurize-e3.txt"', id="E3-dotdot"),
    ],
)
def test_e3_attachment_names_are_never_used_as_paths(tmp_path, monkeypatch, disposition):
    work = tmp_path / "a" / "b" / "c"
    inbox = work / "in"
    inbox.mkdir(parents=True)
    payload = base64.b64encode(b"echo owned\n")
    data = multipart([
        text_part(b"Employee: Ana Ruiz"),
        b"Content-Type: application/octet-stream\r\nContent-Disposition: " + disposition + b"\r\nContent-Transfer-Encoding: base64\r\n\r\n" + payload + b"\r\n",
    ])
    write(inbox, data)
    monkeypatch.chdir(work)
    before = {p for p in tmp_path.rglob("*")}
    absolute = Path("/tmp/structurize-e3-absolute.txt")
    absolute.unlink(missing_ok=True)
    result = extract_folder(inbox, SCHEMA, options=ExtractOptions(ner=None, workers=0))
    assert result.documents[0].status is DocStatus.OK
    assert result.documents[0].value("employee").value == "Ana Ruiz"
    assert {p for p in tmp_path.rglob("*")} == before  # nothing written anywhere under the tree
    assert not absolute.exists() and not Path("/tmp/structurize-e3.txt").exists()
    assert "echo owned" not in str(result.documents[0])


# --- E4: a huge attachment -----------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "wrap",
    [pytest.param(True, id="E4-base64-76-char-lines"), pytest.param(False, id="E4-base64-one-line-no-newlines")],
)
def test_e4_huge_attachment_is_skipped_and_the_body_read(tmp_path, wrap):
    blob = base64.b64encode(os.urandom(3 << 20))
    if wrap:
        blob = b"\r\n".join(blob[i : i + 76] for i in range(0, len(blob), 76))
    data = multipart([
        text_part(b"Employee: Ana Ruiz"),
        b'Content-Type: application/pdf\r\nContent-Disposition: attachment; filename="scan.pdf"\r\nContent-Transfer-Encoding: base64\r\n\r\n' + blob + b"\r\n",
        text_part(b"Trailing part after the attachment"),
    ])
    options = ExtractOptions(ner=None, limits=Limits(email_part_bytes=1 << 20))
    path = write(tmp_path, data)
    bounded = bounded_message(path, options.limits)
    assert bounded.skipped == 1 and len(bounded.data) < 100_000  # the part's content is not kept
    doc = read(path, options)
    assert doc.status is DocStatus.OK and "attachment_skipped" in doc.warnings
    assert "Employee: Ana Ruiz" in doc.text
    result = extract_document(path, SCHEMA, options=options)
    assert result.value("employee").value == "Ana Ruiz"


def test_e4_under_the_cap_is_kept_byte_for_byte(tmp_path):
    data = multipart([text_part(b"Employee: Ana Ruiz"), text_part(b"x" * 5000)])
    path = write(tmp_path, data)
    bounded = bounded_message(path, Limits())
    assert bounded.data == data and bounded.skipped == 0 and bounded.limit_hit == ""


# --- E5: too many parts, too deep ----------------------------------------------------------------------------------


def nested(depth: int) -> bytes:
    """A first text part with the employee, then multiparts nested ``depth`` levels deep in all."""
    inner = text_part(b"innermost")
    for level in range(depth, 1, -1):
        boundary = b"level%d" % level
        inner = b'Content-Type: multipart/mixed; boundary="' + boundary + b'"\r\n\r\n--' + boundary + b"\r\n" + inner + b"--" + boundary + b"--\r\n"
    return multipart([text_part(b"Employee: Ana Ruiz"), inner], boundary=b"level1")


def nested_rfc822(depth: int) -> bytes:
    """A first text part with the employee, then enclosed messages ``depth`` levels deep."""
    message = HEAD + b"Content-Type: text/plain\r\n\r\ninnermost\r\n"
    for _ in range(depth - 1):
        message = HEAD + b"Content-Type: message/rfc822\r\n\r\n" + message
    return multipart([text_part(b"Employee: Ana Ruiz"), b"Content-Type: message/rfc822\r\n\r\n" + message])


@pytest.mark.parametrize(
    "data, limits, status, hit",
    [
        pytest.param(lambda: multipart([text_part(b"Employee: Ana Ruiz")] + [text_part(b"part %d" % i) for i in range(200)]), Limits(email_parts=50), DocStatus.PARTIAL, "parts", id="E5-200-parts-limit-50"),
        pytest.param(lambda: multipart([text_part(b"Employee: Ana Ruiz")] + [text_part(b"p") for _ in range(20_000)]), Limits(), DocStatus.PARTIAL, "parts", id="E5-20000-parts-default-limit"),
        pytest.param(lambda: nested(1000), Limits(), DocStatus.PARTIAL, "nesting", id="E5-1000-deep-multipart"),
        pytest.param(lambda: nested(30), Limits(email_depth=5), DocStatus.PARTIAL, "nesting", id="E5-30-deep-limit-5"),
        pytest.param(lambda: nested_rfc822(1000), Limits(), DocStatus.PARTIAL, "nesting", id="E5-1000-deep-message-rfc822"),
        pytest.param(lambda: nested(5), Limits(email_depth=5), DocStatus.OK, "", id="E5-at-the-depth-limit"),
        pytest.param(lambda: nested_rfc822(4), Limits(email_depth=5), DocStatus.OK, "", id="E5-message-rfc822-within-the-limit"),
        pytest.param(lambda: multipart([text_part(b"Employee: Ana Ruiz")] * 3)[:-14], Limits(), DocStatus.OK, "", id="E5-missing-close-boundary"),
    ],
)
def test_e5_mime_limits(tmp_path, data, limits, status, hit):
    doc = read(write(tmp_path, data()), ExtractOptions(ner=None, limits=limits))
    assert doc.status is status
    if hit:
        assert doc.reason == "mime_limits" and hit in doc.note and "mime_limits" in doc.warnings
    # what came before the limit is read (the first part holds the employee)
    assert "Employee: Ana Ruiz" in doc.text


def test_e5_missing_close_boundary_is_a_defect_warning(tmp_path):
    doc = read(write(tmp_path, multipart([text_part(b"Employee: Ana Ruiz")] * 2)[: -len(b"--BOUNDARY--\r\n")]))
    assert doc.status is DocStatus.OK and "email_defects" in doc.warnings


# --- E9: not an email -----------------------------------------------------------------------------------------------


def test_e9_binary_is_not_an_email(tmp_path):
    doc = read(write(tmp_path, bytes(range(256))))
    assert (doc.status, doc.reason) == (DocStatus.FAILED, "not_an_email")


# --- malformed headers: the stdlib's header parser raises many types (found by fuzzing) ----------------------------


@pytest.mark.parametrize(
    "header, warning",
    [
        pytest.param(b"From: Ana <\rana@example.org>", "bad_address_header", id="E9-cr-inside-angle-address"),
        pytest.param(b"From: =?utf-8?q?Ana_Ru=C3=ADz?-Type: text/plain; charset=utf-8", "bad_address_header", id="E9-broken-encoded-word-group"),
        pytest.param(b"Date: Tue, 1 Jul 2025 09:30:00 +02" + b"002" * 100, "bad_date_header", id="E9-huge-date-offset"),
        pytest.param(b"From: =?u\xedtf-8?q?Ana_Ruiz?= <ana@example.org>", "header_decode", id="E2-non-ascii-charset-name"),
    ],
)
def test_malformed_headers_are_warnings_not_failures(tmp_path, header, warning):
    name = header.split(b":")[0]
    rest = b"".join(line + b"\r\n" for line in HEAD.split(b"\r\n") if line and not line.startswith(name + b":"))
    doc = read(write(tmp_path, header + b"\r\n" + rest + b"Content-Type: text/plain\r\n\r\nEmployee: Ana Ruiz\r\n"))
    assert doc.status is DocStatus.OK and doc.reason == ""
    assert warning in doc.warnings
    assert "Employee: Ana Ruiz" in doc.text


def test_e1_nul_in_a_charset_name_falls_back(tmp_path):
    doc = read(write(tmp_path, HEAD + b"Content-Type: text/plain; charset=\x00utf-8\r\n\r\nEmployee: Ana Ruiz\r\n"))
    assert doc.status is DocStatus.OK and "Employee: Ana Ruiz" in doc.text


# --- E4 (text lost) and E10: a part that held the message's text, and a broken MIME tree, are partial -----------------


def _get_body_raises(monkeypatch):
    from email.message import EmailMessage

    def broken(self, preferencelist=("related", "html", "plain")):
        raise AttributeError("'str' object has no attribute 'get_content_maintype'")  # what fuzzed trees raise

    monkeypatch.setattr(EmailMessage, "get_body", broken)


def _nothing(monkeypatch):
    pass


BIG = b"Employee: Ana Ruiz\r\n" + b"x" * 2000 + b"\r\n"
SMALL_PARTS = Limits(email_part_bytes=1000)


@pytest.mark.parametrize(
    "data, limits, patch, status, reason, warnings, absent",
    [
        pytest.param(HEAD + b"\r\n" + BIG, SMALL_PARTS, _nothing, DocStatus.PARTIAL, "mime_limits", {"mime_limits"}, {"attachment_skipped"}, id="E4-no-mime-parts-body-over-the-part-limit"),
        pytest.param(multipart([text_part(BIG)]), SMALL_PARTS, _nothing, DocStatus.PARTIAL, "mime_limits", {"mime_limits"}, {"attachment_skipped"}, id="E4-inline-text-part-over-the-limit"),
        pytest.param(
            multipart([b"Content-Type: text/html; charset=utf-8\r\n\r\n<p>" + BIG + b"</p>\r\n"]), SMALL_PARTS, _nothing,
            DocStatus.PARTIAL, "mime_limits", {"mime_limits"}, {"attachment_skipped"}, id="E4-inline-html-part-over-the-limit",
        ),
        pytest.param(
            multipart([text_part(b"Employee: Ana Ruiz"), b'Content-Type: text/plain\r\nContent-Disposition: attachment; filename="log.txt"\r\n\r\n' + BIG]),
            SMALL_PARTS, _nothing, DocStatus.OK, "", {"attachment_skipped"}, {"mime_limits"}, id="E4-text-attachment-over-the-limit-is-an-attachment",
        ),
        pytest.param(
            multipart([text_part(b"Employee: Ana Ruiz"), b"Content-Type: application/pdf\r\n\r\n" + BIG]), SMALL_PARTS, _nothing,
            DocStatus.OK, "", {"attachment_skipped"}, {"mime_limits"}, id="E4-binary-part-over-the-limit",
        ),
        pytest.param(
            multipart([text_part(b"Employee: Ana Ruiz")])[:-2] + b"\r\n" + BIG, SMALL_PARTS, _nothing, DocStatus.OK, "", {"attachment_skipped"}, {"mime_limits"},
            id="E4-epilogue-over-the-limit-is-not-text",
        ),
        pytest.param(HEAD + b"\r\n" + BIG, Limits(), _nothing, DocStatus.OK, "", set(), {"mime_limits", "attachment_skipped"}, id="E4-body-within-the-limit"),
        pytest.param(
            multipart([text_part(b"Employee: Ana Ruiz"), b"Content-Type: text/html\r\n\r\n<p>" + BIG + b"</p>\r\n"]).replace(b"multipart/mixed", b"multipart/alternative"),
            SMALL_PARTS, _nothing, DocStatus.OK, "", {"attachment_skipped"}, {"mime_limits"}, id="E4-unread-html-alternative-over-the-limit",
        ),
        pytest.param(multipart([text_part(b"Employee: Ana Ruiz")]), Limits(), _get_body_raises, DocStatus.PARTIAL, "bad_mime_structure", {"bad_mime_structure"}, set(), id="E10-get-body-raises"),
    ],
)
def test_lost_message_text_is_partial(tmp_path, monkeypatch, data, limits, patch, status, reason, warnings, absent):
    patch(monkeypatch)
    doc = read(write(tmp_path, data), ExtractOptions(ner=None, limits=limits))
    assert (doc.status, doc.reason) == (status, reason)
    assert warnings <= set(doc.warnings) and not absent & set(doc.warnings)
    assert "From: Ana Ruiz <ana@example.org>" in doc.text  # the headers are read in every case
    if status is DocStatus.PARTIAL:
        assert doc.note and "Ana" not in doc.note and "xxx" not in doc.note
    if reason == "mime_limits":
        assert "1000 bytes" in doc.note and "Employee" not in doc.text
    if status is DocStatus.OK and "attachment_skipped" in warnings:
        assert "Employee: Ana Ruiz" in doc.text


# --- E11: a whole message over limits.email_bytes is refused before it is parsed ----------------------------------------


@pytest.mark.parametrize(
    "size, limit, status, reason",
    [
        pytest.param(5000, 4000, DocStatus.FAILED, "too_large", id="E11-over-the-limit"),
        pytest.param(5000, 5000, DocStatus.OK, "", id="E11-at-the-limit"),
        pytest.param(5000, Limits().email_bytes, DocStatus.OK, "", id="E11-default-limit"),
    ],
)
def test_e11_message_size_limit(tmp_path, monkeypatch, size, limit, status, reason):
    from structurize.readers import mail

    body = b"Employee: Ana Ruiz\r\n"
    data = HEAD + b"\r\n" + body + b"y" * (size - len(HEAD) - 2 - len(body))
    assert len(data) == size
    parsed = []
    real = mail.bounded_message
    monkeypatch.setattr(mail, "bounded_message", lambda *a, **k: parsed.append(1) or real(*a, **k))
    doc = read(write(tmp_path, data), ExtractOptions(ner=None, limits=Limits(email_bytes=limit)))
    assert (doc.status, doc.reason) == (status, reason)
    if reason:
        assert parsed == []  # refused before a byte was parsed
        assert str(limit) in doc.note and doc.text == ""


def test_e11_a_message_that_grows_while_read_is_still_capped(tmp_path):
    path = write(tmp_path, HEAD + b"\r\n" + b"Employee: Ana Ruiz\r\n" * 100)
    limits = Limits(email_bytes=500)  # as if the file had grown after its size was checked
    with pytest.raises(Exception) as caught:
        bounded_message(path, limits)
    assert getattr(caught.value, "code", None) == "too_large"

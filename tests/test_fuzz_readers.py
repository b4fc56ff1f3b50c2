"""Property-based fuzzing of every reader (.txt .md .html .eml .docx .pdf).

Every parser failure is caught at the document boundary (the pdfminer.six maintainers treat
raising on a malformed PDF as expected behaviour: pdfminer.six issues #547, #549-#552), and
catalogue E0 (tests/CATALOGUE.md: bounded time): for random bytes and for mutations (bit flips, truncation,
splices, insertions, repeats) of small valid seed documents generated here,
:func:`read_document` returns a :class:`Document` and never raises, within a time bound.

CI runs a fixed, derandomised set (``max_examples`` per reader below).  For a longer random
run set ``STRUCTURIZE_FUZZ_EXAMPLES=2000 STRUCTURIZE_FUZZ_RANDOM=1``.  Any input that makes
a reader raise or hang is saved under ``tests/regressions/fuzz/`` and replayed by
:func:`test_fuzz_regressions_still_read` forever.
"""

from __future__ import annotations

import atexit
import hashlib
import io
import os
import shutil
import signal
import sys
import tempfile
import time
import zipfile
from collections.abc import Callable
from contextlib import contextmanager
from datetime import timedelta
from pathlib import Path
from typing import Iterator

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from structurize.options import ExtractOptions
from structurize.readers import read_document
from structurize.types import Document, DocStatus

from pdfmaker import make_pdf

REGRESSIONS = Path(__file__).parent / "regressions" / "fuzz"
EXAMPLES = int(os.environ.get("STRUCTURIZE_FUZZ_EXAMPLES", "60"))
RANDOM = os.environ.get("STRUCTURIZE_FUZZ_RANDOM") == "1"
#: Seconds one example may take: hypothesis' deadline, then the wall-clock assertion, then
#: the alarm that turns a hang into a failure (and a saved regression) instead of a stuck run.
DEADLINE_SECONDS = 5
WALL_SECONDS = 10
ALARM_SECONDS = 30
OPTIONS = ExtractOptions(ner=None, workers=0)

FUZZ = settings(
    max_examples=EXAMPLES,
    deadline=timedelta(seconds=DEADLINE_SECONDS),
    derandomize=not RANDOM,
    database=None,
    print_blob=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
)


# --- seed documents, generated -------------------------------------------------------------------------


def _seed_txt() -> bytes:
    return (
        "Offer of employment\n\nDear Zoë Müller,\n\nWe are pleased to offer you the position of Senior Analyst.\n"
        "Start date: 03/04/2025\nSalary: €52,000 per year\nEmployee ID: HP-40211\n\nRegards,\nAna Ruiz\nHR\n"
    ).encode("utf-8")


def _seed_md() -> bytes:
    return (
        "# Transfer request\n\n| Field | Value |\n| --- | --- |\n| Employee | Kenji Fujimura |\n| Current site | Millbrook |\n"
        "| Proposed site | Harbour Point |\n\n> quoted: **was** June 23\n\n- [x] approved\n- [ ] rejected\n"
    ).encode("utf-8")


def _seed_html() -> bytes:
    return (
        "<!DOCTYPE html><html><head><meta charset='utf-8'><title>Offer</title><style>p{color:red}</style>"
        "<script>alert(1)</script></head><body><h1>Offer &amp; terms</h1><p>Dear <b>Zoë</b> Müller,</p>"
        "<table><tr><th>Salary</th><td>$50,000</td></tr><tr><td colspan=2>Start &nbsp; 2025-04-03</td></tr></table>"
        "<ul><li>one<li>two</ul><!-- comment --><br/>&#x1F600; &#0; &bogus;</body></html>"
    ).encode("utf-8")


def _seed_eml() -> bytes:
    return (
        "From: =?utf-8?q?Ana_Ru=C3=ADz?= <ana@example.com>\r\nTo: Bea <bea@example.com>, carl@example.com\r\n"
        "Subject: =?utf-8?b?UmU6IE9mZmVy?=\r\nDate: Tue, 1 Jul 2025 09:30:00 +0200\r\nMIME-Version: 1.0\r\n"
        'Content-Type: multipart/mixed; boundary="XYZ"\r\n\r\n--XYZ\r\nContent-Type: text/plain; charset=utf-8\r\n'
        "Content-Transfer-Encoding: quoted-printable\r\n\r\nHi Bea,=0D=0AStart date: July 7.=\r\n\r\n> On Monday Carl wrote:\r\n> was June 23\r\n"
        "--XYZ\r\nContent-Type: text/html; charset=iso-8859-1\r\nContent-Transfer-Encoding: base64\r\n\r\n"
        "PHA+U2FsYXJ5OiAkNTAsMDAwPC9wPg==\r\n--XYZ--\r\n"
    ).encode("utf-8")


def _seed_docx() -> bytes:
    import docx

    document = docx.Document()
    document.add_heading("Exit interview", level=1)
    document.add_paragraph("Employee: Lars Halvorsen")
    document.add_paragraph("Reason for leaving: ☑ relocation ☐ pay")
    table = document.add_table(rows=2, cols=2)
    table.cell(0, 0).text, table.cell(0, 1).text = "Last day", "2025-06-30"
    table.cell(1, 0).text, table.cell(1, 1).text = "Rehire", "Yes"
    buffer = io.BytesIO()
    document.save(buffer)
    return buffer.getvalue()


def _seed_pdf() -> bytes:
    with tempfile.TemporaryDirectory() as folder:
        path = make_pdf(Path(folder) / "seed.pdf", [["Offer letter", "Dear Ana Ruiz,", "Salary: $50,000"], None])
        return path.read_bytes()


SEEDS: dict[str, Callable[[], bytes]] = {
    ".txt": _seed_txt,
    ".md": _seed_md,
    ".html": _seed_html,
    ".eml": _seed_eml,
    ".docx": _seed_docx,
    ".pdf": _seed_pdf,
}
_SEED_CACHE: dict[str, bytes] = {}


def seed(suffix: str) -> bytes:
    if suffix not in _SEED_CACHE:
        _SEED_CACHE[suffix] = SEEDS[suffix]()
    return _SEED_CACHE[suffix]


def test_seeds_are_valid_documents(tmp_path: Path) -> None:
    """The seeds read cleanly, so mutations start from real structure."""
    for suffix in SEEDS:
        path = tmp_path / f"seed{suffix}"
        path.write_bytes(seed(suffix))
        doc = read_document(path, path.name, OPTIONS)
        assert doc.status in (DocStatus.OK, DocStatus.PARTIAL), (suffix, doc.status, doc.reason)
        assert doc.text.strip(), suffix


# --- mutations -----------------------------------------------------------------------------------------------


@st.composite
def mutated(draw: st.DrawFn, data: bytes) -> bytes:
    """``data`` after one to four mutations."""
    out = bytearray(data)
    for _ in range(draw(st.integers(1, 4))):
        kind = draw(st.sampled_from(["flip", "truncate", "splice", "insert", "delete", "repeat", "byte"]))
        size = len(out)
        at = draw(st.integers(0, max(0, size - 1)))
        if kind == "flip" and size:
            for _ in range(draw(st.integers(1, 16))):
                spot = draw(st.integers(0, size - 1))
                out[spot] ^= 1 << draw(st.integers(0, 7))
        elif kind == "truncate":
            del out[at:]
        elif kind == "splice":  # a stretch of the document copied over another place
            length = draw(st.integers(1, 512))
            source = draw(st.integers(0, max(0, size - 1)))
            out[at : at + length] = out[source : source + length]
        elif kind == "insert":
            out[at:at] = draw(st.binary(min_size=1, max_size=64))
        elif kind == "delete":
            del out[at : at + draw(st.integers(1, 256))]
        elif kind == "repeat":  # a stretch repeated many times (nesting, floods)
            length = draw(st.integers(1, 16))
            out[at:at] = bytes(out[at : at + length]) * draw(st.integers(2, 200))
        elif kind == "byte" and size:
            out[at] = draw(st.sampled_from([0, 0x0A, 0x0D, 0x1B, 0x22, 0x25, 0x28, 0x29, 0x3C, 0x3E, 0x5B, 0x5D, 0x7B, 0x7D, 0x80, 0xC3, 0xFF]))
    return bytes(out)


@st.composite
def docx_with_mutated_xml(draw: st.DrawFn) -> bytes:
    """A valid zip whose members (document.xml, rels, content types) are mutated: fuzzes past the CRC check."""
    source = zipfile.ZipFile(io.BytesIO(seed(".docx")))
    names = source.namelist()
    targets = draw(st.sets(st.sampled_from(names), min_size=1, max_size=3))
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for name in names:
            body = source.read(name)
            archive.writestr(name, draw(mutated(body)) if name in targets else body)
    return buffer.getvalue()


def inputs(suffix: str) -> st.SearchStrategy[bytes]:
    options = [st.binary(max_size=2048), mutated(seed(suffix))]
    if suffix == ".docx":
        options.append(docx_with_mutated_xml())
    return st.one_of(*options)


# --- the property -----------------------------------------------------------------------------------------


class Hang(BaseException):
    """Raised by the alarm; a BaseException so that no reader's ``except Exception`` swallows it."""


@contextmanager
def alarm(seconds: int) -> Iterator[None]:
    def ring(signum: int, frame: object) -> None:
        raise Hang(f"no result after {seconds} s")

    previous = signal.signal(signal.SIGALRM, ring)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def save_regression(data: bytes, suffix: str) -> Path:
    REGRESSIONS.mkdir(parents=True, exist_ok=True)
    path = REGRESSIONS / f"{suffix.lstrip('.')}-{hashlib.sha256(data).hexdigest()[:16]}{suffix}"
    path.write_bytes(data)
    return path


def check_reads(data: bytes, suffix: str, folder: Path) -> Document:
    """read_document on ``data`` returns a Document in bounded time; otherwise save the input and fail."""
    path = folder / f"fuzz{suffix}"
    path.write_bytes(data)
    started = time.monotonic()
    try:
        with alarm(ALARM_SECONDS):
            doc = read_document(path, path.name, OPTIONS)
    except BaseException as exc:  # noqa: BLE001 - any escape is the bug being hunted
        saved = save_regression(data, suffix)
        raise AssertionError(f"read_document raised {type(exc).__name__}: {exc}; input saved as {saved}") from exc
    elapsed = time.monotonic() - started
    if elapsed > WALL_SECONDS:
        saved = save_regression(data, suffix)
        raise AssertionError(f"read_document took {elapsed:.1f} s; input saved as {saved}")
    assert isinstance(doc, Document)
    assert isinstance(doc.status, DocStatus)
    if not doc.status.readable:
        assert doc.reason, "a document that was not read needs a reason code"
    for span in doc.lines:  # spans point into the text
        assert 0 <= span.start <= span.end <= len(doc.text)
    return doc


_FOLDER = Path(tempfile.mkdtemp(prefix="structurize-fuzz-"))
atexit.register(shutil.rmtree, _FOLDER, ignore_errors=True)


@pytest.mark.parametrize("suffix", list(SEEDS))
def test_fuzz_reader_never_raises_and_is_bounded(suffix: str) -> None:
    strategy = inputs(suffix)

    @FUZZ
    @given(data=strategy)
    def property_(data: bytes) -> None:
        check_reads(data, suffix, _FOLDER)

    property_()


def _regressions() -> list[Path]:
    if not REGRESSIONS.is_dir():
        return []
    return sorted(p for p in REGRESSIONS.iterdir() if p.is_file() and p.suffix in SEEDS)


@pytest.mark.parametrize("path", _regressions(), ids=lambda p: p.name)
def test_fuzz_regressions_still_read(path: Path, tmp_path: Path) -> None:
    """Every input that once crashed or hung a reader is read cleanly and in bounded time."""
    check_reads(path.read_bytes(), path.suffix, tmp_path)


#: Regression inputs a reader still fails on with an unexpected exception (caught at the
#: document boundary as ``failed: reader_error``).  The readers should give each its own
#: reason; when one does, remove it here (the strict xfail turns into a failure).
KNOWN_READER_ERRORS: dict[str, str] = {
    # "<file name>": "<what the reader does not expect>",
    # (the ten inputs found while writing this test all have their own reasons now)
}


def _reason_params() -> list[object]:
    return [
        pytest.param(path, marks=pytest.mark.xfail(strict=True, reason=KNOWN_READER_ERRORS[path.name]), id=path.name)
        if path.name in KNOWN_READER_ERRORS
        else pytest.param(path, id=path.name)
        for path in _regressions()
    ]


@pytest.mark.parametrize("path", _reason_params())
def test_fuzz_regressions_get_a_specific_reason(path: Path, tmp_path: Path) -> None:
    """A reader names what is wrong with the file; ``reader_error`` means it did not expect it."""
    doc = check_reads(path.read_bytes(), path.suffix, tmp_path)
    assert doc.reason != "reader_error", f"{path.name}: reader_error ({doc.note})"


def test_fuzz_known_reader_errors_are_on_disk() -> None:
    names = {path.name for path in _regressions()}
    assert set(KNOWN_READER_ERRORS) <= names


def test_fuzz_harness_catches_a_raising_reader(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """The harness itself can fail: an escaping exception is reported and its input saved."""
    import structurize.readers as readers

    saved: list[bytes] = []

    def escape(*args: object) -> None:
        raise KeyboardInterrupt  # not an Exception: read_document lets it through

    def keep(data: bytes, suffix: str) -> Path:
        saved.append(data)
        return tmp_path / "saved"

    monkeypatch.setattr(readers, "_read", escape)
    monkeypatch.setattr(sys.modules[__name__], "save_regression", keep)
    with pytest.raises(AssertionError, match="raised KeyboardInterrupt"):
        check_reads(b"hello", ".txt", tmp_path)
    assert saved == [b"hello"]

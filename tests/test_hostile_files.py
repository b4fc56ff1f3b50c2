"""File-system hazards in the input folder and an unwritable output: catalogue F1, F2, F4, F5
and C2 (tests/CATALOGUE.md).

F1 symlinks out of the folder and loops, F2 FIFOs and other non-regular files, F4 files that
change while they are read, F5 hostile file names, C2 an output folder that cannot be
written.  Everything is generated in the test; anything that could block (a FIFO, a link
loop) runs under a timeout so that a regression fails instead of hanging the suite.
"""

from __future__ import annotations

import csv
import os
import shutil
import socket
import stat
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

import structurize.readers as readers
from structurize.api import discover, extract_folder
from structurize.cli import app
from structurize.options import ExtractOptions
from structurize.readers import read_document
from structurize.types import DocStatus
from structurize.write import unguard

from conftest import DEMO_DOCS, SCHEMAS

runner = CliRunner()
SCHEMA = SCHEMAS / "offer_letter.yaml"
GOOD = DEMO_DOCS / "offer_letter" / "offer_dvorakova.txt"
RULES = ExtractOptions(ner=None, workers=0)
#: The private fact that must never leave its file through a symbolic link (F1).
SECRET = "Salary: 987,654 per year (CANARY-7f3a)"


def within(seconds: float, work: Callable[[], Any]) -> Any:
    """``work()``, failing the test (instead of hanging it) if it takes longer than ``seconds``."""
    outcome: list[Any] = []
    failure: list[BaseException] = []

    def run() -> None:
        try:
            outcome.append(work())
        except BaseException as exc:  # noqa: BLE001 - re-raised in the test's thread
            failure.append(exc)

    thread = threading.Thread(target=run, daemon=True)
    thread.start()
    thread.join(timeout=seconds)
    assert not thread.is_alive(), f"still running after {seconds} s (blocked?)"
    if failure:
        raise failure[0]
    return outcome[0]


def read_csv(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8-sig", newline="") as handle:
        return [{key: unguard(value) for key, value in row.items()} for row in csv.DictReader(handle)]


# --- F2: FIFOs, sockets, devices --------------------------------------------------------------------


def _fifo(path: Path) -> None:
    os.mkfifo(path)


def _socket(path: Path) -> None:
    server = socket.socket(socket.AF_UNIX, socket.SOCK_STREAM)
    server.bind(str(path))
    server.close()  # the socket file stays


def _char_device(path: Path) -> None:
    try:
        os.mknod(path, stat.S_IFCHR | 0o600, os.makedev(1, 3))  # like /dev/null
    except (PermissionError, OSError) as exc:
        pytest.skip(f"cannot make a device node here ({exc.strerror})")


@pytest.mark.parametrize(
    "make, words",
    [
        pytest.param(_fifo, "a named pipe (FIFO)", id="F2-fifo"),
        pytest.param(_socket, "a socket", id="F2-socket"),
        pytest.param(_char_device, "a character device", id="F2-char-device"),
    ],
)
def test_F2_non_regular_files_are_reported_without_being_opened(tmp_path: Path, make: Callable[[Path], None], words: str) -> None:
    special = tmp_path / "doc.txt"
    make(special)
    doc = within(5, lambda: read_document(special, "doc.txt", RULES))
    assert (doc.status, doc.reason) == (DocStatus.FAILED, "not_regular_file")
    assert words in doc.note and doc.sha256 == ""  # never opened, so never hashed


def test_F2_a_fifo_in_the_folder_fails_only_itself(tmp_path: Path) -> None:
    inbox = tmp_path / "in"
    inbox.mkdir()
    shutil.copy(GOOD, inbox / "good.txt")
    os.mkfifo(inbox / "doc.txt")
    from structurize.schema import load_schema

    result = within(60, lambda: extract_folder(inbox, load_schema(SCHEMA), options=RULES))
    by_name = {doc.source: doc for doc in result.documents}
    assert sorted(by_name) == ["doc.txt", "good.txt"]  # reported, not silently dropped
    assert by_name["doc.txt"].reason == "not_regular_file"
    assert by_name["good.txt"].status is DocStatus.OK and by_name["good.txt"].value("candidate_name").value


def test_F2_cli_reports_the_fifo_in_one_line_and_exits_3(tmp_path: Path) -> None:
    inbox = tmp_path / "in"
    inbox.mkdir()
    shutil.copy(GOOD, inbox / "good.txt")
    os.mkfifo(inbox / "doc.txt")
    run = subprocess.run(
        [sys.executable, "-m", "structurize", "extract", str(inbox), "-s", str(SCHEMA), "-o", str(tmp_path / "out"), "--no-ner", "--workers", "1", "-q"],
        capture_output=True, text=True, timeout=120,
    )
    assert run.returncode == 3, run.stderr
    assert run.stderr.splitlines() == ["structurize: doc.txt: not_regular_file: a named pipe (FIFO), not a regular file; not opened"]
    rows = {row["document"]: row for row in read_csv(tmp_path / "out" / "documents.csv")}
    assert (rows["doc.txt"]["status"], rows["doc.txt"]["reason"]) == ("failed", "not_regular_file")
    assert rows["good.txt"]["status"] == "ok"


# --- F4: a file that changes while it is read --------------------------------------------------------------


def _append(path: Path) -> None:
    with path.open("ab") as handle:
        handle.write(b"\nSalary: 1\n")


def _truncate(path: Path) -> None:
    os.truncate(path, path.stat().st_size // 2)


def _same_size_same_mtime(path: Path) -> None:
    # a change a size-and-mtime check cannot see; the content hash does
    info = path.stat()
    data = bytearray(path.read_bytes())
    data[0] ^= 0x20
    path.write_bytes(bytes(data))
    os.utime(path, ns=(info.st_atime_ns, info.st_mtime_ns))


@pytest.mark.parametrize(
    "change",
    [pytest.param(_append, id="F4-append"), pytest.param(_truncate, id="F4-truncate"), pytest.param(_same_size_same_mtime, id="F4-same-size")],
)
@pytest.mark.parametrize("suffix", [".txt", ".pdf"])
def test_F4_a_file_changing_on_every_read_is_failed(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, change: Callable[[Path], None], suffix: str
) -> None:
    path = tmp_path / f"doc{suffix}"
    if suffix == ".pdf":
        from pdfmaker import make_pdf

        make_pdf(path, [["Dear Ana Ruiz,", "Salary: $50,000"]])
    else:
        shutil.copy(GOOD, path)
    original = readers._read
    reads: list[int] = []

    def read_then_change(*args: Any) -> Any:
        doc = original(*args)
        reads.append(1)
        change(path)  # between the hash before and the hash after
        return doc

    monkeypatch.setattr(readers, "_read", read_then_change)
    doc = read_document(path, path.name, RULES)
    assert (doc.status, doc.reason) == (DocStatus.FAILED, "changed_during_read")
    assert doc.text == "" and doc.sha256 == ""  # nothing half-read is passed on
    assert len(reads) == 2  # read once more before giving up


def test_F4_a_file_that_changes_once_is_read_again(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "doc.txt"
    path.write_text("Dear Ana Ruiz,\n", encoding="utf-8")
    original = readers._read
    calls: list[int] = []

    def change_first_time(*args: Any) -> Any:
        doc = original(*args)
        if not calls:
            path.write_text("Dear Bea Ortiz,\n", encoding="utf-8")
        calls.append(1)
        return doc

    monkeypatch.setattr(readers, "_read", change_first_time)
    doc = read_document(path, "doc.txt", RULES)
    assert doc.status is DocStatus.OK and "Bea Ortiz" in doc.text  # the settled content
    assert doc.sha256 == readers.file_sha256(path)


def test_F4_a_file_growing_under_a_real_writer_is_failed(tmp_path: Path) -> None:
    path = tmp_path / "growing.txt"
    path.write_text("Line of a memo that someone is still writing.\n" * 20_000, encoding="utf-8")
    stop = threading.Event()

    def writer() -> None:
        with path.open("ab", buffering=0) as handle:
            while not stop.is_set():
                handle.write(b"more\n")
                time.sleep(0.0005)

    thread = threading.Thread(target=writer, daemon=True)
    thread.start()
    try:
        time.sleep(0.01)
        doc = within(30, lambda: read_document(path, "growing.txt", RULES))
    finally:
        stop.set()
        thread.join()
    assert (doc.status, doc.reason) == (DocStatus.FAILED, "changed_during_read")


def test_F4_an_unchanged_file_keeps_its_hash(tmp_path: Path) -> None:
    path = tmp_path / "doc.txt"
    shutil.copy(GOOD, path)
    import hashlib

    doc = read_document(path, "doc.txt", RULES)
    assert doc.status is DocStatus.OK and doc.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


# --- F5: hostile file names -------------------------------------------------------------------------------

#: raw name bytes → the source name: printable, the same on stderr and in every output.
NAMES = [
    pytest.param(b"evil\nname.txt", "evil\\nname.txt", id="F5-newline"),
    pytest.param(b"cr\rname.txt", "cr\\rname.txt", id="F5-carriage-return"),
    pytest.param(b"ansi\x1b[2J.txt", "ansi\\x1b[2J.txt", id="F5-ansi-clear-screen"),
    pytest.param(b"osc\x1b]0;pwned\x07.txt", "osc\\x1b]0;pwned\\x07.txt", id="F5-osc-title"),
    pytest.param(b"tab\there.txt", "tab\\there.txt", id="F5-tab"),
    pytest.param("rlo\u202etxt.exe.txt".encode(), "rlo\\u202etxt.exe.txt", id="F5-right-to-left-override"),
    pytest.param(b"bad\xff\xfe.txt", "bad\\xff\\xfe.txt", id="F5-invalid-utf8"),
    pytest.param(b"-rf.txt", "-rf.txt", id="F5-leading-dash"),
    pytest.param(b"--help.txt", "--help.txt", id="F5-looks-like-an-option"),
    pytest.param(b"=cmd|' -C calc'!A0.txt", "=cmd|' -C calc'!A0.txt", id="F5-formula"),
    pytest.param("Zoë–Ünïcode.txt".encode(), "Zoë–Ünïcode.txt", id="F5-plain-unicode"),
]


@pytest.fixture(scope="module")
def hostile_names_run(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Any]:
    """One CLI run over a folder holding, for every hostile name, an empty file and a good one."""
    root = tmp_path_factory.mktemp("names")
    inbox = root / "in"
    inbox.mkdir()
    good = GOOD.read_bytes()
    for param in NAMES:
        raw = param.values[0]
        with open(os.path.join(os.fsencode(inbox), raw), "wb"):
            pass  # empty: fails, so it gets a stderr line
        folder = os.path.join(os.fsencode(inbox), b"good")
        os.makedirs(folder, exist_ok=True)
        with open(os.path.join(folder, raw), "wb") as handle:
            handle.write(good)
    result = runner.invoke(app, ["extract", str(inbox), "--schema", str(SCHEMA), "--out", str(root / "out"), "--no-ner", "--workers", "1", "-q"])
    return root / "out", result


@pytest.mark.parametrize("raw, shown", NAMES)
def test_F5_stderr_escapes_control_characters(hostile_names_run: tuple[Path, Any], raw: bytes, shown: str) -> None:
    _, result = hostile_names_run
    assert result.exit_code == 3, result.output
    assert f"structurize: {shown}: empty_file: the file is empty" in result.stderr.splitlines()
    for control in ("\x1b", "\r", "\x07", "\t", "\u202e"):
        assert control not in result.stderr  # no terminal escape or line overwrite reaches the terminal (CWE-117)


def test_F5_one_stderr_line_per_failed_document(hostile_names_run: tuple[Path, Any]) -> None:
    _, result = hostile_names_run
    assert len(result.stderr.splitlines()) == len(NAMES)  # a newline in a name never makes a second line


@pytest.mark.parametrize("raw, shown", NAMES)
def test_F5_outputs_keep_the_name(hostile_names_run: tuple[Path, Any], raw: bytes, shown: str) -> None:
    out, _ = hostile_names_run
    documents = {row["document"]: row for row in read_csv(out / "documents.csv")}
    assert documents[shown]["reason"] == "empty_file"  # unguard: a leading = - + @ was neutralised
    assert documents[f"good/{shown}"]["status"] == "ok"
    table = {row["document"]: row for row in read_csv(out / "table.csv")}
    assert table[f"good/{shown}"]["candidate_name"]  # the good copy was read under its own name
    assert len(documents) == 2 * len(NAMES)  # no two names collapsed into one


@pytest.mark.parametrize("raw, shown", NAMES)
def test_F5_formula_names_are_guarded_in_csv(hostile_names_run: tuple[Path, Any], raw: bytes, shown: str) -> None:
    out, _ = hostile_names_run
    with (out / "documents.csv").open(encoding="utf-8-sig", newline="") as handle:
        cells = [row[0] for row in csv.reader(handle)][1:]
    for cell in cells:
        assert not cell.startswith(("=", "+", "-", "@")), cell  # OWASP CSV injection


def test_F5_an_input_folder_named_like_an_option(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "-in").mkdir()
    shutil.copy(GOOD, tmp_path / "-in" / "good.txt")
    result = runner.invoke(app, ["extract", "--schema", str(SCHEMA), "--out", "out", "--no-ner", "--workers", "0", "-q", "--", "-in"])
    assert result.exit_code == 0, result.output
    assert [row["document"] for row in read_csv(tmp_path / "out" / "documents.csv")] == ["good.txt"]


# --- F1: symbolic links ------------------------------------------------------------------------------------------


@pytest.fixture
def linked_folder(tmp_path: Path) -> Path:
    outside = tmp_path / "outside"
    (outside / "private").mkdir(parents=True)
    (outside / "secret.txt").write_text(SECRET + "\n", encoding="utf-8")
    (outside / "private" / "more.txt").write_text(SECRET + "\n", encoding="utf-8")
    inbox = tmp_path / "in"
    (inbox / "sub").mkdir(parents=True)
    shutil.copy(GOOD, inbox / "good.txt")
    os.symlink(outside / "secret.txt", inbox / "link_out.txt")  # F1: out of the folder
    os.symlink(outside / "private", inbox / "private_dir")  # a folder out of the folder
    os.symlink("../../outside/secret.txt", inbox / "sub" / "relative_out.txt")
    os.symlink(inbox / "good.txt", inbox / "sub" / "link_in.txt")  # inside: read through it
    os.symlink(inbox, inbox / "sub" / "loop")  # a loop back to the top
    os.symlink("self.txt", inbox / "self.txt")  # a link to itself
    os.symlink("b.txt", inbox / "a.txt")
    os.symlink("a.txt", inbox / "b.txt")  # a two-link loop
    os.symlink(tmp_path / "nowhere.txt", inbox / "dangling.txt")
    return inbox


def test_F1_the_walk_never_follows_links_out_or_round_loops(linked_folder: Path) -> None:
    listed = within(5, lambda: list(discover(linked_folder)))
    sources = [source for _, source in listed]
    assert sources == sorted(sources) and len(sources) == len(set(sources))
    assert not any(source.startswith("sub/loop") for source in sources)  # a link to a folder inside: not walked twice
    assert not any("more.txt" in source for source in sources)  # the outside folder was not entered
    paths = {source: path for path, source in listed}
    assert paths["sub/link_in.txt"] == (linked_folder / "good.txt").resolve()  # inside: its target


@pytest.mark.parametrize(
    "source, reason, words",
    [
        pytest.param("link_out.txt", "symlink_skipped", "leads out of the input folder", id="F1-absolute-out"),
        pytest.param("sub/relative_out.txt", "symlink_skipped", "leads out of the input folder", id="F1-relative-out"),
        pytest.param("private_dir", "symlink_skipped", "leads out of the input folder", id="F1-folder-out"),
        pytest.param("self.txt", "symlink_skipped", "in a loop", id="F1-self-loop"),
        pytest.param("a.txt", "symlink_skipped", "in a loop", id="F1-two-link-loop"),
        pytest.param("dangling.txt", "symlink_skipped", "nowhere", id="F1-dangling"),
        pytest.param("sub/link_in.txt", "", "", id="F1-inside-link-is-read"),
        pytest.param("good.txt", "", "", id="F1-plain-file"),
    ],
)
def test_F1_links_are_reported_and_never_read_out_of_the_folder(linked_folder: Path, source: str, reason: str, words: str) -> None:
    from structurize.schema import load_schema

    result = within(60, lambda: extract_folder(linked_folder, load_schema(SCHEMA), options=RULES))
    by_name = {doc.source: doc for doc in result.documents}
    doc = by_name[source]
    assert doc.reason == reason and words in doc.note
    assert doc.status is (DocStatus.FAILED if reason else DocStatus.OK)
    for other in result.documents:  # the secret never reaches any value
        assert all("987" not in str(item.value) for item in other.values)


def test_F1_no_output_holds_the_secret(linked_folder: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    result = runner.invoke(app, ["extract", str(linked_folder), "--schema", str(SCHEMA), "--out", str(out), "--no-ner", "--workers", "0", "-q"])
    assert result.exit_code == 3
    for path in out.iterdir():
        assert "CANARY-7f3a" not in path.read_text(encoding="utf-8-sig"), path.name
    assert "CANARY" not in result.output


# --- C2: the output folder is not writable ---------------------------------------------------------------------


def _read_only_mount(tmp_path: Path) -> Path:
    mount = tmp_path / "ro"
    mount.mkdir()
    try:
        done = subprocess.run(["mount", "-t", "tmpfs", "-o", "ro,size=1m", "tmpfs", str(mount)], capture_output=True, timeout=10)
    except (OSError, subprocess.TimeoutExpired):
        pytest.skip("mount is not available")
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here ({done.stderr.decode(errors='replace').strip()})")
    return mount


@pytest.mark.parametrize(
    "where",
    [
        pytest.param("ro-mount", id="C2-read-only-mount"),
        pytest.param("ro-mount/sub", id="C2-folder-on-read-only-mount"),
        pytest.param("file/out", id="C2-under-a-regular-file"),
        pytest.param("file", id="C2-a-regular-file"),
    ],
)
def test_C2_unwritable_output_exits_2_before_any_extraction(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, where: str) -> None:
    import structurize.api

    mount = None
    if where.startswith("ro-mount"):
        mount = _read_only_mount(tmp_path)
        out = mount / where.removeprefix("ro-mount").lstrip("/")
    else:
        (tmp_path / "file").write_text("not a folder", encoding="utf-8")
        out = tmp_path / where
    calls: list[object] = []
    monkeypatch.setattr(structurize.api, "extract_folder", lambda *a, **k: calls.append(a))
    try:
        started = time.perf_counter()
        result = runner.invoke(app, ["extract", str(DEMO_DOCS / "offer_letter"), "--schema", str(SCHEMA), "--out", str(out), "--no-ner"])
        elapsed = time.perf_counter() - started
    finally:
        if mount is not None:
            subprocess.run(["umount", str(mount)], capture_output=True, timeout=10)
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and "output folder is not writable" in lines[0], result.stderr
    assert calls == []  # pre-flight: no document was read
    assert elapsed < 5


@pytest.mark.parametrize(
    "name, shown",
    [
        pytest.param("no\x1b[2Jsuch", "no\\x1b[2Jsuch", id="F5-cli-argument-ansi"),
        pytest.param("no\nsuch", "no\\nsuch", id="F5-cli-argument-newline"),
    ],
)
def test_F5_cli_messages_about_arguments_are_escaped(tmp_path: Path, name: str, shown: str) -> None:
    result = runner.invoke(app, ["extract", str(tmp_path / name), "--schema", str(SCHEMA), "--out", str(tmp_path / "out")])
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [f"structurize: {tmp_path}/{shown}: input not found"]  # cli._escape

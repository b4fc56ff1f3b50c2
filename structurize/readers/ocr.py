"""OCR for PDF pages without a text layer: pypdfium2 renders the page, Tesseract reads it.

Used only when ``ExtractOptions.ocr`` is true and the ``tesseract`` binary is on ``PATH``.
A page is rendered in grey at :data:`DPI` with pypdfium2 (installed with pdfplumber), sent
to ``tesseract stdin stdout -l eng`` as a PNG on its standard input (no temporary file, no
network), with ``OMP_THREAD_LIMIT=1`` so that one worker uses one core.  Tesseract's own
messages are captured and dropped: they could quote the page.  On Linux the Tesseract
process is told to die with its parent, so killing a worker that ran out of time never
leaves an orphan OCR process behind.
"""

from __future__ import annotations

import io
import os
import shutil
import subprocess
import sys
from pathlib import Path
from types import TracebackType
from typing import Any

DPI = 300
LANGUAGE = "eng"
TESSERACT = "tesseract"


class OcrError(Exception):
    """OCR of one page failed; the message names the condition, never the page's text."""


def tesseract_path() -> str | None:
    """The Tesseract binary on ``PATH``, or None when it is not installed."""
    return shutil.which(TESSERACT)


def _die_with_parent() -> None:  # pragma: no cover - runs in the child between fork and exec
    try:
        import ctypes
        import signal

        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(1, int(signal.SIGKILL))  # PR_SET_PDEATHSIG
    except Exception:
        pass


def _environment() -> dict[str, str]:
    env = {"PATH": os.environ.get("PATH", "/usr/bin:/bin"), "OMP_THREAD_LIMIT": "1", "LC_ALL": "C"}
    if "TESSDATA_PREFIX" in os.environ:
        env["TESSDATA_PREFIX"] = os.environ["TESSDATA_PREFIX"]
    return env


class PageReader:
    """Renders pages of one PDF and reads them with Tesseract.  Use as a context manager."""

    def __init__(self, path: Path, password: str | None, *, timeout: float, executable: str) -> None:
        self.path = path
        self.password = password
        self.timeout = max(1.0, timeout)
        self.executable = executable
        self._document: Any = None

    def __enter__(self) -> PageReader:
        return self

    def __exit__(self, kind: type[BaseException] | None, value: BaseException | None, tb: TracebackType | None) -> None:
        self.close()

    def close(self) -> None:
        if self._document is not None:
            try:
                self._document.close()
            except Exception:
                pass
            self._document = None

    def _open(self) -> Any:
        if self._document is None:
            import pypdfium2 as pdfium

            last: Exception | None = None
            for password in dict.fromkeys([self.password, None]):
                try:
                    self._document = pdfium.PdfDocument(str(self.path), password=password)
                    break
                except Exception as exc:  # noqa: BLE001 - pdfium raises its own error type
                    last = exc
            else:
                raise OcrError(f"the page cannot be rendered ({type(last).__name__})")
        return self._document

    def render_png(self, index: int) -> bytes:
        """Page ``index`` (0-based) as a greyscale PNG at :data:`DPI`."""
        document = self._open()
        try:
            page = document[index]
            try:
                image = page.render(scale=DPI / 72, grayscale=True).to_pil()
            finally:
                page.close()
        except Exception as exc:  # noqa: BLE001
            raise OcrError(f"the page cannot be rendered ({type(exc).__name__})") from None
        buffer = io.BytesIO()
        image.save(buffer, "PNG", dpi=(DPI, DPI))
        return buffer.getvalue()

    def read_page(self, index: int) -> list[str]:
        """The text lines Tesseract reads on page ``index``, blank lines dropped."""
        png = self.render_png(index)
        try:
            done = subprocess.run(
                [self.executable, "stdin", "stdout", "-l", LANGUAGE, "--psm", "3"],
                input=png,
                capture_output=True,
                timeout=self.timeout,
                env=_environment(),
                preexec_fn=_die_with_parent if sys.platform.startswith("linux") else None,
                check=False,
            )
        except subprocess.TimeoutExpired:
            raise OcrError(f"tesseract took longer than {self.timeout:g} s") from None
        except OSError as exc:
            raise OcrError(f"tesseract cannot be run ({exc.strerror or type(exc).__name__})") from None
        if done.returncode != 0:
            raise OcrError(f"tesseract failed (exit code {done.returncode})")
        text = done.stdout.decode("utf-8", errors="replace").replace("\f", "\n")
        return [line.rstrip() for line in text.splitlines() if line.strip()]

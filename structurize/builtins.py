"""The one place where built-in readers and extractors are registered."""

from __future__ import annotations

_done = False


def register_all() -> None:
    global _done
    if _done:
        return
    _done = True
    from .readers import register_reader
    from .readers.docx import read_docx
    from .readers.html import read_html
    from .readers.mail import read_email
    from .readers.pdf import read_pdf
    from .readers.text import read_markdown, read_text

    register_reader("reader.text.v1", (".txt", ".text"), read_text)
    register_reader("reader.markdown.v1", (".md", ".markdown"), read_markdown)
    register_reader("reader.html.v1", (".html", ".htm"), read_html)
    register_reader("reader.email.v1", (".eml",), read_email)
    register_reader("reader.docx.v1", (".docx",), read_docx)
    register_reader("reader.pdf.v1", (".pdf",), read_pdf)

    from .extract import register_builtin_extractors

    register_builtin_extractors()

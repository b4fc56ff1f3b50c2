"""Throughput: structurize against the libraries doing the heavy lifting, side by side.

    python benchmarks/throughput.py             # 300 documents for speed, RSS at 1,000 and 10,000
    python benchmarks/throughput.py --quick     # a small smoke run for CI

On the same invented documents (benchmarks/corpus.py: ~300-word letters, one in ten a
.docx and one in ten a PDF), in one run:

(a) the NER floor: bare spaCy ``nlp.pipe`` with only NER, over the texts structurize reads;
(b) the tokenizer floor: ``spacy.blank("en")``;
(c) ``structurize`` end to end (``extract_folder``, outputs written) with 1 worker;
(d) the same with one worker per core;
(e) bare PDF text extraction over the same PDFs with pdfplumber and with pypdfium2, against
    structurize's PDF reader on them.

It prints documents/s and words/s, the ratios c/a, c/d and the PDF ratio, and the peak RSS
of the parent and of the workers for N = 1,000 and N = 10,000 documents (each in a fresh
process).  Targets: c ≤ 1.5 a; c/d ≥ 1.7 on 2 cores; PDF ≤ 1.5 × the fastest bare extraction
that keeps the accuracy; RSS(10,000) ≤ 1.2 RSS(1,000).  No test asserts timings.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from corpus import write_corpus, write_schema  # noqa: E402


def machine() -> str:
    model = ""
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                model = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    return f"{os.cpu_count()} cores, {model or platform.processor()}, Python {platform.python_version()}, load {load:.2f}"


def timed(function, *args, **kwargs):  # type: ignore[no-untyped-def]
    started = time.perf_counter()
    value = function(*args, **kwargs)
    return time.perf_counter() - started, value


def floors(texts: list[str]) -> tuple[float, float]:
    import spacy

    from structurize.extract.ner import load_model

    nlp = load_model().nlp
    list(nlp.pipe(texts[:20]))  # warm up
    ner, _ = timed(lambda: list(nlp.pipe(texts, batch_size=64)))
    blank = spacy.blank("en")
    tokens, _ = timed(lambda: list(blank.pipe(texts, batch_size=256)))
    return ner, tokens


def structurize_run(docs: Path, schema_path: Path, workers: int) -> float:
    from structurize import ExtractOptions, extract_folder, load_schema, write_outputs

    schema = load_schema(schema_path)
    with tempfile.TemporaryDirectory() as out:
        started = time.perf_counter()
        result = extract_folder(docs, schema, options=ExtractOptions(workers=workers))
        write_outputs(result, out)
        return time.perf_counter() - started


def pdf_floors(pdfs: list[Path]) -> dict[str, float]:
    import pdfplumber
    import pypdfium2

    from structurize.readers import read_document

    def plumber() -> None:
        for path in pdfs:
            with pdfplumber.open(str(path)) as pdf:
                for page in pdf.pages:
                    page.extract_text()

    def pdfium() -> None:
        for path in pdfs:
            pdf = pypdfium2.PdfDocument(str(path))
            for page in pdf:
                page.get_textpage().get_text_range()
            pdf.close()

    def ours() -> None:
        for path in pdfs:
            read_document(path, path.name)

    return {"pdfplumber": timed(plumber)[0], "pypdfium2": timed(pdfium)[0], "structurize": timed(ours)[0]}


RSS_SCRIPT = """
import json, resource, sys, tempfile
sys.path.insert(0, {here!r})
from pathlib import Path
from corpus import write_corpus, write_schema
from structurize import ExtractOptions, extract_folder, load_schema, write_outputs
base = Path(tempfile.mkdtemp())
write_corpus(base / "docs", {n}, docx_every=0, pdf_every=0)
schema = load_schema(write_schema(base / "schema.yaml"))
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
result = extract_folder(base / "docs", schema, options=ExtractOptions(workers={workers}))
write_outputs(result, base / "out")
print(json.dumps({{"parent_kb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss,
                   "workers_kb": result.settings.get("worker_peak_rss_kb", 0),
                   "before_kb": before, "documents": len(result.documents)}}))
"""


def peak_rss(n: int, workers: int) -> dict[str, int]:
    script = RSS_SCRIPT.format(here=str(HERE), n=n, workers=workers)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("-n", "--documents", type=int, default=300)
    parser.add_argument("--quick", action="store_true", help="small N everywhere (a smoke run)")
    parser.add_argument("--rss", default="1000,10000", help="N values for the peak-RSS runs")
    args = parser.parse_args(argv)
    n = 40 if args.quick else args.documents
    rss_sizes = [60, 240] if args.quick else [int(x) for x in args.rss.split(",")]
    cores = os.cpu_count() or 1

    from structurize.readers import read_document

    with tempfile.TemporaryDirectory() as tmp:
        base = Path(tmp)
        paths = write_corpus(base / "docs", n)
        schema = write_schema(base / "schema.yaml")
        texts = [read_document(p, p.name).text for p in paths]
        words = sum(len(t.split()) for t in texts)
        ner, tokens = floors(texts)
        one = structurize_run(base / "docs", schema, 1)
        many = structurize_run(base / "docs", schema, cores)
        pdfs = [p for p in paths if p.suffix == ".pdf"]
        pdf = pdf_floors(pdfs)
    pages = len(pdfs)  # one page each
    print(f"machine: {machine()}")
    print(f"documents: {n} ({words} words, {words / n:.0f} per document; {pages} PDFs)")
    rows = [("(a) NER floor, nlp.pipe NER only", ner), ("(b) tokenizer floor, spacy.blank", tokens),
            ("(c) structurize, 1 worker", one), (f"(d) structurize, {cores} workers", many)]
    for label, seconds in rows:
        print(f"{label:36} {seconds:7.2f} s  {n / seconds:8.1f} docs/s  {words / seconds:9.0f} words/s")
    print(f"ratio c/a (target <= 1.5): {one / ner:.2f}")
    print(f"speed-up c/d with {cores} workers (target >= 1.7 on 2 cores): {one / many:.2f}")
    fastest = min(pdf["pdfplumber"], pdf["pypdfium2"])
    for name, seconds in pdf.items():
        print(f"(e) PDF text, {name:12} {seconds:7.3f} s  {pages / seconds:8.1f} pages/s")
    print(f"PDF ratio structurize / fastest bare (target <= 1.5): {pdf['structurize'] / fastest:.2f}"
          f"  (/ pdfplumber: {pdf['structurize'] / pdf['pdfplumber']:.2f})")
    measured = {}
    for size in rss_sizes:
        measured[size] = peak_rss(size, cores)
        print(f"peak RSS at N = {size:6}: parent {measured[size]['parent_kb'] / 1024:7.1f} MB, "
              f"largest worker {measured[size]['workers_kb'] / 1024:7.1f} MB")
    small, large = rss_sizes[0], rss_sizes[-1]
    print(f"RSS ratio N={large} / N={small} (target <= 1.2): parent "
          f"{measured[large]['parent_kb'] / measured[small]['parent_kb']:.2f}, workers "
          f"{measured[large]['workers_kb'] / measured[small]['workers_kb']:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

"""Throughput: structurize against the libraries doing the heavy lifting, side by side.

    python benchmarks/throughput.py             # 1,000 documents; peak RSS at 1,000 and 10,000
    python benchmarks/throughput.py --quick     # a small smoke run (CI runs this)

On the same invented documents (benchmarks/corpus.py: ~250-word offer letters, one in ten
a .docx and one in ten a one-page PDF, each copy varied), in one run:

(a) the NER floor: bare spaCy ``nlp.pipe`` with only NER, over the texts structurize reads
    (the model is loaded before the clock starts);
(b) the tokenizer floor: ``spacy.blank("en")`` over the same texts;
(c) ``structurize`` end to end with 1 worker: ``extract_folder`` plus ``write_outputs``,
    what ``structurize extract`` runs, including starting the worker and loading the model;
(d) the same with one worker per core;
(e) bare PDF text extraction over the same PDFs: pdfplumber, pypdfium2's text alone, and
    pypdfium2's text plus one box per word (the least that keeps the layout structurize
    needs: a label and its value set apart only by position), against structurize's PDF
    reader (``read_document``: limits, checks, structure).

(a), (c) and (d) run ``--repeat`` times, interleaved, and the best time of each counts
(noise on a shared machine only ever adds time).  It prints documents/s, words/s, the time
to the first result, the ratios c/a, c/d and the PDF ratios, and the peak RSS (``VmHWM``)
of the parent and of the largest worker for N = 1,000 and N = 10,000 documents, each run
in a fresh process on a folder written beforehand.  Targets: c ≤ 1.5 a; c/d ≥ 1.7 on 2
cores; PDF ≤ 1.5 × the fastest bare extraction that keeps the accuracy; RSS(10,000) ≤
1.2 × RSS(1,000).  No test asserts timings.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from corpus import machine, write_corpus, write_schema  # noqa: E402


def timed(function, *args, **kwargs):  # type: ignore[no-untyped-def]
    started = time.perf_counter()
    value = function(*args, **kwargs)
    return time.perf_counter() - started, value


def ner_floor(nlp, texts: list[str]) -> float:  # type: ignore[no-untyped-def]
    return timed(lambda: list(nlp.pipe(texts, batch_size=64)))[0]


def tokenizer_floor(texts: list[str]) -> float:
    import spacy

    blank = spacy.blank("en")
    return timed(lambda: list(blank.pipe(texts, batch_size=256)))[0]


def structurize_run(docs: Path, schema_path: Path, workers: int) -> tuple[float, float]:
    """Seconds end to end, and seconds to the first result (worker start, model load)."""
    from structurize import ExtractOptions, extract_folder, load_schema, write_outputs

    schema = load_schema(schema_path)
    first: list[float] = []
    with tempfile.TemporaryDirectory() as out:
        started = time.perf_counter()

        def progress(source: str) -> None:
            if not first:
                first.append(time.perf_counter() - started)

        result = extract_folder(docs, schema, options=ExtractOptions(workers=workers), progress=progress)
        write_outputs(result, out)
        return time.perf_counter() - started, first[0] if first else float("nan")


def pdf_floors(pdfs: list[Path], repeat: int) -> dict[str, float]:
    import pdfplumber
    import pypdfium2

    from structurize.readers import read_document

    def plumber() -> None:
        for path in pdfs:
            with pdfplumber.open(str(path)) as pdf:
                for page in pdf.pages:
                    page.extract_text()

    def pdfium_text() -> None:
        for path in pdfs:
            pdf = pypdfium2.PdfDocument(str(path))
            for page in pdf:
                page.get_textpage().get_text_range()
            pdf.close()

    def pdfium_word_boxes() -> None:
        for path in pdfs:
            pdf = pypdfium2.PdfDocument(str(path))
            for page in pdf:
                textpage = page.get_textpage()
                text = textpage.get_text_range()
                start = None
                for index, char in enumerate(text):
                    if char.isspace():
                        if start is not None:
                            textpage.get_charbox(start, loose=True)
                            textpage.get_charbox(index - 1, loose=True)
                            start = None
                    elif start is None:
                        start = index
                if start is not None:
                    textpage.get_charbox(start, loose=True)
                    textpage.get_charbox(len(text) - 1, loose=True)
            pdf.close()

    def ours() -> None:
        for path in pdfs:
            read_document(path, path.name)

    runs = {"pdfplumber": plumber, "pypdfium2 text": pdfium_text, "pypdfium2 text + word boxes": pdfium_word_boxes,
            "structurize": ours}
    best = {name: float("inf") for name in runs}
    for _ in range(repeat):
        for name, function in runs.items():
            best[name] = min(best[name], timed(function)[0])
    return best


RSS_SCRIPT = """
import json, sys
from pathlib import Path
from structurize import ExtractOptions, extract_folder, load_schema, write_outputs
from structurize.workers import peak_rss_kb
docs, schema_path, out, workers = Path(sys.argv[1]), Path(sys.argv[2]), Path(sys.argv[3]), int(sys.argv[4])
before = peak_rss_kb()
result = extract_folder(docs, load_schema(schema_path), options=ExtractOptions(workers=workers))
write_outputs(result, out)
print(json.dumps({"parent_kb": peak_rss_kb(), "workers_kb": result.settings.get("worker_peak_rss_kb", 0),
                  "before_kb": before, "documents": len(result.documents)}))
"""


def peak_rss(docs: Path, schema: Path, out: Path, workers: int) -> dict[str, int]:
    """Peak RSS of a fresh process that extracts ``docs`` and writes the outputs."""
    done = subprocess.run([sys.executable, "-c", RSS_SCRIPT, str(docs), str(schema), str(out), str(workers)],
                          capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("-n", "--documents", type=int, default=1000, help="documents for the speed comparison")
    parser.add_argument("--repeat", type=int, default=3, help="runs of (a), (c), (d), interleaved; the best counts")
    parser.add_argument("--quick", action="store_true", help="small N everywhere, one repeat (a smoke run)")
    parser.add_argument("--rss", default="1000,10000", help="N values for the peak-RSS runs")
    args = parser.parse_args(argv)
    n = 40 if args.quick else args.documents
    repeat = 1 if args.quick else args.repeat
    rss_sizes = [60, 240] if args.quick else [int(x) for x in args.rss.split(",")]
    cores = os.cpu_count() or 1

    from structurize.extract.ner import load_model
    from structurize.readers import read_document

    print(f"machine: {machine()}", flush=True)
    with tempfile.TemporaryDirectory() as tmp:
        base = Path(tmp)
        paths = write_corpus(base / "docs", n)
        schema = write_schema(base / "schema.yaml")
        texts = [read_document(p, p.name).text for p in paths]
        words = sum(len(t.split()) for t in texts)
        pdfs = [p for p in paths if p.suffix == ".pdf"]
        print(f"documents: {n} ({words} words, {words / n:.0f} per document; {len(pdfs)} one-page PDFs, "
              f"{sum(p.suffix == '.docx' for p in paths)} .docx); best of {repeat}", flush=True)
        nlp = load_model().nlp
        list(nlp.pipe(texts[:20]))  # warm up
        best = {"a": float("inf"), "c": float("inf"), "d": float("inf")}
        first = {"c": float("nan"), "d": float("nan")}
        for _ in range(repeat):
            best["a"] = min(best["a"], ner_floor(nlp, texts))
            for key, workers in (("c", 1), ("d", cores)):
                seconds, to_first = structurize_run(base / "docs", schema, workers)
                if seconds < best[key]:
                    best[key], first[key] = seconds, to_first
        tokens = tokenizer_floor(texts)
        pdf = pdf_floors(pdfs, max(3, repeat)) if pdfs else {}

    rows = [("(a) NER floor, nlp.pipe NER only", best["a"], ""), ("(b) tokenizer floor, spacy.blank", tokens, ""),
            ("(c) structurize, 1 worker", best["c"], f"  first result after {first['c']:.2f} s"),
            (f"(d) structurize, {cores} workers", best["d"], f"  first result after {first['d']:.2f} s")]
    for label, seconds, note in rows:
        print(f"{label:36} {seconds:7.2f} s  {n / seconds:8.1f} docs/s  {words / seconds:9.0f} words/s{note}")
    print(f"ratio c/a (target <= 1.5): {best['c'] / best['a']:.2f}")
    print(f"speed-up c/d with {cores} workers (target >= 1.7 on 2 cores): {best['c'] / best['d']:.2f}")
    if pdf:
        pages = len(pdfs)
        for name, seconds in pdf.items():
            print(f"(e) PDF, {name:28} {seconds * 1000 / pages:7.2f} ms/page  {pages / seconds:8.1f} pages/s")
        print(f"PDF ratio structurize / pypdfium2 text + word boxes (target <= 1.5): "
              f"{pdf['structurize'] / pdf['pypdfium2 text + word boxes']:.2f}"
              f"   (/ pypdfium2 text alone: {pdf['structurize'] / pdf['pypdfium2 text']:.2f}; "
              f"/ pdfplumber: {pdf['structurize'] / pdf['pdfplumber']:.3f})")

    measured = {}
    with tempfile.TemporaryDirectory() as tmp:
        base = Path(tmp)
        schema = write_schema(base / "schema.yaml")
        for size in rss_sizes:
            write_corpus(base / f"docs{size}", size)
            measured[size] = peak_rss(base / f"docs{size}", schema, base / f"out{size}", cores)
            print(f"peak RSS at N = {size:6}: parent {measured[size]['parent_kb'] / 1024:7.1f} MB "
                  f"(at start {measured[size]['before_kb'] / 1024:.1f} MB), largest worker "
                  f"{measured[size]['workers_kb'] / 1024:7.1f} MB", flush=True)
    small, large = rss_sizes[0], rss_sizes[-1]
    print(f"RSS ratio N={large} / N={small} (target <= 1.2): parent "
          f"{measured[large]['parent_kb'] / measured[small]['parent_kb']:.2f}, workers "
          f"{measured[large]['workers_kb'] / max(1, measured[small]['workers_kb']):.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())

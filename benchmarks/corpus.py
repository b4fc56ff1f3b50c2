"""Invented HR documents for the benchmarks, varied copy by copy.

Every name, site and figure is made up (a fictional regional bus operator, "Kestrel Coach
Lines"); nothing here is personal data.  ``write_corpus(folder, n)`` writes ``n``
documents of about 300 words: mostly .txt offer letters, with a .docx and a .pdf every
``docx_every``/``pdf_every`` documents, and returns their paths.
"""

from __future__ import annotations

import os
import platform
import random
import sys
from pathlib import Path

FIRST = ["Ana", "Bram", "Chidi", "Dara", "Elif", "Femi", "Greta", "Hamid", "Ines", "Jonas", "Kaia", "Luca", "Maren",
         "Nils", "Oona", "Pavel", "Quinn", "Rosa", "Sami", "Tove", "Ugo", "Vera", "Wim", "Xenia", "Yara", "Zeno"]
LAST = ["Abara", "Brecht", "Castell", "Dunmore", "Eskola", "Farrow", "Galloway", "Hollis", "Ivers", "Janssen",
        "Kowal", "Lindqvist", "Marr", "Nakashima", "Ostrow", "Pellham", "Quarry", "Rusk", "Sorensen", "Tambe"]
SITES = ["Harbour Point", "Millbrook Yard", "Stonebridge Depot", "Ashford Garage"]
TITLES = ["Route Scheduler", "Bus Operator", "Fleet Technician", "Depot Supervisor", "Customer Service Advisor",
          "Payroll Analyst", "Workshop Planner", "Driver Trainer"]
MONTHS = ["January", "February", "March", "April", "May", "June", "July", "August", "September", "October",
          "November", "December"]
FILLER = (
    "Your first week will include a depot induction, a safety briefing on the workshop floor and time with the "
    "operations team so that you can learn how our timetables, duty rosters and vehicle allocations fit together. "
    "We will also arrange a meeting with the payroll office to set up your bank details and pension enrolment. "
    "Please bring photographic identification and your right-to-work documents on your first morning. "
)

SCHEMA = """\
name: bench_offer
title: Benchmark offer letters
extract: {date_order: MDY, review_below: 0.8}
fields:
  - name: candidate_name
    type: string
    description: Person receiving the offer.
    extract: {as: person, cues: [dear, candidate]}
  - name: job_title
    type: string
    description: Position offered.
    extract: {as: job_title, cues: [position, offer you the position of]}
  - name: site
    type: string
    description: Depot where the new hire will work.
    constraints: {enum: [Harbour Point, Millbrook Yard, Stonebridge Depot, Ashford Garage]}
    extract: {as: choice, cues: [site, location, based at]}
  - name: start_date
    type: date
    description: First day of work.
    extract: {as: date, cues: [start date, first day]}
  - name: base_salary
    type: number
    description: Base pay.
    extract: {as: money, cues: [base salary, salary, pay rate]}
  - name: hiring_manager
    type: string
    description: Person the new hire reports to.
    extract: {as: person, cues: [reports to, report to, manager]}
"""


def letter(index: int) -> tuple[str, list[str]]:
    """The text of document ``index`` and its lines, deterministic."""
    rng = random.Random(index)
    name = f"{rng.choice(FIRST)} {rng.choice(LAST)}"
    manager = f"{rng.choice(FIRST)} {rng.choice(LAST)}"
    signer = f"{rng.choice(FIRST)} {rng.choice(LAST)}"
    month = rng.randrange(12)
    day = rng.randint(1, 28)
    salary = rng.randrange(31_000, 78_000, 250)
    lines = [
        "Kestrel Coach Lines",
        f"{rng.choice(SITES)} · {rng.randint(2, 90)} Canal Street",
        "",
        f"{MONTHS[month]} {day}, 2026",
        "",
        name,
        f"{rng.randint(1, 200)} Orchard Row",
        "",
        f"Dear {name.split()[0]},",
        "",
        f"We are pleased to offer you the position of {rng.choice(TITLES)} at our {rng.choice(SITES)} site. "
        f"You will report to {manager}, Operations Manager, and your base salary will be ${salary:,} per year.",
        "",
        f"Start date: {MONTHS[(month + 1) % 12]} {rng.randint(1, 28)}, 2026",
        f"Location: {rng.choice(SITES)}",
        f"Reference: KCL-{index:06d}",
        "",
        FILLER * rng.randint(2, 3),
        "",
        "Please confirm your acceptance by replying to this letter within ten working days.",
        "",
        "Kind regards,",
        "",
        signer,
        "People Team, Kestrel Coach Lines",
    ]
    return "\n".join(lines), lines


def write_corpus(folder: Path, n: int, *, docx_every: int = 10, pdf_every: int = 10) -> list[Path]:
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for index in range(n):
        text, lines = letter(index)
        if pdf_every and index % pdf_every == pdf_every - 1:
            path = folder / f"offer_{index:06d}.pdf"
            _pdf(path, lines)
        elif docx_every and index % docx_every == docx_every // 2:
            path = folder / f"offer_{index:06d}.docx"
            _docx(path, lines)
        else:
            path = folder / f"offer_{index:06d}.txt"
            path.write_text(text, encoding="utf-8")
        paths.append(path)
    return paths


def _docx(path: Path, lines: list[str]) -> None:
    import docx

    document = docx.Document()
    for line in lines:
        document.add_paragraph(line)
    document.save(str(path))


def _pdf(path: Path, lines: list[str]) -> None:
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
    from pdfmaker import make_pdf  # a tiny dependency-free PDF writer

    wrapped: list[str] = []
    for line in lines:
        while len(line) > 95:
            cut = line.rfind(" ", 0, 95)
            wrapped.append(line[:cut])
            line = line[cut + 1 :]
        wrapped.append(line.replace("·", "-"))
    pages = [wrapped[i : i + 50] for i in range(0, len(wrapped), 50)]
    make_pdf(path, pages)


def write_schema(path: Path) -> Path:
    path.write_text(SCHEMA, encoding="utf-8")
    return path


def machine() -> str:
    """The machine the figures come from: cores, CPU model, Python, load average."""
    model = ""
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                model = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    load = ", load average %.2f" % os.getloadavg()[0] if hasattr(os, "getloadavg") else ""
    return f"{os.cpu_count()} cores (nproc), CPU {model or platform.processor() or 'unknown'}, Python {platform.python_version()}{load}"

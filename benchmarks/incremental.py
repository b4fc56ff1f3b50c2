"""Incremental runs: the first ``extract --store`` over a folder against a no-op re-run.

    python benchmarks/incremental.py            # 1,000 invented documents
    python benchmarks/incremental.py --quick    # 40 documents, for CI (a smoke run)
    python benchmarks/incremental.py -n 300 --workers 2 --keep

It writes N invented offer letters (about 300 words each, every copy different: names,
titles, sites, dates, pay, and prose drawn per copy) into a temporary folder, then runs the
``structurize`` command twice in this one invocation, side by side, on the same machine:

1. ``structurize extract DOCS --schema schemas/offer_letter.yaml --out OUT --store STORE``
   on an empty store (every document extracted, with the NER pipeline, as a user runs it;
   ``--no-ner`` measures rules only), and
2. the same command again over the unchanged folder (every document reused).

Both are timed as whole processes (start-up included, as a user sees them).  It prints the
two wall times, the ratio no-op / first (the target is <= 0.05), what the store recorded
for each run (extracted / reused), the start-up cost alone (``import structurize.cli``),
and the machine (cores, CPU model, load average: other work on the machine skews both runs).  The tests never
assert timings; this script is the place for them.  Exit code 1 when the no-op run
extracted anything or a run failed, so CI can still use ``--quick`` as a smoke test.
"""

from __future__ import annotations

import argparse
import json
import os
import random
import shutil
import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "benchmarks"))

from corpus import machine  # noqa: E402

SCHEMA = ROOT / "schemas" / "offer_letter.yaml"
TARGET_RATIO = 0.05

FIRST = ["Ana", "Bram", "Chiara", "Dmitri", "Efua", "Farid", "Greta", "Hiro", "Ines", "Jonas", "Keiko", "Lars", "Mei",
         "Nadia", "Oskar", "Priya", "Quinn", "Rosa", "Sven", "Tariq", "Ulla", "Viktor", "Wanjiru", "Xavier", "Yusuf", "Zofia"]
LAST = ["Albers", "Brennan", "Castillo", "Dahl", "Eze", "Fontaine", "Gallo", "Huang", "Ibsen", "Jovanovic", "Kowalski",
        "Lindqvist", "Moreau", "Novak", "Okafor", "Petrov", "Quist", "Rahman", "Sato", "Tanaka", "Underwood", "Varga"]
TITLES = ["Veterinary Technician", "Practice Manager", "Client Care Coordinator", "Laboratory Technologist",
          "Kennel Attendant", "Associate Veterinarian", "Surgical Nurse", "Pharmacy Assistant", "Imaging Technologist"]
SITES = ["Tallowbrook Main Hospital", "Oriel Street Clinic", "Hadley Pines Equine Center", "Juniper Wharf Emergency Hospital"]
MONTHS = ["January", "February", "March", "April", "May", "June", "July", "August", "September", "October", "November",
          "December"]
PROSE = [
    "Thank you for the time you spent with the team during your visit; everyone enjoyed meeting you.",
    "Your first week will include a tour of the hospital, a safety briefing and time with your mentor.",
    "We provide scrubs, a locker and a parking permit for the staff car park behind the building.",
    "Continuing education is encouraged, and the practice funds one approved course every year.",
    "You will be eligible for medical and dental coverage from the first of the month after thirty days.",
    "The retirement plan match starts after ninety days of employment and vests over three years.",
    "Please bring proof of your right to work and a copy of any licence or certificate on your first day.",
    "Our clinics share an on-call rota on weekends, which is paid separately as described in the handbook.",
    "If anything in this letter is unclear, the People and Culture team is happy to talk it through with you.",
    "The role includes regular contact with clients, so clear and kind communication matters a great deal.",
    "We review schedules every quarter and try hard to keep weekend work fair across each team.",
    "Uniform, equipment and software training are provided during the paid induction period.",
    "Our hospitals are open every day of the year, and rotas are published four weeks in advance.",
    "You may take up to three days of paid volunteering leave each year with a charity of your choice.",
    "Staff receive a discount on treatment for their own animals at every Tallowbrook site.",
    "This offer is contingent on satisfactory references and a background check, as is usual for every role.",
    "Please reply within two weeks to accept this offer, and let us know if you need more time to decide.",
    "A signed copy of this letter by e-mail is fine; the original can follow when you start.",
]


def letter(index: int) -> str:
    """One invented offer letter of about 300 words; every index gives a different letter."""
    rng = random.Random(index)
    name = f"{rng.choice(FIRST)} {rng.choice(LAST)}"
    manager = f"{rng.choice(FIRST)} {rng.choice(LAST)}"
    month, day = rng.randrange(12), rng.randrange(1, 27)
    salary = rng.randrange(38, 140) * 1000 + rng.randrange(0, 20) * 50
    paragraphs = []
    pool = PROSE[:]
    rng.shuffle(pool)
    for start in range(0, 15, 3):
        paragraphs.append(" ".join(pool[start:start + 3]))
    return (
        "TALLOWBROOK VETERINARY PARTNERS\nPeople & Culture | 1180 Cobb Avenue, Tallowbrook\n\n"
        f"Date: {MONTHS[month]} {day}, 2025\nReference: TVP-{index:06d}-{rng.randrange(10**6):06d}\n\n"
        f"Candidate: {name}\nPosition: {rng.choice(TITLES)}\nLocation: {rng.choice(SITES)}\n"
        f"Start date: {MONTHS[(month + 1) % 12]} {day + 1}, 2026\nBase salary: ${salary:,} per year\n"
        f"Reports to: {manager}\n\n"
        f"Dear {name.split()[0]},\n\n"
        f"We are delighted to offer you the position described above, and we hope you will accept. "
        f"{paragraphs[0]}\n\n" + "\n\n".join(paragraphs[1:]) + "\n\nSincerely,\n\nPeople & Culture\n"
    )


def generate(folder: Path, count: int) -> int:
    folder.mkdir(parents=True, exist_ok=True)
    words = 0
    for index in range(count):
        text = letter(index)
        words += len(text.split())
        (folder / f"offer_{index:05d}.txt").write_text(text, encoding="utf-8")
    return words // max(count, 1)


def structurize() -> list[str]:
    found = shutil.which("structurize", path=str(Path(sys.executable).parent)) or shutil.which("structurize")
    return [found] if found else [sys.executable, "-m", "structurize"]


def timed_run(command: list[str]) -> float:
    started = time.perf_counter()
    done = subprocess.run(command, capture_output=True, text=True)
    seconds = time.perf_counter() - started
    if done.returncode != 0:
        sys.stderr.write(done.stderr)
        raise SystemExit(f"run failed with exit code {done.returncode}: {' '.join(command)}")
    return seconds


def run_counts(store: Path) -> list[dict[str, int]]:
    db = sqlite3.connect(f"file:{store}?mode=ro", uri=True)
    try:
        return [json.loads(row[0] or "{}") for row in db.execute("SELECT counts FROM runs ORDER BY id")]
    finally:
        db.close()


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("-n", "--documents", type=int, default=1000, help="documents to generate (default 1000)")
    parser.add_argument("--quick", action="store_true", help="40 documents, rules only: a smoke run for CI")
    parser.add_argument("--workers", type=int, default=None, help="passed to `structurize extract --workers`")
    parser.add_argument("--keep", action="store_true", help="keep the temporary folder and print where it is")
    parser.add_argument("--no-ner", action="store_true", help="rules only (both runs)")
    args = parser.parse_args(argv)
    count = 40 if args.quick else args.documents

    base = Path(tempfile.mkdtemp(prefix="structurize-incremental-"))
    try:
        docs, out, store = base / "docs", base / "out", base / "store.sqlite"
        words = generate(docs, count)
        command = [*structurize(), "extract", str(docs), "--schema", str(SCHEMA), "--out", str(out), "--store", str(store),
                   "--quiet", *(["--no-ner"] if args.no_ner or args.quick else [])]
        if args.workers is not None:
            command += ["--workers", str(args.workers)]
        first = timed_run(command)
        noop = timed_run(command)
        startup = timed_run([sys.executable, "-c", "import structurize.cli"])
        counts = run_counts(store)
        ratio = noop / first
        print(f"machine:   {machine()}")
        print(f"documents: {count} invented offer letters, about {words} words each")
        print(f"first run  (empty store):     {first:8.2f} s   {counts[0].get('extracted', 0)} extracted, "
              f"{counts[0].get('reused', 0)} reused")
        print(f"no-op run  (unchanged input): {noop:8.2f} s   {counts[1].get('extracted', 0)} extracted, "
              f"{counts[1].get('reused', 0)} reused")
        print(f"ratio no-op / first: {ratio:.3f}  (target <= {TARGET_RATIO}: {'met' if ratio <= TARGET_RATIO else 'NOT met'})")
        print(f"of the no-op: interpreter start-up and imports {startup:.2f} s (python -c 'import structurize.cli'); "
              f"without them the ratio is {(noop - startup) / (first - startup):.3f}")
        if args.keep:
            print(f"kept: {base}")
        if counts[1].get("extracted", 0) or counts[1].get("reused", 0) != count:
            print("error: the no-op run extracted documents", file=sys.stderr)
            return 1
        return 0
    finally:
        if not args.keep:
            shutil.rmtree(base, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())

"""The third scene of `ringmatch demo`: a conjecture with an unknown exponent, scanned.

The invented working group's next conjecture (presentations/files/demo/kestrel-exponent.toml)
leaves the exponent of det Q_i open (0…3; their first guess, 0, is only the default).  The scene scans it over the flag
types of the first scene (n ≤ 5, rank ≤ 30), smallest case first, dropping a value as soon
as it disagrees with whitney, and shows the table of the surviving value and of the first
case, where the others fall.
"""
from __future__ import annotations

import json
from pathlib import Path
from typing import Callable, Sequence

from ringmatch.presentations.flagtype import FlagType

CONJECTURE = "kestrel-exponent"


def run_scene(folder: Path, flags: Sequence[FlagType], *, workers: int, say: Callable = print,
              command: str = "ringmatch demo") -> dict:
    from ringmatch.reports import scan as scan_report
    from . import scan, sweep
    say(f"\nStep 3: the group's next conjecture, {CONJECTURE} "
        f"(presentations/files/demo/{CONJECTURE}.toml), leaves the exponent of det Q_i "
        "open.\n  Which exponent survives, scanning 0…3 smallest case first and dropping a value "
        "as soon as it disagrees with whitney?")
    store_path = folder / "exponent-scan.db"
    for suffix in ("", "-wal", "-shm"):     # a demonstration, not a lookup: start empty
        candidate = Path(str(store_path) + suffix)
        if candidate.exists():
            candidate.unlink()
    plan = scan.plan_scan(CONJECTURE, flags)
    progress = sweep.terminal_progress()
    try:
        outcome = scan.run_scan(plan, store_path, mode="narrow", workers=workers,
                                progress=progress, command=command)
    finally:
        if progress:
            progress.close()
    data = scan.outcome_json(outcome, store_path)
    survivors = data["agreeing_everywhere"]
    first_case = plan.flags[0].name
    table = {**data, "cases": [first_case]}
    say("  " + scan_report.summary_text(table).split("\n\n", 1)[1].split("\n\n")[0]
        .replace("\n", "\n  "))
    for drop in data["dropped"]:
        say(f"  exponent = {drop['values']['exponent']} disagrees already at {drop['at']}")
    if survivors:
        say(f"  exponent = {', '.join(str(s['exponent']) for s in survivors)} agrees on all "
            f"{len(plan.flags)} cases up to rank {data['agrees_up_to_rank']} "
            f"({outcome.wall:.1f} s): the q-Whitney relations.")
    else:
        say("  no value survives")
    tables = folder / "exponent-scan.md"
    tables.write_text(scan_report.render_tables(data, "markdown"), encoding="utf-8")
    (folder / "exponent-scan.json").write_text(json.dumps(data, indent=2) + "\n",
                                               encoding="utf-8")
    return {"scan": data, "written": [tables, folder / "exponent-scan.json", store_path]}

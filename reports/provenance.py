"""The reproducibility block printed under every table and stored with every figure:
package versions, primes, seeds, the command that made the output and the commands of the
runs it shows."""
from __future__ import annotations

import platform
from importlib import metadata
from typing import List, Optional, Sequence

from .frames import distinct

PACKAGES = ("ringmatch", "python-flint", "sympy", "pandas", "tabulate", "matplotlib")


def package_versions(packages: Sequence[str] = PACKAGES) -> dict:
    versions = {"python": platform.python_version()}
    for name in packages:
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


def provenance(rows: Sequence[dict], command: Optional[str]) -> dict:
    """Everything needed to trace the output back to its computations."""
    primes, seeds, runs, stored_versions = [], [], [], []
    for row in rows:
        certificate = (row.get("result") or {}).get("certificate") or {}
        trials = certificate.get("trials") or [certificate]
        primes += [t.get("prime") for t in trials]
        seeds.append((row["case"], [t.get("seed") for t in trials]))
        run = row.get("run") or {}
        runs.append(run.get("command"))
        if run.get("versions"):
            stored_versions.append(tuple(sorted(run["versions"].items())))
    return {"command": command, "rendered_with": package_versions(),
            "computed_with": [dict(v) for v in distinct(stored_versions)],
            "primes": distinct(primes), "seeds": seeds, "run_commands": distinct(runs),
            "cases": len(rows)}


def provenance_lines(block: dict) -> List[str]:
    """The block as plain lines (no comment markers), the same for every output format."""
    def versions_text(versions: dict) -> str:
        return ", ".join(f"{k} {v}" for k, v in versions.items())

    lines = [f"produced by: {block['command'] or '(command not recorded)'}",
             f"rendered with: {versions_text(block['rendered_with'])}"]
    for versions in block["computed_with"]:
        lines.append(f"computed with: {versions_text(versions)}")
    lines.append("primes: " + (", ".join(map(str, block["primes"])) or "–"))
    seeds = "; ".join(f"{case} {','.join(map(str, s))}" for case, s in block["seeds"])
    lines.append(f"seeds ({block['cases']} cases): " + (seeds or "–"))
    for run in block["run_commands"]:
        lines.append(f"run: {run}")
    return lines

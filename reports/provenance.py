"""The reproducibility block printed under every table and stored with every figure:
package versions, primes, seeds, the command that made the output and the commands of the
runs it shows."""
from __future__ import annotations

import platform
import re
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
        result = row.get("result")
        trials = result.certificate.all_trials if result is not None else []
        primes += [t.prime for t in trials]
        seeds.append((row["case"], [t.seed for t in trials]))
        run = row.get("run") or {}
        runs.append(run.get("command"))
        if run.get("versions"):
            stored_versions.append(tuple(sorted(run["versions"].items())))
    return {"command": command, "rendered_with": package_versions(),
            "computed_with": [dict(v) for v in distinct(stored_versions)],
            "primes": distinct(primes), "seeds": seeds, "run_commands": distinct(runs),
            "cases": len(rows)}


# An absolute path: after a start, a space, a quote, `=` or `,` (inside comma-separated
# lists such as --presentations), up to the next space, quote or comma.
_ABSOLUTE_PATH = re.compile(r"""(?<![^\s'"=,])(?:/|~/|[A-Za-z]:[\\/])[^\s'",]*""")


# The same inside shell quotes (shlex.join quotes paths with spaces).
_QUOTED_ABSOLUTE_PATH = re.compile(r"""(['"])((?:/|~/|[A-Za-z]:[\\/])[^'"]*)\1""")


def without_local_paths(text: Optional[str]) -> Optional[str]:
    """`text` with every absolute path replaced by its last component: provenance is shared
    with readers of a paper, and a home directory tells them nothing but the author's login.
    Relative paths stay; they are how a command is repeated from the project folder."""
    if text is None:
        return None

    def name(match) -> str:
        path = match.group(0).rstrip("/\\")
        return re.split(r"[/\\]", path)[-1] or path

    def quoted(match) -> str:
        inner = match.group(2).rstrip("/\\")
        return match.group(1) + (re.split(r"[/\\]", inner)[-1] or inner) + match.group(1)

    return _ABSOLUTE_PATH.sub(name, _QUOTED_ABSOLUTE_PATH.sub(quoted, text))


def provenance_lines(block: dict) -> List[str]:
    """The block as plain lines (no comment markers), the same for every output format;
    absolute local paths are cut to their last component."""
    def versions_text(versions: dict) -> str:
        return ", ".join(f"{k} {v}" for k, v in versions.items())

    lines = [f"produced by: {without_local_paths(block['command']) or '(command not recorded)'}",
             f"rendered with: {versions_text(block['rendered_with'])}"]
    for versions in block["computed_with"]:
        lines.append(f"computed with: {versions_text(versions)}")
    lines.append("primes: " + (", ".join(map(str, block["primes"])) or "–"))
    seeds = "; ".join(f"{case} {','.join(map(str, s))}" for case, s in block["seeds"])
    lines.append(f"seeds ({block['cases']} cases): " + (seeds or "–"))
    for run in block["run_commands"]:
        lines.append(f"run: {without_local_paths(run)}")
    return lines

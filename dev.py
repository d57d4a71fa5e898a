"""Quick start for a fresh machine: `python3 dev.py demo` or `python3 dev.py test`.

Creates ./.venv on first use, installs ringmatch into it (with the test extras), and then
runs the demo or the whole test suite inside it.  Only the standard library is used here
because nothing else may be installed yet.
"""
import os
import subprocess
import sys
import venv
from pathlib import Path

HERE = Path(__file__).resolve().parent
VENV = HERE / ".venv"
BIN = VENV / ("Scripts" if os.name == "nt" else "bin")
STAMP = VENV / ".ringmatch-installed"


def python_in_venv() -> Path:
    return BIN / ("python.exe" if os.name == "nt" else "python")


def ensure_venv() -> None:
    if not python_in_venv().exists():
        print("dev.py: creating .venv", flush=True)
        venv.EnvBuilder(with_pip=True).create(VENV)
    project = HERE / "pyproject.toml"
    if STAMP.exists() and STAMP.stat().st_mtime >= project.stat().st_mtime:
        return
    # pip's own lines (Collecting …, Installing collected packages: …) say what arrives;
    # a silent install of this size looks like a hang.
    print("dev.py: installing ringmatch and its dependencies into .venv (python-flint, "
          "sympy, pandas, tabulate, matplotlib; pytest, hypothesis and dask for the tests); "
          "the first time this takes a few minutes (about 2.5 on the project's machine)",
          flush=True)
    subprocess.run([str(python_in_venv()), "-m", "pip", "install", "--progress-bar", "off",
                    "--disable-pip-version-check", "-e", f"{HERE}[test]"], check=True)
    print("dev.py: installed", flush=True)
    STAMP.touch()


def main(argv: list) -> int:
    usage = "usage: python3 dev.py demo | test [pytest options]"
    if not argv or argv[0] not in ("demo", "test"):
        print(usage, file=sys.stderr)
        return 2
    ensure_venv()
    if argv[0] == "demo":
        command = [str(BIN / "ringmatch"), "demo", *argv[1:]]
    else:
        # Collection takes a few seconds before pytest's first line: say what is coming.
        print("dev.py: running the test suite (pytest); it first prints how many tests and "
              "how long the last whole run took", flush=True)
        extra = []
        if os.environ.get("CI") == "true":
            # The same command as on a developer's machine; under CI it also runs the slow
            # tests and the full Hypothesis example counts.
            extra = ["--slow", "--hypothesis-profile=ci"]
        command = [str(python_in_venv()), "-m", "pytest", *extra, *argv[1:]]
    return subprocess.run(command, cwd=HERE).returncode


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

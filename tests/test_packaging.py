"""What a non-editable install ships: every shipped presentation file is package data."""
try:
    import tomllib
except ImportError:          # Python < 3.11: the tomli backport (a dependency there)
    import tomli as tomllib
from fnmatch import fnmatch

from conftest import ROOT


def test_every_shipped_presentation_file_is_package_data():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())
    patterns = config["tool"]["setuptools"]["package-data"]["ringmatch.presentations"]
    base = ROOT / "presentations"
    shipped = [p.relative_to(base).as_posix() for p in (base / "files").rglob("*.toml")]
    assert shipped
    missing = [p for p in shipped if not any(fnmatch(p, pattern) and
                                             p.count("/") == pattern.count("/")
                                             for pattern in patterns)]
    assert not missing, f"add to [tool.setuptools.package-data]: {missing}"

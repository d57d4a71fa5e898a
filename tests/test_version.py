"""`ringmatch --version` reports the version the package carries."""
import ringmatch

from conftest import run_cli


def test_version_option_prints_the_package_version():
    run = run_cli("--version")
    assert run.returncode == 0, run.stderr
    assert run.stdout.strip() == f"ringmatch {ringmatch.__version__}"


def test_one_version_and_licence_everywhere():
    """pyproject.toml, the package and CITATION.cff name the same version; the licence
    named in pyproject.toml is the one in LICENSE."""
    import re

    from conftest import ROOT
    pyproject = (ROOT / "pyproject.toml").read_text()
    assert re.search(r'^version = "([^"]+)"', pyproject, re.M).group(1) == ringmatch.__version__
    citation = (ROOT / "CITATION.cff").read_text()
    assert re.search(r'^version: "([^"]+)"', citation, re.M).group(1) == ringmatch.__version__
    assert re.search(r'^license = "MIT"', pyproject, re.M)
    assert re.search(r"^license: MIT", citation, re.M)
    assert (ROOT / "LICENSE").read_text().startswith("MIT License")

"""`ringmatch --version` reports the version the package carries."""
import ringmatch

from conftest import run_cli


def test_version_option_prints_the_package_version():
    run = run_cli("--version")
    assert run.returncode == 0, run.stderr
    assert run.stdout.strip() == f"ringmatch {ringmatch.__version__}"

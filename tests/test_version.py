"""`ringmatch --version` reports the version the package carries."""
import subprocess
import sys

import ringmatch


def test_version_option_prints_the_package_version():
    run = subprocess.run([sys.executable, "-m", "ringmatch.compare.cli", "--version"],
                         capture_output=True, text=True, timeout=60)
    assert run.returncode == 0, run.stderr
    assert run.stdout.strip() == f"ringmatch {ringmatch.__version__}"

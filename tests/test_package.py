"""The public face of the package."""

import subprocess
import sys

import qcnorm
from qcnorm.errors import DataError, QcnormError


def test_errors_are_value_errors():
    # One base the app can catch; a ValueError so generic callers catch it too.
    assert issubclass(QcnormError, ValueError)
    assert issubclass(DataError, QcnormError)


def test_import_does_not_pull_streamlit():
    code = "import sys, qcnorm; import qcnorm.cli; print('streamlit' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_version_is_a_string():
    assert isinstance(qcnorm.__version__, str) and qcnorm.__version__.count(".") == 2

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


def test_public_api_is_pinned():
    # The public face changes only on purpose: update this list when it does.
    expected = {
        "__version__", "analyze", "Analysis", "Baseline", "read_measurements", "list_characteristics",
        "Measurements", "choose_transform", "TransformChoice", "make_transform", "transform_from_params",
        "spread_level", "anderson_darling", "shapiro_wilk", "skewness_test", "kurtosis_test",
        "resolution_check", "probability_plot", "normality_report", "control_chart", "run_rules",
        "limits_in_units", "ControlChart", "ChartBaseline", "chart_constants", "ChartConstants",
        "capability", "Capability", "fit_distribution", "fit_distributions", "percentile_capability",
        "QcnormError", "DataError", "DomainError", "NotFittedError", "ReadError", "ConfigError",
        "StoreError", "QcnormWarning",
    }
    assert set(qcnorm.__all__) == expected
    for name in qcnorm.__all__:
        assert hasattr(qcnorm, name), name

"""eosfill's own warnings: issued where the documentation says, and turned into
errors in the test run for any test that does not assert them (pyproject's
filterwarnings), precisely for these two categories only."""
import sys
from pathlib import Path

import pytest

import eosfill
from eosfill.errors import LimitWarning, RangeWarning

ROOT = Path(__file__).resolve().parents[1]


def test_range_warning_outside_the_cp_fit():
    """Hydrogen's Cp° fit starts at 100 K (data/fluids/fluids.csv): a state at 50 K warns."""
    with pytest.warns(RangeWarning, match="outside its correlation's range"):
        eosfill.Fluid("hydrogen").state(T=50.0, P=1e5)


def test_unexpected_eosfill_warnings_are_errors_in_tests():
    if sys.version_info >= (3, 11):
        import tomllib
    else:  # pragma: no cover
        import tomli as tomllib
    opts = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["pytest"]["ini_options"]
    assert sorted(opts["filterwarnings"]) == ["error::eosfill.errors.LimitWarning",
                                              "error::eosfill.errors.RangeWarning"]
    import warnings

    with pytest.raises(LimitWarning):  # the filter is active in this very test
        warnings.warn("a limit", LimitWarning)
    with pytest.warns(UserWarning):  # another library's warning: a warning, not an error
        warnings.warn("another library's warning", UserWarning)

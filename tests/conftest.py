"""Test configuration: in CI (CI set in the environment) hypothesis runs
derandomized, so a run is reproducible; locally it explores new examples."""
import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")

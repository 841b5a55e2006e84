"""Shared pytest configuration."""
import os

from hypothesis import settings

# CI runs the property tests derandomized so that a submission's result does not depend on the
# random draw; local runs keep exploring new examples (and store failures in .hypothesis/).
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")


def pytest_configure(config):
    config.addinivalue_line(
        "markers", "slow: builds or installs the package (run by default; deselect with "
                   "-m 'not slow')")

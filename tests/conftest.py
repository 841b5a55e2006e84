"""Shared pytest configuration."""


def pytest_configure(config):
    config.addinivalue_line(
        "markers", "slow: builds or installs the package (run by default; deselect with "
                   "-m 'not slow')")

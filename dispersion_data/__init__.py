"""Bundled dispersion data files (one TOML file per material); shipped as prismdesign.dispersion_data."""

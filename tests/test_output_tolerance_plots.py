"""Tolerance figures are built outside pyplot and written atomically, as every output figure
(DEVELOPERS.md, output layer)."""
import sys
import types

import numpy as np

from prismdesign.output.tolerance_plots import plot_histogram, plot_tornado


def test_tolerance_figures_leave_pyplot_alone_and_replace_the_file(tmp_path):
    rows = [dict(parameter="face1_angle_deg", sensitivity=-2.0, parameter_unit="deg",
                 figure="split", figure_unit="deg", swing=0.1, tolerance=0.05)]
    tornado = tmp_path / "tornado.png"
    tornado.write_bytes(b"old")
    assert plot_tornado(rows, tornado) == tornado
    assert tornado.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    mc = types.SimpleNamespace(target_figure=np.linspace(0.4, 0.6, 40).reshape(20, 2),
                               wavelength_um=np.array([0.55, 0.65]), target_kind="split",
                               samples=20, yield_fraction=0.9, yield_error=0.05)
    hist = plot_histogram(mc, tmp_path / "histogram.png", target=0.5, tolerance=0.05)
    assert hist.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["histogram.png", "tornado.png"]
    if "matplotlib.pyplot" in sys.modules:
        assert sys.modules["matplotlib.pyplot"].get_fignums() == []

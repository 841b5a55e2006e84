"""Figures of a material's dispersion: indices and birefringence versus wavelength, and
birefringence of several crystals compared over a band. Built without pyplot (:mod:`.files`),
so writing a figure leaves the user's matplotlib backend alone."""
from __future__ import annotations

from pathlib import Path

import numpy as np

from .files import new_figure, save_figure

__all__ = ["plot_indices", "plot_birefringence_comparison", "birefringence_comparison_figure",
           "curve_label"]


def curve_label(name, source):
    """Legend text for a material's curve: ``"calcite — Ghosh 1999"``.

    A dash, not parentheses, joins the two, since a short citation may carry its own
    parenthesised remark ("(from memory)") and nested brackets read badly.
    """
    return f"{name} — {source}" if source else f"{name} — no reference"


def plot_indices(material, wavelength_um, path, temperature_c=None) -> Path:
    """Write a figure of n_o, n_e (top) and Δn = n_e − n_o (bottom) versus wavelength.

    Isotropic materials get a single panel of n, biaxial crystals one of n_x, n_y, n_z.  Wavelengths outside the material's validity
    range are shaded and labelled as extrapolated.

    Parameters
    ----------
    material : UniaxialMaterial, IsotropicMaterial or BiaxialMaterial
        The material to plot.
    wavelength_um : array_like, shape (N,)
        Wavelengths in µm, increasing.
    path : str or os.PathLike
        Output file; the format follows the suffix (``.png``, ``.pdf``, ``.svg``).
    temperature_c : float, optional
        Temperature in °C (default: the data temperature).

    Returns
    -------
    pathlib.Path
        The written file.
    """
    lam = np.asarray(wavelength_um, dtype=float)
    source = material.reference.short if material.reference is not None else "no reference"
    uniaxial = material.kind == "uniaxial"
    fig = new_figure(figsize=(7.0, 6.0 if uniaxial else 4.0), layout="constrained")
    axes = fig.subplots(2 if uniaxial else 1, 1, sharex=True, squeeze=False)
    axes = axes[:, 0]
    if uniaxial:
        n_o, n_e = material.indices(lam, temperature_c)
        axes[0].plot(lam, n_o, label="$n_o$ (ordinary)", color="tab:blue")
        axes[0].plot(lam, n_e, label="$n_e$ (extraordinary)", color="tab:red")
        axes[0].set_ylabel("refractive index")
        axes[1].plot(lam, n_e - n_o, color="black")
        axes[1].set_ylabel(r"birefringence $\Delta n = n_e - n_o$")
    elif material.kind == "biaxial":
        for n, axis, colour in zip(material.indices(lam, temperature_c), "xyz",
                                   ("tab:blue", "tab:green", "tab:red")):
            axes[0].plot(lam, n, label=f"$n_{axis}$ (principal axis {axis})", color=colour)
        axes[0].set_ylabel("refractive index")
    else:
        axes[0].plot(lam, material.n(lam, temperature_c), label="$n$", color="tab:blue")
        axes[0].set_ylabel("refractive index")
    lo, hi = material.validity_um
    for ax in axes:
        for start, stop in ((lam.min(), lo), (hi, lam.max())):
            if stop > start:
                ax.axvspan(start, stop, color="0.85", zorder=0)
        ax.grid(True, alpha=0.3)
        # Offset notation ("1e-5 + 1.0002") is unreadable for gases; print plain values.
        ax.ticklabel_format(axis="y", useOffset=False)
    if lam.min() < lo or lam.max() > hi:
        axes[0].plot([], [], color="0.85", lw=8, label="outside data range (extrapolated)")
    axes[0].legend(loc="best")
    axes[-1].set_xlabel("vacuum wavelength (µm)")
    axes[-1].set_xlim(lam.min(), lam.max())
    temperature = material.temperature_c if temperature_c is None else temperature_c
    fig.suptitle(f"{material.name} at {temperature:g} °C — data: {source}")
    return save_figure(fig, Path(path))


def plot_birefringence_comparison(wavelength_um, curves, path, *, title=""):
    """Write :func:`birefringence_comparison_figure` to `path` (format from the suffix);
    returns the written :class:`pathlib.Path`."""
    return save_figure(birefringence_comparison_figure(wavelength_um, curves, title=title),
                       Path(path))


def birefringence_comparison_figure(wavelength_um, curves, *, title=""):
    """A figure comparing |Δn| of several crystals over a band.

    Top: |n_e − n_o| on a logarithmic axis, so that weakly and strongly birefringent crystals
    both read clearly. Bottom: the change of each |Δn| from its value at the first wavelength,
    in percent, which is what makes a split drift across the band; on a common linear axis
    starting at 0 every curve would look flat.

    Parameters
    ----------
    wavelength_um : array_like, shape (N,)
        Vacuum wavelengths (µm), increasing.
    curves : sequence of (str, array_like of shape (N,))
        Legend label (e.g. from :func:`curve_label`) and |Δn| at each wavelength.
    title : str

    Returns
    -------
    matplotlib.figure.Figure
        Two axes (top, bottom), made without pyplot.
    """
    lam = np.asarray(wavelength_um, dtype=float)
    fig = new_figure(figsize=(7.0, 6.2), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [1.2, 1.0]})
    for label, values in curves:
        values = np.abs(np.asarray(values, dtype=float))
        line, = top.plot(lam, values, label=label)
        bottom.plot(lam, 100.0 * (values / values[0] - 1.0), color=line.get_color())
    top.set_yscale("log")
    # Plain 1-2-5 ticks instead of bare powers of ten, which leave most curves unlabelled.
    from matplotlib.ticker import FixedLocator, NullFormatter, ScalarFormatter
    top.yaxis.set_major_locator(FixedLocator([k * 10.0 ** e for e in range(-6, 2)
                                              for k in (1, 2, 5)]))
    top.yaxis.set_major_formatter(ScalarFormatter())
    top.yaxis.set_minor_formatter(NullFormatter())
    top.set_ylabel(r"birefringence $|n_e - n_o|$ (log scale)")
    bottom.axhline(0.0, color="#777777", lw=0.8)
    bottom.set_ylabel(f"change of $|n_e - n_o|$\nfrom {lam[0]:g} µm (%)")
    bottom.set_xlabel("vacuum wavelength (µm)")
    for ax in (top, bottom):
        ax.grid(True, which="both", alpha=0.3)
    bottom.set_xlim(lam[0], lam[-1])
    if curves:
        fig.legend(loc="outside lower center", ncols=2, fontsize=8)
    if title:
        fig.suptitle(title, fontsize=10)
    return fig

"""Figures of a material's dispersion: indices and birefringence versus wavelength."""
from __future__ import annotations

from pathlib import Path

import numpy as np

__all__ = ["plot_indices"]


def plot_indices(material, wavelength_um, path, temperature_c=None) -> Path:
    """Write a figure of n_o, n_e (top) and Δn = n_e − n_o (bottom) versus wavelength.

    Isotropic materials get a single panel of n.  Wavelengths outside the material's validity
    range are shaded and labelled as extrapolated.

    Parameters
    ----------
    material : UniaxialMaterial or IsotropicMaterial
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
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    lam = np.asarray(wavelength_um, dtype=float)
    source = material.reference.short if material.reference is not None else "no reference"
    uniaxial = material.kind == "uniaxial"
    fig, axes = plt.subplots(2 if uniaxial else 1, 1, sharex=True, squeeze=False,
                             figsize=(7.0, 6.0 if uniaxial else 4.0))
    axes = axes[:, 0]
    if uniaxial:
        n_o, n_e = material.indices(lam, temperature_c)
        axes[0].plot(lam, n_o, label="$n_o$ (ordinary)", color="tab:blue")
        axes[0].plot(lam, n_e, label="$n_e$ (extraordinary)", color="tab:red")
        axes[0].set_ylabel("refractive index")
        axes[1].plot(lam, n_e - n_o, color="black")
        axes[1].set_ylabel(r"birefringence $\Delta n = n_e - n_o$")
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
    fig.tight_layout()
    path = Path(path)
    fig.savefig(path, dpi=120)
    plt.close(fig)
    return path

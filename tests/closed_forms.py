"""Closed forms shared by several test files (independent of the package's own code).

Each is a textbook formula, named with its source; tests compare the package against them.
"""
import numpy as np


def sphere(polar, azimuth):
    """Unit vector from its polar angle (from z) and azimuth (from x), radians."""
    return np.array([np.sin(polar) * np.cos(azimuth), np.sin(polar) * np.sin(azimuth),
                     np.cos(polar)])


def fresnel_transmittance(n1, n2, incidence_rad, polarisation):
    """Power transmittance 1 − R of a plane wave from index n1 into n2 for an "s" or "p" wave
    (Born & Wolf, Principles of Optics, 7th ed., 1999, §1.5.2)."""
    cos_i = np.cos(incidence_rad)
    cos_t = np.sqrt(1.0 - (n1 * np.sin(incidence_rad) / n2) ** 2)
    if polarisation == "s":
        r = (n1 * cos_i - n2 * cos_t) / (n1 * cos_i + n2 * cos_t)
    else:
        r = (n2 * cos_i - n1 * cos_t) / (n2 * cos_i + n1 * cos_t)
    return 1.0 - r ** 2


def wollaston_exit_angle_rad(n_first, n_second, wedge_rad, n_outside):
    """Exit angle of one beam of a symmetric Wollaston at normal incidence (Snell's law twice,
    Born & Wolf §1.5.1): the beam enters undeviated, refracts at the interface tilted by the
    wedge angle θ (n₁ sin θ = n₂ sin θ'), travels at θ' − θ from z and leaves the exit face
    parallel to the entrance: n₂ sin(θ' − θ) = n_outside sin α. Returns α (radians, signed)."""
    inside = np.arcsin(n_first * np.sin(wedge_rad) / n_second) - wedge_rad
    return np.arcsin(n_second * np.sin(inside) / n_outside)


def incoherent_slab_transmittance(n1, n2, n3, incidence_rad, polarisation):
    """Power transmittance of a slab n2 between half spaces n1 and n3 whose multiple reflections
    add in power, not amplitude: T = T₁T₂ Σ (R₁R₂)^k = T₁T₂/(1 − R₁R₂), with the Fresnel
    reflectances R₁ (n1 → n2) and R₂ (n2 → n3) of one polarisation (Born & Wolf §1.5.2 for
    R₁, R₂; the incoherent sum as in B. Harbecke, Appl. Phys. B 39, 165 (1986), from memory).
    `incidence_rad` is the angle in n1; the slab wave must propagate."""
    inside = np.arcsin(n1 * np.sin(incidence_rad) / n2)
    t1 = fresnel_transmittance(n1, n2, incidence_rad, polarisation)
    t2 = fresnel_transmittance(n2, n3, inside, polarisation)
    return t1 * t2 / (1.0 - (1.0 - t1) * (1.0 - t2))

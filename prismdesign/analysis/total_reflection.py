"""How far each beam of a trace is from total internal reflection, as a continuous margin.

For a plane wave with wave vector k (units of the vacuum wavenumber) arriving at a plane surface
with unit normal N̂, the tangential part k_t = k − (k·N̂)N̂ is conserved (also across a thin
layer). Writing κ² = |k_t|², the wave can propagate into

* an isotropic medium or thin layer of index n when n² − κ² > 0 (Snell: sin θ_c = n/n₁);
* a uniaxial crystal in the ordinary mode when n_o² − κ² > 0;
* a uniaxial crystal in the extraordinary mode when the discriminant b² − a c₀ of its
  normal-component quadratic a q² + 2 b q + c₀ = 0 is positive, with Δ = n_e² − n_o²,
  a = n_o² + Δ(ĉ·N̂)², b = Δ(ĉ·k_t)(ĉ·N̂), c₀ = n_o² κ² + Δ(ĉ·k_t)² − n_o² n_e² (Born & Wolf,
  *Principles of Optics*, §15.3; the same quadratic as
  :func:`prismdesign.optics.eigenmodes.normal_components`).

The margin used here is (b² − a c₀)/a, which equals n² − κ² in the isotropic limit, so all
margins are in units of index² and change sign exactly at the critical angle.
"""
import numpy as np

from ..optics.vectors import dot

__all__ = ["total_reflection_margin", "surface_margins"]


def _mode_margin(kt2, c_t, c_n, n_o, n_e, mode):
    no2 = n_o * n_o
    if mode != "e":
        return no2 - kt2
    delta = n_e * n_e - no2
    a = no2 + delta * c_n * c_n
    b = delta * c_t * c_n
    c0 = no2 * kt2 + delta * c_t * c_t - no2 * n_e * n_e
    return (b * b - a * c0) / a


def _plan(system, label):
    """Per surface: (far medium or None for a mirror, mode letter or None)."""
    letters = list(label.split("|")[0].replace("-", ""))
    plan = []
    for i, surface in enumerate(system.surfaces):
        before, after = system.media[i], system.media[i + 1]
        mirror = surface.reflect_from is not None
        crystal = before.is_crystal if mirror else after.is_crystal
        mode = None
        if crystal:
            if not letters:
                raise ValueError(f"beam label {label!r} is too short for this prism")
            mode = letters.pop(0)
        plan.append((None if mirror else after, mode))
    if letters:
        raise ValueError(f"beam label {label!r} is too long for this prism")
    return plan


def surface_margins(beam, system):
    """Propagation margin of a beam at each surface it meets (index²; negative = reflected).

    Parameters
    ----------
    beam : Beam
        A transmitted beam of a trace through `system` (traced with ``power_threshold=0`` so
        that fully reflected beams are kept).
    system : SequentialSystem

    Returns
    -------
    ndarray, shape (n_surfaces,) + beam shape
        min(layer margin, medium margin) per surface; +inf at reflecting (mirror) surfaces.
        Values after the first negative one belong to a dead branch and are not physical.
    """
    plan = _plan(system, beam.label)
    lam = beam.wavelength_um
    out = []
    for s, (surface, (medium, mode)) in enumerate(zip(system.surfaces, plan)):
        if medium is None:
            out.append(np.full(lam.shape, np.inf))
            continue
        n_hat = surface.normal
        k = beam.wave_normals[s] * beam.indices[s][..., None]
        k_t = k - dot(k, n_hat)[..., None] * n_hat
        kt2 = dot(k_t, k_t)
        n_o, n_e = medium.indices(lam)
        if medium.is_crystal:
            axis = np.broadcast_to(medium.optic_axis, k.shape)
            margin = _mode_margin(kt2, dot(axis, k_t), dot(axis, n_hat), n_o, n_e, mode)
        else:
            margin = n_o * n_o - kt2
        if surface.layer is not None:
            n_layer = surface.layer.material.indices(lam)[0]
            margin = np.minimum(margin, n_layer * n_layer - kt2)
        out.append(margin)
    return np.stack(out)


def total_reflection_margin(result, system, label):
    """Smallest propagation margin of a beam over the surfaces it meets.

    Positive: the beam crosses every surface (and thin layer) as a propagating wave; negative:
    it is totally reflected at some surface. Surfaces after the first total reflection are
    ignored (the branch no longer exists there).

    Parameters
    ----------
    result : TraceResult
    system : SequentialSystem
        The system that was traced.
    label : str
        Beam label.

    Returns
    -------
    ndarray
        Margin in index² over the bundle shape (the incoherent-pair axis of unpolarised input
        is dropped: geometry is the same for both members).
    """
    if label not in result.beams:
        raise ValueError(f"beam {label!r} is not among the traced beams {sorted(result.beams)}")
    margins = surface_margins(result.beams[label], system)
    if result.incoherent_pair:
        margins = margins[:, 0]
    alive_before = np.logical_and.accumulate(
        np.concatenate([np.ones_like(margins[:1], dtype=bool), margins[:-1] > 0]), axis=0)
    return np.where(alive_before, margins, np.inf).min(axis=0)

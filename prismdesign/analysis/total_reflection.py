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

The :class:`Requirement` objects of a field-of-view spec (beam passes, beam blocked, power and
extinction limits) turn these margins, and the powers of a trace, into one continuous margin per
condition, positive where it holds; :mod:`prismdesign.analysis.field_of_view` bisects on them.
"""
from dataclasses import dataclass

import numpy as np

from ..optics.vectors import dot
from ..prisms.base import check_finite, check_positive
from ._common import plain, shown

__all__ = ["total_reflection_margin", "surface_margins", "Requirement", "beam_passes",
           "beam_blocked", "power_at_least", "power_at_most", "extinction_at_least",
           "check_requirements"]


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
        if getattr(medium, "crystal_axes", None) is not None:
            raise ValueError(f"total-reflection margins are not available for biaxial pieces "
                             f"({medium.name}) yet; allowed: uniaxial and isotropic pieces")
        n_o, n_e = medium.indices(lam)
        if medium.is_crystal:
            axis = np.broadcast_to(medium.optic_axis, k.shape)
            margin = _mode_margin(kt2, dot(axis, k_t), dot(axis, n_hat), n_o, n_e, mode)
        else:
            margin = n_o * n_o - kt2
        if surface.layer is not None:
            n_layer = surface.layer.material.indices(lam)[0] + surface.layer.index_offset
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
        Beam label; an output beam "a+b" (:mod:`~prismdesign.analysis.beam_groups`) takes the
        smallest margin of its branches, which `result` must then hold as well
        (:func:`~prismdesign.analysis.beam_groups.with_members`).

    Returns
    -------
    ndarray
        Margin in index² over the bundle shape (the incoherent-pair axis of unpolarised input
        is dropped: geometry is the same for both members).
    """
    if "+" in label and all(m in result.beams for m in label.split("+")):
        # An output beam of an optically active piece (analysis.beam_groups) passes where
        # all of its branches pass.
        return np.minimum.reduce([total_reflection_margin(result, system, m)
                                  for m in label.split("+")])
    if label not in result.beams:
        raise ValueError(f"beam {label!r} is not among the traced beams {sorted(result.beams)}")
    margins = surface_margins(result.beams[label], system)
    if result.incoherent_pair:
        margins = margins[:, 0]
    alive_before = np.logical_and.accumulate(
        np.concatenate([np.ones_like(margins[:1], dtype=bool), margins[:-1] > 0]), axis=0)
    return np.where(alive_before, margins, np.inf).min(axis=0)


_TINY = 1e-300

_KINDS = ("passes", "blocked", "power_at_least", "power_at_most", "extinction_at_least")


@dataclass(frozen=True)
class Requirement:
    """One condition on the beams leaving a prism, with a continuous margin.

    Build with :func:`beam_passes`, :func:`beam_blocked`, :func:`power_at_least`,
    :func:`power_at_most` or :func:`extinction_at_least`.

    Attributes
    ----------
    kind : {"passes", "blocked", "power_at_least", "power_at_most", "extinction_at_least"}
    beam : str
        Beam label (e.g. ``"ee"``).
    limit : float
        Power fraction of the input, or extinction ratio (linear).
    leak : str or None
        Label of the unwanted beam for an extinction requirement.
    """

    kind: str
    beam: str
    limit: float = 0.0
    leak: str | None = None

    def __post_init__(self):
        if self.kind not in _KINDS:
            raise ValueError(f"Requirement kind must be one of {', '.join(_KINDS)}, "
                             f"got {shown(self.kind)}")
        _check_label(self.beam)
        object.__setattr__(self, "limit", check_finite("limit", plain(self.limit)))
        if self.kind == "extinction_at_least":
            _check_label(self.leak)

    @property
    def name(self):
        """Short readable name, used as the key of maps and half-angles."""
        return {"passes": f"{self.beam} not totally reflected",
                "blocked": f"{self.beam} totally reflected",
                "power_at_least": f"{self.beam} power >= {self.limit:g}",
                "power_at_most": f"{self.beam} power <= {self.limit:g}",
                "extinction_at_least": f"{self.beam}/{self.leak} >= {self.limit:g}"}[self.kind]

    def margin(self, result, system):
        """Margin of this requirement for a trace; positive where it holds.

        Units: index² for "passes"/"blocked", power fraction for power limits, decades
        (log10 of the ratio over the limit) for extinction.
        """
        if self.kind in ("passes", "blocked"):
            m = total_reflection_margin(result, system, self.beam)
            return m if self.kind == "passes" else -m
        power = _power(result, self.beam)
        if self.kind == "power_at_least":
            return power - self.limit
        if self.kind == "power_at_most":
            return self.limit - power
        leak = _power(result, self.leak)
        return (np.log10(np.maximum(power, _TINY)) - np.log10(np.maximum(leak, _TINY))
                - np.log10(self.limit))


def _power(result, label):
    if label not in result.beams:
        raise ValueError(f"beam {label!r} is not among the traced beams {sorted(result.beams)}")
    return result.power(label)


def _check_label(label):
    if not isinstance(label, str) or not label:
        raise ValueError(f"beam label must be a non-empty string such as 'eo', got {label!r}")
    return label


def _check_fraction(name, value):
    what = "a power fraction between 0 and 1"
    v = check_finite(name, plain(value), what)
    if not 0.0 <= v <= 1.0:
        raise ValueError(f"{name} must be {what}, got {shown(value)}")
    return v


def beam_passes(beam):
    """The beam is not totally reflected at any surface or thin layer it crosses."""
    return Requirement("passes", _check_label(beam))


def beam_blocked(beam):
    """The beam is totally reflected at some surface or thin layer (a rejected Glan beam)."""
    return Requirement("blocked", _check_label(beam))


def power_at_least(beam, fraction):
    """Transmitted power of the beam (fraction of the input) is at least `fraction`."""
    return Requirement("power_at_least", _check_label(beam), _check_fraction("fraction", fraction))


def power_at_most(beam, fraction):
    """Transmitted power of the beam (e.g. the tunnelling leak of a rejected beam) is at most
    `fraction` of the input."""
    return Requirement("power_at_most", _check_label(beam), _check_fraction("fraction", fraction))


def extinction_at_least(beam, leak, ratio):
    """Power of `beam` over the power of the unwanted `leak` beam is at least `ratio` (linear)."""
    r = check_positive("extinction ratio", plain(ratio))
    return Requirement("extinction_at_least", _check_label(beam), r, _check_label(leak))


def check_requirements(requirements, distinct=False):
    """A non-empty tuple of :class:`Requirement` objects (with `distinct`, no two alike), or a
    one-line ValueError."""
    allowed = ("a non-empty sequence of Requirement objects (made by beam_passes, "
               "beam_blocked, power_at_least, power_at_most, extinction_at_least)")
    if isinstance(requirements, Requirement):
        items = (requirements,)
    elif isinstance(requirements, (str, bytes)):
        items = ()
    else:
        try:
            items = tuple(requirements)
        except TypeError:
            items = ()
    if not items or not all(isinstance(r, Requirement) for r in items):
        raise ValueError(f"requirements must be {allowed}, got {shown(requirements)}")
    names = [r.name for r in items]
    if distinct and len(set(names)) != len(names):
        raise ValueError(f"requirements must be distinct, got {names}")
    return items

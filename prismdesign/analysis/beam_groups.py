"""Output beams: the branches of a trace that leave a prism together, added into one beam.

In an optically active piece (a crystal given a hand) every beam is carried by two elliptical
waves (along the optic axis: the two circular waves), and the tracer follows each as its own
branch. Two such branches can leave the prism as one beam: in a right-handed quartz Rochon the
undeviated beam is the two circular waves of the first wedge, both ordinary in the second,
leaving ~5 arcsec apart ("oo" and "eo"). An analysis that ranks the raw branches would take
those two halves for the two beams of the prism. This module groups such branches into
*output beams* and hands the analyses a trace whose beams are the groups.

Grouping rule. Two transmitted branches of one trace (so from the same input ray) belong to the
same output beam when

1. their labels agree at every piece that is not optically active (they differ only in the
   letters of active pieces), so a prism without an active piece is never regrouped and its
   results stay exactly as they were (parallel o and e beams of a Savart plate or a wave plate
   stay two beams, as the labelling convention has them);
2. at every ray where both exist (no :data:`~prismdesign.analysis.LOST_FLAGS` bit), their exit
   ray directions differ by at most :data:`GROUP_TOLERANCE_RAD`, and
3. there their exit points, measured across the mean exit direction, are at most
   :data:`GROUP_OFFSET_MM` apart (a displacer of active quartz still gives two beams);
4. on some ray, in every active piece where their letters differ, the two waves are the
   activity-dominated (near-circular) pair: phase indices within :data:`CIRCULAR_FACTOR`
   × 2|ξ| of each other. Far from the axis the two waves of an active piece are the linear o
   and e waves, which the labelling convention keeps as separate beams (a quartz Wollaston or
   Nomarski prism of tiny split, a quartz wave plate cut with the axis in its faces, keep the
   beams of their inactive twins).

Groups are the connected sets of that relation; geometry, not power, decides, so the grouping is
the same for every input polarisation.

A group of two or more branches becomes one beam:

* label: its members' labels, sorted, joined by "+" (``"eo+oo"``); a single branch keeps its
  own label and is passed on unchanged;
* exit direction: the power-weighted mean of the members' exit ray directions (normalised;
  :func:`group_spread_rad` gives their spread); exit point r and wave normal (whose transverse
  basis is the common exit basis): the plain means, so that the coherent sum below is linear
  in the input field whatever the input polarisation (a Jones matrix describes it);
* field: the coherent sum, per input state of the trace, of the members' exit fields in the
  transverse plane of the mean wave normal, each with its plane-wave phase at r,
  φ_a = L_a + k_a · (r − r_a) (the phase comparison at a common point of
  :mod:`prismdesign.analysis.interference`); the beam's optical path is that of its first
  member at r, so :meth:`~prismdesign.optics.Beam.jones` with the path phase gives
  Σ_a J_a exp(i 2π φ_a / λ);
* power: |field|² per input state; for unpolarised input (the tracer's incoherent pair of two
  orthogonal states) the analyses sum it over the pair, i.e. the incoherent sum of the two
  coherent sums;
* flags: OR over the members (a member totally reflected marks the beam).

The tolerance (common practice, no source): the two halves of one beam differ by the chirality
times a geometric factor, ~1e-5 rad (arcseconds) in quartz, while the beams a polarising prism
separates differ by 1e-2 rad or more; 1e-3 rad sits between with two decades to spare on either
side. The offset limit likewise sits between the sub-micrometre offset of the two halves and the
tenths of a millimetre of a beam displacer.

Limits: an output beam's phase is taken as its first member's, so optical path differences
and fringes between members of one group (or between groups whose members beat) are not
described: the interference analyses pick grouped main beams but warn
(:class:`~prismdesign.materials.activity.ActivePieceWarning`) when they use one, and accept
a member branch's label instead. Reflected branches are grouped only when reflected into an
isotropic medium. Inputs traced in chunks (:mod:`prismdesign.analysis.memory`) are grouped
per chunk.
"""
import warnings

import numpy as np

from ..optics import Beam
from ..optics.tracer import TraceResult
from ..optics.vectors import dot
from ._common import LOST_FLAGS

__all__ = ["GROUP_TOLERANCE_RAD", "GROUP_OFFSET_MM", "CIRCULAR_FACTOR", "active_letters", "group_labels",
           "combine_groups", "output_beam_trace", "trace_output_beams", "group_spread_rad",
           "has_active_piece", "members", "with_members"]

#: Largest angle (rad) between the exit directions of two branches of one output beam.
GROUP_TOLERANCE_RAD = 1e-3

#: Two waves of an active piece count as the two halves of one beam where their phase indices
#: differ by at most this multiple of 2|ξ|, the split of the circular waves along the axis
#: (at the crossover angle the linear birefringence equals 2|ξ| and the split is √2 × 2|ξ|).
CIRCULAR_FACTOR = 2.0

#: Largest distance (mm) between the exit points of two branches of one output beam, across
#: their mean direction.
GROUP_OFFSET_MM = 1e-2

def has_active_piece(prism):
    """True when a piece of `prism` is optically active (its material has a hand)."""
    return any(getattr(p.material, "handedness", None) is not None for p in prism.pieces)


def _crystal_pieces(prism):
    """Index in `prism.pieces` of each crystal piece (one label letter each), in order."""
    return tuple(i for i, p in enumerate(prism.pieces) if p.is_crystal)


def _circular_somewhere(a, b, prism, pair):
    """Whether, on some ray, every active piece where the labels of `a` and `b` differ carries
    their two waves in the activity-dominated regime: phase indices within
    :data:`CIRCULAR_FACTOR` × 2|ξ| of each other (2|ξ| is the split of the two circular waves
    along the axis; far from it the waves are the linear o and e waves, distinct beams)."""
    pieces = _crystal_pieces(prism)
    n_a, n_b = a.indices, b.indices
    if pair:
        n_a, n_b = n_a[:, 0], n_b[:, 0]
    if len(n_a) != len(prism.pieces) + 2:     # not one segment per piece (a mirror): no groups
        return False
    lam = a.wavelength_um[0] if pair else a.wavelength_um
    temperatures = prism.piece_temperatures_c()
    ok = True
    for k, (ca, cb) in enumerate(zip(a.label, b.label)):
        if ca == cb:
            continue
        j = pieces[k]
        with warnings.catch_warnings():
            # The trace has already warned about the range of the rotatory-power data.
            warnings.simplefilter("ignore")
            xi = np.abs(prism.pieces[j].material.indices(lam, temperatures[j]).chirality)
        segment = j + 1                        # segment 0 is the surround before the prism
        ok = ok & (np.abs(n_a[segment] - n_b[segment]) <= CIRCULAR_FACTOR * 2 * xi)
    return bool(np.any(ok))


def active_letters(prism):
    """For each letter of a branch label, whether that crystal piece is optically active.

    The tracer appends one letter per crystal entered, so the letters follow the crystal
    pieces in order.
    """
    return tuple(getattr(p.material, "handedness", None) is not None
                 for p in prism.pieces if p.is_crystal)


def members(label):
    """Branch labels of an output beam label (``"eo+oo"`` → ``("eo", "oo")``)."""
    return tuple(label.split("+"))


def _geometry(beam, pair):
    """Exit point, ray direction, wave normal and flags of a beam without the pair axis."""
    if pair:
        return (beam.positions_mm[-1][0], beam.ray_directions[-1][0], beam.wave_normals[-1][0],
                beam.flags[0] | beam.flags[1])
    return beam.exit_position_mm, beam.exit_direction, beam.exit_wave_normal, beam.flags


def _linked(a, b, pair):
    """Whether two branches leave together (rule 2 and 3 of the module docstring)."""
    ra, da, _, fa = _geometry(a, pair)
    rb, db, _, fb = _geometry(b, pair)
    both = ((np.asarray(fa) & LOST_FLAGS) == 0) & ((np.asarray(fb) & LOST_FLAGS) == 0)
    cos = np.clip(dot(da, db), -1.0, 1.0)
    angle = np.arccos(cos)
    mean = da + db
    mean = mean / np.linalg.norm(mean, axis=-1, keepdims=True)
    gap = rb - ra
    across = np.linalg.norm(gap - dot(gap, mean)[..., None] * mean, axis=-1)
    ok = (angle <= GROUP_TOLERANCE_RAD) & (across <= GROUP_OFFSET_MM)
    ok = np.broadcast_to(ok, np.broadcast_shapes(np.shape(ok), np.shape(both)))
    return bool(np.all(ok | ~np.broadcast_to(both, ok.shape)))


def group_labels(result, prism, beams=None):
    """Partition of a trace's transmitted branches into output beams.

    Parameters
    ----------
    result : TraceResult
    prism : Prism
        The prism traced (which pieces are active).
    beams : dict[str, Beam], optional
        The branches to group; default ``result.beams``. ``result.reflected`` groups the first
        reflections the same way (a reflected label's letters before "|R" follow the crystals
        in order, the rest must agree; only reflections into an isotropic medium, label
        ending in "s", are grouped).

    Returns
    -------
    tuple of tuple of str
        Each group's member labels, sorted; groups in the order of their first member in the
        trace. Without an active piece every branch is its own group.
    """
    beams = result.beams if beams is None else beams
    labels = tuple(beams)
    active = active_letters(prism)
    if not any(active):
        return tuple((label,) for label in labels)
    pair = result.incoherent_pair

    def key(label):
        head, sep, tail = label.partition("|")
        if len(head) > len(active) or (not sep and len(head) != len(active)):
            return None                     # not one letter per crystal: never grouped
        if sep and not tail.endswith("s"):
            # Reflected back into a crystal: its field is not transverse and its power is not
            # |E|², so the coherent sum below does not apply; left as branches.
            return None
        return "".join("*" if act else ch for ch, act in zip(head, active)) + sep + tail

    parent = {label: label for label in labels}

    def root(label):
        while parent[label] != label:
            label = parent[label]
        return label

    for i, a in enumerate(labels):
        for b in labels[i + 1:]:
            if key(a) is None or key(a) != key(b):
                continue
            if (_linked(beams[a], beams[b], pair)
                    and _circular_somewhere(beams[a], beams[b], prism, pair)):
                parent[root(b)] = root(a)
    groups = {}
    for label in labels:
        groups.setdefault(root(label), []).append(label)
    return tuple(tuple(sorted(g)) for g in groups.values())


def _unit(v):
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


def _combine(beams, pair):
    """One :class:`~prismdesign.optics.Beam` from the branches of one output beam."""
    power = [b.power.sum(axis=0) if pair else b.power for b in beams]
    total = sum(power)
    # Power weights per ray; equal weights where the group carries no power at all.
    weights = [np.where(total > 0, p / np.where(total > 0, total, 1.0), 1.0 / len(beams))
               for p in power]

    def mean(vectors):
        w = [np.asarray(wt)[None] if pair else wt for wt in weights]
        return sum(wi[..., None] * v for wi, v in zip(w, vectors))

    # The common point and the transverse basis of the coherent sum must not depend on the
    # input polarisation (else the sum is not linear in the input field and no Jones matrix
    # describes it): plain means. The reported ray direction is the power-weighted mean.
    point = sum(b.positions_mm[-1] for b in beams) / len(beams)
    normal = _unit(sum(b.wave_normals[-1] for b in beams))
    direction = _unit(mean([b.ray_directions[-1] for b in beams]))
    wavelength = beams[0].wavelength_um

    def phase_mm(b):
        k = b.wave_normals[-1] * b.indices[-1][..., None]
        return b.optical_path_mm + dot(k, point - b.positions_mm[-1])

    reference = phase_mm(beams[0])
    field = 0
    for b in beams:
        transverse = b.field - dot(b.field, normal)[..., None] * normal
        shift = np.exp(2j * np.pi * (phase_mm(b) - reference) * 1e3 / wavelength)
        field = field + transverse * shift[..., None]
    flags = beams[0].flags
    for b in beams[1:]:
        flags = flags | b.flags
    positions = np.concatenate([beams[0].positions_mm[:-1], point[None]], axis=0)
    normals = np.concatenate([beams[0].wave_normals[:-1], normal[None]], axis=0)
    rays = np.concatenate([beams[0].ray_directions[:-1], direction[None]], axis=0)
    return Beam(label="+".join(b.label for b in beams), positions_mm=positions,
                wave_normals=normals, ray_directions=rays, indices=beams[0].indices,
                field=field, power=np.sum(np.abs(field) ** 2, axis=-1),
                optical_path_mm=reference, flags=flags, wavelength_um=wavelength,
                reflected=None)


def _combined(beams, groups, pair):
    out = {}
    for group in groups:
        if len(group) == 1:
            out[group[0]] = beams[group[0]]
        else:
            beam = _combine([beams[label] for label in group], pair)
            out[beam.label] = beam
    return out


def combine_groups(result, groups, reflected_groups=None):
    """A trace whose beams are the output beams `groups` (from :func:`group_labels`).

    A group of one is its branch, unchanged. `reflected_groups` groups the first reflections
    likewise (default: each on its own).
    """
    reflected = (result.reflected if reflected_groups is None
                 else _combined(result.reflected, reflected_groups, result.incoherent_pair))
    return TraceResult(_combined(result.beams, groups, result.incoherent_pair), reflected,
                       result.incoherent_pair, getattr(result, "layer_treatments", None))


def output_beam_trace(result, prism):
    """`result` with its branches (transmitted and first reflections) grouped into output
    beams; the same object when nothing groups (always, for a prism without an active piece).
    """
    groups = group_labels(result, prism)
    reflected_groups = group_labels(result, prism, result.reflected)
    if all(len(g) == 1 for g in groups + reflected_groups):
        return result
    return combine_groups(result, groups, reflected_groups)


def with_members(result, prism):
    """`result` with its output beams and, besides them, the raw branches they add (so that
    a figure defined per branch, such as a total-reflection margin, can be taken over the
    members of a beam: :func:`members`)."""
    grouped = output_beam_trace(result, prism)
    if grouped is result:
        return result
    return TraceResult({**result.beams, **grouped.beams}, grouped.reflected,
                       result.incoherent_pair, getattr(result, "layer_treatments", None))


def trace_output_beams(prism, *args, **options):
    """:meth:`Prism.trace <prismdesign.prisms.Prism.trace>`, its branches grouped into output
    beams (:func:`output_beam_trace`).

    With an active piece every branch is kept (``power_threshold=0``): pruning one half of an
    output beam (circularly polarised input feeds one circular wave only) would change the
    beam's label with the input.
    """
    if has_active_piece(prism):
        options["power_threshold"] = 0.0
    return output_beam_trace(prism.trace(*args, **options), prism)


def group_spread_rad(result, group):
    """Largest angle (rad) between the exit ray directions of a group's members, per ray.

    Parameters
    ----------
    result : TraceResult
        The trace before grouping.
    group : sequence of str
        Member labels (or an output-beam label with "+").

    Returns
    -------
    ndarray
        0 for a single branch.
    """
    labels = members(group) if isinstance(group, str) else tuple(group)
    pair = result.incoherent_pair
    dirs = [_geometry(result.beams[label], pair)[1] for label in labels]
    spread = np.zeros(np.shape(dirs[0])[:-1])
    for i, a in enumerate(dirs):
        for b in dirs[i + 1:]:
            spread = np.maximum(spread, np.arccos(np.clip(dot(a, b), -1.0, 1.0)))
    return spread

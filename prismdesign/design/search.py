"""Every allowed prism type in every suitable crystal, solved for one requirement and ranked.

Crystals come from the library (uniaxial ones whose data cover the band), or the
requirement's list. Two-crystal types try the crystal pairs whose thin-prism estimate
(:func:`~prismdesign.design.solve.thin_prism_pair`) holds the split flattest, and solve the
best few exactly. Designs that meet every requirement come first (shortest prism first, lengths
within 0.1 mm counting as equal; then the higher transmission; then the most room on the
active requirement); then the others, closest first, each with the
requirement it misses.
"""
from dataclasses import dataclass
import itertools
import json
import warnings

import numpy as np

from ..materials import DispersionRangeWarning, material as library_material, materials
from .families import FAMILIES
from .requirement import Requirement
from .solve import Design, solve, thin_prism_pair

__all__ = ["Ranking", "search", "suitable_crystals"]

#: How many crystal pairs (best thin-prism estimate first) two-crystal types solve exactly.
PAIRS_SOLVED = 3


def suitable_crystals(requirement):
    """Library crystals (uniaxial) whose dispersion data cover the requirement's wavelengths.

    Returns
    -------
    list of str
        Canonical names, in library order; the requirement's own list when it gives one.
    """
    lam = requirement.wavelengths_um
    if requirement.crystals is not None:
        names = []
        for name in requirement.crystals:
            m = library_material(name)
            if getattr(m, "kind", None) != "uniaxial":
                raise ValueError(f"crystals must name uniaxial crystals, got {name!r} "
                                 f"({getattr(m, 'kind', 'unknown')})")
            names.append(m.name)
        return names
    names = []
    for name in materials():
        m = library_material(name)
        if getattr(m, "kind", None) != "uniaxial":
            continue
        low, high = m.validity_um
        if low <= lam.min() and lam.max() <= high:
            names.append(m.name)
    return names


@dataclass(frozen=True)
class Ranking:
    """Solved designs for one requirement, best first.

    Attributes
    ----------
    requirement : Requirement
    designs : tuple of Design
    skipped : tuple of str
        What was not tried and why (e.g. crystal data not covering the band).
    """

    requirement: Requirement
    designs: tuple
    skipped: tuple = ()

    @property
    def best(self):
        return self.designs[0] if self.designs else None

    def rows(self):
        """One dict per design: the columns of :meth:`text` and of the JSON output."""
        rows = []
        for rank, d in enumerate(self.designs, 1):
            a = d.assessment
            figs = a.figures if a is not None else None
            trans = (_lowest_transmittance(a) if figs is not None and figs.transmittance
                     else float("nan"))
            active = a.active if a is not None else None
            rows.append(dict(
                rank=rank, prism_type=d.prism_type,
                crystal="+".join(d.crystal) if isinstance(d.crystal, tuple) else d.crystal,
                parameters={k: round(v, 6) for k, v in d.parameters.items()},
                meets=d.meets,
                length_mm=None if figs is None else round(figs.length_mm, 3),
                transmission=None if not np.isfinite(trans) else round(trans, 4),
                leakage=None if figs is None or not np.isfinite(np.nanmax(figs.leakage))
                else float(f"{np.nanmax(figs.leakage):.3g}"),
                active=None if active is None else active.name,
                margins={m.name: (None if not np.isfinite(m.margin) else float(f"{m.margin:.4g}"))
                         for m in (a.margins if a is not None else ())},
                failing=[m.text() for m in (a.failed if a is not None else ())],
                evaluations=d.evaluations, message=d.message))
        return rows

    def text(self):
        """The ranked table as plain text, with the requirement and what was skipped."""
        req = self.requirement
        out = ["Requirement: " + "; ".join(req.describe())]
        header = (f"{'#':>2}  {'type':<22}{'crystal':<27}{'parameters':<56}{'meets':<6}"
                  f"{'length mm':>10}{'T min':>8}  limited by / misses")
        out += [header, "-" * len(header)]
        for row in self.rows():
            params = ", ".join(f"{k}={v:.4f}" for k, v in row["parameters"].items())
            length = "" if row["length_mm"] is None else f"{row['length_mm']:.2f}"
            trans = "" if row["transmission"] is None else f"{row['transmission']:.3f}"
            if row["meets"]:
                note = f"{row['active']} (margin {row['margins'].get(row['active'])})" \
                    if row["active"] else ""
            else:
                note = "; ".join(row["failing"]) or row["message"]
            out.append(f"{row['rank']:>2}  {row['prism_type']:<22}{row['crystal']:<27}"
                       f"{params:<56}{'yes' if row['meets'] else 'no':<6}{length:>10}"
                       f"{trans:>8}  {note}")
        if not any(d.meets for d in self.designs):
            out.append("No design meets every requirement; the closest is first.")
        out += [f"skipped: {s}" for s in self.skipped]
        return "\n".join(out)

    def to_json(self, caution=None):
        """The ranking as a JSON string (requirement, rows, skipped, and a caution if given)."""
        req = {k: v for k, v in vars(self.requirement).items() if v is not None}
        data = dict(requirement=req, designs=self.rows(), skipped=list(self.skipped))
        if caution:
            data["laser_caution"] = caution
        return json.dumps(data,
                          indent=2, default=lambda v: list(v) if isinstance(v, tuple) else str(v))


#: Lengths that differ by less than this (mm) count as equal when ranking designs that meet
#: the requirement; the higher transmission then ranks first (a shop cannot hold a prism's
#: length to better than ~0.1 mm anyway; common practice, no source).
LENGTH_STEP_MM = 0.1


def _lowest_transmittance(assessment):
    values = [np.nanmin(v[:, 0]) for v in assessment.figures.transmittance.values()]
    return float(min(values)) if values else 0.0


def _rank_key(design):
    a = design.assessment
    if design.meets:
        return (0, round(a.figures.length_mm / LENGTH_STEP_MM), -_lowest_transmittance(a),
                -a.active.relative if a.active else 0.0)
    if a is None:
        return (2, np.inf, 0.0)
    worst = min((m.relative for m in a.margins), default=-np.inf)
    return (1, -worst if np.isfinite(worst) else np.inf, len(a.failed))


def search(requirement, *, progress=None):
    """Solve every allowed prism type in every suitable crystal and rank the designs.

    Parameters
    ----------
    requirement : Requirement
    progress : callable, optional
        Called as ``progress(done, total, label)`` after each solve (e.g. a terminal bar).

    Returns
    -------
    Ranking

    Raises
    ------
    ValueError
        One line when no prism type or no crystal is allowed for this kind of target.
    """
    if not isinstance(requirement, Requirement):
        raise ValueError(f"requirement must be a Requirement, got {type(requirement).__name__}")
    kind = requirement.target_kind
    allowed = requirement.prism_types or tuple(FAMILIES)
    unknown = [t for t in allowed if t not in FAMILIES]
    if unknown:
        raise ValueError(f"prism_types must be among {', '.join(FAMILIES)}, got {unknown[0]!r}")
    types = [t for t in allowed if kind in FAMILIES[t].targets
             and (t != "nomarski" or requirement.wants_localisation)]
    if not types:
        raise ValueError(f"none of the allowed prism types ({', '.join(allowed)}) can meet a "
                         f"{kind} target")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DispersionRangeWarning)
        crystals = suitable_crystals(requirement)
    if not crystals:
        raise ValueError(f"no crystal in the library has dispersion data covering "
                         f"{requirement.wavelengths_um.min():g}–{requirement.wavelengths_um.max():g}"
                         f" µm; give crystals explicitly or narrow the band")
    jobs, skipped = [], []
    for t in types:
        if FAMILIES[t].crystals == 1:
            jobs += [(t, c) for c in crystals]
        else:
            jobs += [(t, pair) for pair in _best_pairs(crystals, requirement, skipped)]
    designs = []
    for i, (t, crystal) in enumerate(jobs, 1):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DispersionRangeWarning)
            try:
                designs.append(solve(t, crystal, requirement))
            except ValueError as error:
                skipped.append(f"{t} in {crystal}: {error}")
        if progress is not None:
            progress(i, len(jobs), f"{t} {crystal}")
    designs.sort(key=_rank_key)
    return Ranking(requirement, tuple(designs), tuple(skipped))


def _best_pairs(crystals, requirement, skipped):
    """Crystal pairs whose thin-prism two-Wollaston estimate is flattest over the band."""
    if requirement.target_kind != "split":
        skipped.append("two_crystal_wollaston: only for a split target")
        return []
    if len(requirement.wavelengths_um) < 2:
        skipped.append("two_crystal_wollaston: a flat split needs more than one wavelength")
        return []
    scored = []
    for a, b in itertools.permutations(crystals, 2):
        try:
            t1, t2, spread = thin_prism_pair(a, b, requirement.wavelengths_um,
                                             requirement.split_deg)
        except (ValueError, np.linalg.LinAlgError):
            continue
        # Only buildable wedges (positive first wedge, both below 60°).
        if 0 < t1 < 60 and abs(t2) < 60:
            scored.append((spread, max(t1, abs(t2)), a, b))
    scored.sort()
    return [(a, b) for _, _, a, b in scored[:PAIRS_SOLVED]]

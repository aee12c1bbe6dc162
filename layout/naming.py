"""Name the pulleys of a drawing: labels, block attributes, the spec, automatic ids.

The order is the contract's: a label inside a circle (TEXT/MTEXT whose first word is an
id, optionally followed by ``key=value`` words, or a block's ``ID`` attribute), then the
spec's ``at = [x, y]``, then automatic ids ``P1``, ``P2``, ... for wrapped circles in
drawing order, and last the spec's pulleys named by id. Work is in drawing units and
circle indices; :mod:`layout.route` turns the names into pulley records.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from physics.findings import Finding, Severity

from .errors import FatalInput
from .read import Drawing, fmt_point as _fmt
from .recognize import Chain, Crowded, Recognition, Tolerances, box_candidates, layer_matches
from .spec import PULLEY_KEYS, PulleySpec, Spec, parse_label_words, pulley_values, valid_id

__all__ = ["Names", "texts_in_circles", "named_circles", "name_pulleys", "SLOT_MAX_DIAMETER_M", "MAX_LABEL_CHARS",
           "not_a_label"]


#: A slot's circles are under this diameter (design, "Geometry rules").
SLOT_MAX_DIAMETER_M = 0.020
#: Longest text read as a pulley label (characters): an id and a few ``key=value`` words are far
#: shorter; a longer text is a note, not a label, and is never split into words.
MAX_LABEL_CHARS = 200
#: Most (text, circle) pairs of a label-like text's anchor in a circle's bounding box that are
#: looked at, or :data:`TEXT_CIRCLE_PAIRS_PER_TEXT` per such text when that is more.
MAX_TEXT_CIRCLE_PAIRS = 2_000_000
#: Circles allowed per label-like text (above the floor).
TEXT_CIRCLE_PAIRS_PER_TEXT = 20
#: A metric thread callout ("M8", "M10x1.25") written in a hole: not a pulley label (common practice).
_THREAD = re.compile(r"^M\d+(\.\d+)?([xX]\d+(\.\d+)?)?$")






@dataclass(slots=True)
class _Label:
    id: str
    values: dict[str, Any]
    circle: int
    source: str
    kind: str                          # "label" or "attrib"
    has_keys: bool


@dataclass(slots=True)
class Names:
    """Pulley names by circle: ``names[circle] = (id, named_by, values)``; ``by_id`` maps a
    lower-case id to its circle; ``spec_at`` the spec pulleys found by ``at``."""

    names: dict[int, tuple[str, str, dict[str, Any]]] = field(default_factory=dict)
    by_id: dict[str, int] = field(default_factory=dict)
    spec_at: dict[str, int] = field(default_factory=dict)


# --------------------------------------------------------------------------- labels


def _containing(d: Drawing, x: float, y: float, candidates: np.ndarray | None = None) -> list[int]:
    c = d.circles
    if candidates is None:
        inside = np.flatnonzero(np.hypot(c.x - x, c.y - y) < c.r)
    else:
        inside = candidates[np.hypot(c.x[candidates] - x, c.y[candidates] - y) < c.r[candidates]]
    return sorted(inside.tolist(), key=lambda i: c.r[i])


def texts_in_circles(d: Drawing) -> dict[int, list[int]]:
    """For each text that may be a label, the circles whose bounding boxes hold its anchor.

    Only texts written like labels are looked at (an id, then ``key=value`` words: a label,
    or one :func:`not_a_label` explains). The anchors are queried in blocks and the pairs
    counted (:data:`MAX_TEXT_CIRCLE_PAIRS`), so a sheet of texts under many large circles is
    refused with one line instead of listing every pair.

    Raises
    ------
    FatalInput
        When the texts fall in circles more often than the limit.
    """
    t, c = d.texts, d.circles
    hits: dict[int, list[int]] = {}
    keep = np.asarray([k for k, s in enumerate(t.text) if _label_like(s)], dtype=np.int64)
    if not keep.size or not len(c):
        return hits
    from shapely import STRtree, box

    tree = STRtree(box(c.x - c.r, c.y - c.r, c.x + c.r, c.y + c.r))
    limit = max(MAX_TEXT_CIRCLE_PAIRS, TEXT_CIRCLE_PAIRS_PER_TEXT * keep.size)
    try:
        for ti, ci in box_candidates(tree, np.column_stack([t.x[keep], t.y[keep]]), limit, _CrowdedTexts):
            for a, b in zip(keep[ti].tolist(), ci.tolist()):
                hits.setdefault(a, []).append(b)
    except Crowded as err:
        raise FatalInput(err.line(d.path)) from err
    return hits


class _CrowdedTexts(Crowded):
    """Label-like texts fall in circles' boxes more often than :func:`texts_in_circles` looks."""

    SAYS = ("{path}: label-like texts fall within circles {pairs} times or more, over the {limit} looked "
            "at (layout.naming.MAX_TEXT_CIRCLE_PAIRS): the drawing holds many large circles over many "
            "texts; check the drive's part of it on its own")


def _label_like(text: str) -> bool:
    """Whether ``text`` is a label, or written like one (see :func:`not_a_label`)."""
    return _label_words(text) is not None or not_a_label(text) is not None


def _label_words(text: str) -> list[str] | None:
    """The words of a pulley label (an id, then ``key=value`` words), or None for prose."""
    if len(text) > MAX_LABEL_CHARS:
        return None                    # a note or a damaged text, not a label: never split
    words = text.split()
    if not words or not valid_id(words[0]) or any("=" not in w for w in words[1:]):
        return None                    # prose, a callout, a section mark: not a label
    return words


def not_a_label(text: str) -> str | None:
    """Why a text written like a label (an id then ``key=value`` words) is not one, or None.

    A text counts as written like a label when a word after the first holds ``=``; it is not
    one when its first word is no ASCII id, or another word after it has no ``=``. Prose,
    callouts and texts longer than :data:`MAX_LABEL_CHARS` give None (they are not labels at all).

    >>> not_a_label("P1 d=100 driver")
    "word 'driver' is not key=value"
    >>> not_a_label("Pulley for the fan") is None
    True
    """
    if len(text) > MAX_LABEL_CHARS:
        return None
    words = text.split()
    if len(words) < 2 or not any("=" in w for w in words[1:]):
        return None
    if not valid_id(words[0]):
        kind = ("is not ASCII" if not words[0].isascii() else
                "does not start with a letter" if not words[0][0].isalpha() else "is not a valid id")
        return (f"id {words[0]!r} {kind}; expected a letter then letters, digits, '_', '.' or '-' "
                f"(e.g. 'P1')")
    bare = [w for w in words[1:] if "=" not in w]
    if bare:
        return f"word {bare[0]!r} is not key=value"
    return None


def _ignored_label(d: Drawing, k: int, cands: list[int], alias: np.ndarray) -> str | None:
    """The message for text ``k`` in a circle, written like a label but not one, or None."""
    t = d.texts
    why = not_a_label(t.text[k])
    if why is None or not _containing(d, float(t.x[k]), float(t.y[k]), np.asarray(cands)):
        return None
    keys = [w.split("=", 1)[0] for w in t.text[k].split()[1:] if "=" in w]
    return (f"label {t.text[k]!r} (TEXT #{t.handle[k]} on {t.layer[k]} at {_fmt((t.x[k], t.y[k]))}): "
            f"{why}; the text and its keys ({', '.join(keys)}) are ignored")


def _text_labels(d: Drawing, hits: dict[int, list[int]], wrapped: set[int], alias: np.ndarray,
                 problems: list[str], findings: list[Finding]) -> list[_Label]:
    t = d.texts
    labels: list[_Label] = []
    for k, cands in sorted(hits.items()):
        words = _label_words(t.text[k])
        if words is None:
            ignored = _ignored_label(d, k, cands, alias)
            if ignored is not None:
                findings.append(Finding(Severity.NOTE, "label-ignored", ignored,
                                        at=(float(t.x[k]), float(t.y[k]))))
            continue
        inside = [int(alias[i]) for i in _containing(d, float(t.x[k]), float(t.y[k]), np.asarray(cands))]
        if not inside:
            continue
        wrapped_in = [i for i in inside if i in wrapped]
        where = f"label {t.text[k]!r} (TEXT #{t.handle[k]} on {t.layer[k]} at {_fmt((t.x[k], t.y[k]))})"
        has_keys = len(words) > 1
        values = parse_label_words(words[1:], where, problems) if has_keys else {}
        circle = wrapped_in[0] if wrapped_in else inside[0]
        labels.append(_Label(words[0], values, circle, where, "label", has_keys))
    return labels


def _attrib_labels(d: Drawing, wrapped: set[int], alias: np.ndarray, problems: list[str]) -> list[_Label]:
    c = d.circles
    labels: list[_Label] = []
    by_owner: dict[str, list[int]] = {}
    if d.attribs:
        for i, o in enumerate(c.owner):
            if o:
                by_owner.setdefault(o, []).append(i)
    for a in d.attribs:
        owned = np.asarray(by_owner.get(a.handle, []), dtype=np.int64)
        if not owned.size:
            continue
        owned_alias = sorted({int(alias[i]) for i in owned}, key=lambda i: c.r[i])
        wrapped_in = [i for i in owned_alias if i in wrapped]
        where = f"attributes of block '{a.block}' (INSERT #{a.handle} at {_fmt((a.x, a.y))})"
        pid = a.tags.get("ID", "").strip()
        items = {k.lower(): v for k, v in a.tags.items() if k.lower() in PULLEY_KEYS and v.strip()}
        if not pid and not items:
            continue
        if pid and not valid_id(pid):
            problems.append(f"{where}: ID = {pid!r}: expected an id starting with a letter, e.g. 'P1'")
            continue
        values = pulley_values(items, where, problems, from_label=True)
        pool = wrapped_in or owned_alias
        containing = [i for i in pool if math.hypot(c.x[i] - a.x, c.y[i] - a.y) < c.r[i]]
        circle = (containing or pool)[0]
        labels.append(_Label(pid, values, circle, where, "attrib", bool(items)))
    return labels


def named_circles(d: Drawing, spec: Spec, hits: dict[int, list[int]]) -> set[int]:
    """Circles a label, a block attribute or the spec's ``at`` names as pulleys: evidence that a
    path touching them is meant as a belt. A bare thread callout ("M8") in a hole is not."""
    out: set[int] = set()
    t, c = d.texts, d.circles
    spec_ids = set(spec.pulleys)
    for k, cands in hits.items():
        words = _label_words(t.text[k])
        if words is None or (len(words) == 1 and _THREAD.match(words[0]) and words[0].lower() not in spec_ids):
            continue
        out.update(_containing(d, float(t.x[k]), float(t.y[k]), np.asarray(cands)))
    owners = {a.handle for a in d.attribs if a.tags.get("ID", "").strip()}
    out.update(i for i, o in enumerate(c.owner) if o and o in owners)
    for ps in spec.pulleys.values():
        if ps.at is not None and len(c):
            x, y = ps.at
            lim = np.maximum(1e-3 * c.r, 1e-9 * max(abs(x), abs(y)))
            out.update(np.flatnonzero(np.hypot(c.x - x, c.y - y) <= lim).tolist())
    return out


# --------------------------------------------------------------------------- names


def name_pulleys(d: Drawing, spec: Spec, rec: Recognition, hits: dict[int, list[int]], factor: float,
                 tol: Tolerances, findings: list[Finding], problems: list[str]) -> Names:
    """Name every wrapped circle (and every labelled or spec-placed one).

    Slot-like chains are taken out of ``rec.chains`` here (a ``possible-slot`` note), since
    whether a circle is named decides it. Problems (duplicate ids, spec ids that match
    nothing) are appended to ``problems``; the caller raises them together.
    """
    wrapped = {w.circle for ch in rec.chains for w in ch.wraps}
    names = Names()
    labels = (_text_labels(d, hits, wrapped, rec.circle_alias, problems, findings)
              + _attrib_labels(d, wrapped, rec.circle_alias, problems))
    spec_ids = set(spec.pulleys) | {p.lower() for r in spec.routes.values() for p in r.pulleys}
    for lab in labels:
        _apply_label(names, lab, wrapped, spec_ids, d, findings, problems)
    for key, ps in spec.pulleys.items():
        if ps.at is not None:
            _apply_spec_at(names, key, ps, d, rec.circle_alias, wrapped, factor, findings, problems)
    _drop_slots(rec, names, d, factor, tol, spec, findings)
    _auto_ids(names, {w.circle for ch in rec.chains for w in ch.wraps}, d)
    for key, ps in spec.pulleys.items():
        if key not in names.spec_at:
            _apply_spec_id(names, key, ps, d, findings, problems)
    for r in spec.routes.values():
        for pid in r.pulleys:
            if pid.lower() not in names.by_id:
                problems.append(f"{spec.path}: route.{r.loop}: no pulley {pid!r} in the drawing "
                                f"(label its circle, or give [pulley.{pid}] at = [x, y])")
    return names


def _apply_label(names: Names, lab: _Label, wrapped: set[int], spec_ids: set[str], d: Drawing,
                 findings: list[Finding], problems: list[str]) -> None:
    circ = d.circles
    if not lab.id:
        if lab.circle in names.names:
            names.names[lab.circle][2].update(lab.values)
        else:
            names.names[lab.circle] = ("", lab.kind, dict(lab.values))
        return
    if lab.circle not in wrapped and not lab.has_keys and lab.id.lower() not in spec_ids:
        return                          # "M8" in a bolt hole, a callout in an unwrapped circle
    low = lab.id.lower()
    if lab.circle in names.names and names.names[lab.circle][0]:
        prev = names.names[lab.circle][0]
        if prev.lower() != low:
            findings.append(Finding(Severity.WARNING, "label-conflict",
                                    f"{lab.source} names a pulley already labelled {prev!r}; ignored",
                                    at=circ.center(lab.circle), refs=(prev,)))
        return
    if low in names.by_id and names.by_id[low] != lab.circle:
        other = names.by_id[low]
        problems.append(f"{lab.source}: id {lab.id!r} already names the circle at "
                        f"{_fmt((circ.x[other], circ.y[other]))}; ids must be unique")
        return
    values = dict(names.names[lab.circle][2]) if lab.circle in names.names else {}
    values.update(lab.values)
    names.names[lab.circle] = (lab.id, lab.kind, values)
    names.by_id[low] = lab.circle


def _apply_spec_at(names: Names, key: str, ps: PulleySpec, d: Drawing, alias: np.ndarray, wrapped: set[int],
                   factor: float, findings: list[Finding], problems: list[str]) -> None:
    circ = d.circles
    circle = _find_at(d, alias, wrapped, ps, factor, problems)
    if circle is None:
        return
    if key in names.by_id and names.by_id[key] != circle:
        problems.append(f"{ps.source}: at = {list(ps.at)} finds the circle at "
                        f"{_fmt((circ.x[circle], circ.y[circle]))}, but a label gives id {ps.id!r} "
                        f"to another circle")
        return
    old = names.names.get(circle)
    if old is not None and old[0] and old[0].lower() != key:
        findings.append(Finding(Severity.NOTE, "label-overridden",
                                f"{ps.source} renames the pulley labelled {old[0]!r} to {ps.id!r}",
                                at=circ.center(circle), refs=(ps.id,)))
        names.by_id.pop(old[0].lower(), None)
    names.names[circle] = (ps.id, "spec", dict(old[2]) if old is not None else {})
    names.by_id[key] = circle
    names.spec_at[key] = circle


def _drop_slots(rec: Recognition, names: Names, d: Drawing, factor: float, tol: Tolerances, spec: Spec,
                findings: list[Finding]) -> None:
    """Two small equal circles joined only by tangent lines: a slot, not a drive."""
    named = set(names.names) | set(names.spec_at.values()) | {
        names.by_id[p.lower()] for r in spec.routes.values() for p in r.pulleys if p.lower() in names.by_id}
    chains = []
    slots: list[Finding] = []
    for ch in rec.chains:
        slot = _possible_slot(ch, d, factor, tol, spec, named)
        if slot is not None:
            slots.append(slot)
        else:
            chains.append(ch)
    rec.chains = chains
    if len(slots) > 1:                  # one note for a sheet full of slots
        first = slots[0]
        slots = [replace(first, message=f"{len(slots)} pairs of small equal circles joined by tangent lines look "
                                        f"like slots, not belt drives, the first: {first.message}",
                         data={"count": len(slots)})]
    findings.extend(slots)


def _auto_ids(names: Names, wrapped: set[int], d: Drawing) -> None:
    """``P1``, ``P2``, ... for wrapped circles without a name, in drawing order."""
    circ = d.circles
    used = set(names.by_id)
    counter = 0
    for circle in sorted(wrapped, key=lambda c: (int(circ.order[c]), c)):
        if circle in names.names and names.names[circle][0]:
            continue
        while True:
            counter += 1
            cand = f"P{counter}"
            if cand.lower() not in used:
                break
        values = names.names[circle][2] if circle in names.names else {}
        names.names[circle] = (cand, "auto", values)
        names.by_id[cand.lower()] = circle
        used.add(cand.lower())


def _apply_spec_id(names: Names, key: str, ps: PulleySpec, d: Drawing, findings: list[Finding],
                   problems: list[str]) -> None:
    if key not in names.by_id:
        problems.append(f"{ps.source}: no pulley {ps.id!r} in the drawing (give it a label "
                        f"inside its circle, or at = [x, y])")
        return
    circle = names.by_id[key]
    if names.names[circle][1] == "auto":
        findings.append(Finding(Severity.WARNING, "auto-id-named",
                                f"{ps.source} names {ps.id!r}, an automatic id given in drawing "
                                f"order; label the pulley in the drawing so the name cannot move",
                                at=d.circles.center(circle), refs=(ps.id,)))


def _possible_slot(ch: Chain, d: Drawing, factor: float, tol: Tolerances, spec: Spec,
                   named: set[int]) -> Finding | None:
    """A ``possible-slot`` note when ``ch`` looks like a slot outline rather than a belt."""
    if len(ch.wraps) != 2 or any(w.drawn for w in ch.wraps):
        return None
    a, b = ch.wraps[0].circle, ch.wraps[1].circle
    circ = d.circles
    ra, rb = float(circ.r[a]), float(circ.r[b])
    if abs(ra - rb) > tol.join * min(ra, rb) or 2 * ra * factor >= SLOT_MAX_DIAMETER_M:
        return None
    if math.hypot(circ.x[a] - circ.x[b], circ.y[a] - circ.y[b]) >= 2 * (2 * ra):
        return None
    if a in named or b in named:
        return None
    if spec.belt_layers and layer_matches(ch.layer, spec.belt_layers):
        return None
    return Finding(Severity.NOTE, "possible-slot",
                   f"two {2 * ra:.4g}-unit circles at {_fmt(circ.center(a))} and {_fmt(circ.center(b))} joined "
                   f"by tangent lines look like a slot, not a belt drive; label them or name them in the "
                   f"spec if they are pulleys", at=circ.center(a))
def _find_at(d: Drawing, alias: np.ndarray, wrapped: set[int], ps: PulleySpec, factor: float,
             problems: list[str]) -> int | None:
    c = d.circles
    x, y = ps.at  # type: ignore[misc]
    if not len(c):
        problems.append(f"{ps.source}: at = [{x:g}, {y:g}]: the drawing has no circles")
        return None
    dist = np.hypot(c.x - x, c.y - y)
    lim = np.maximum(1e-3 * c.r, 1e-9 * max(abs(x), abs(y)))
    hits = sorted({int(alias[i]) for i in np.flatnonzero(dist <= lim)})
    if ps.diameter is not None and hits:
        # diameter in SI; compare in drawing units via the circle radii ratio
        hits_d = [i for i in hits if abs(2 * c.r[i] - ps.diameter / factor) <= 1e-3 * 2 * c.r[i]]
        if not hits_d:
            problems.append(f"{ps.source}: no circle of diameter {ps.diameter:g} m at [{x:g}, {y:g}]")
            return None
        hits = hits_d
    if not hits:
        near = int(np.argmin(dist))
        problems.append(f"{ps.source}: at = [{x:g}, {y:g}]: no circle centred there (nearest centre "
                        f"{_fmt((c.x[near], c.y[near]))})")
        return None
    if len(hits) > 1:
        w = [i for i in hits if i in wrapped]
        if len(w) == 1:
            return w[0]
        problems.append(f"{ps.source}: at = [{x:g}, {y:g}]: {len(hits)} concentric circles there; add "
                        f"diameter = \"...\" to pick one")
        return None
    return hits[0]

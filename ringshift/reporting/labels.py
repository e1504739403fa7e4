"""Placing text labels on a 2D drawing: clear of bonds, of atom symbols and of each other.

Pure geometry on pixel coordinates (x to the right, y downwards, as in SVG), arrays in and arrays
out; the RDKit drawing in :mod:`ringshift.reporting.structure_drawing` measures its text, calls :func:`place_labels`
and draws the result.

A label is an axis-aligned box of known size that belongs to an anchor point (an atom, or a circuit
centre). Candidate positions lie on rays from the anchor in ``n_directions`` directions, with the
near edge of the box at increasing gaps from the anchor, so the gap is the same whatever the
direction. A candidate is allowed when its box keeps ``bond_clear_px`` from every bond segment,
``box_gap_px`` from every placed label and obstacle box, stays on the canvas and, when it sits far
enough to need a leader line, the leader crosses nothing. Among allowed candidates the one closest to
the anchor and nearest to the preferred direction wins (greedy, most crowded anchor first). When no
candidate is allowed the least bad one is kept and reported in ``Placement.clash``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Placement", "point_segment_distance", "box_segment_distance", "box_box_gap", "place_labels",
           "preferred_direction"]


@dataclass(frozen=True)
class Placement:
    """Where one label went.

    Attributes
    ----------
    box : ndarray, shape (4,)
        ``(x0, y0, x1, y1)`` in pixels, x0 < x1, y0 < y1.
    leader : ndarray or None, shape (2, 2)
        Start and end of a leader line from the anchor to the box (None when the box is close).
    clash : bool
        True when no candidate met every constraint (the least bad one was used).
    """

    box: np.ndarray
    leader: np.ndarray | None
    clash: bool


# ------------------------------------------------------------------------------------------ distances
def _point_box_distance(p: np.ndarray, boxes: np.ndarray) -> np.ndarray:
    """Distance of points p (k, 2) to boxes (k, 4) row by row (0 inside)."""
    dx = np.maximum(np.maximum(boxes[:, 0] - p[:, 0], p[:, 0] - boxes[:, 2]), 0.0)
    dy = np.maximum(np.maximum(boxes[:, 1] - p[:, 1], p[:, 1] - boxes[:, 3]), 0.0)
    return np.hypot(dx, dy)


def point_segment_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance of points p (k, 2) to segments a→b (k, 2) row by row."""
    d = b - a
    L2 = np.einsum("ij,ij->i", d, d)
    t = np.divide(np.einsum("ij,ij->i", p - a, d), L2, out=np.zeros(len(p)), where=L2 > 0)
    foot = a + np.clip(t, 0.0, 1.0)[:, None] * d
    return np.hypot(*(p - foot).T)


def _segments_cross(a, b, c, d) -> np.ndarray:
    """Proper or touching intersection of segments a→b and c→d, row by row (k, 2 each)."""
    def orient(p, q, r):
        return np.sign((q[:, 0] - p[:, 0]) * (r[:, 1] - p[:, 1]) - (q[:, 1] - p[:, 1]) * (r[:, 0] - p[:, 0]))

    o1, o2, o3, o4 = orient(a, b, c), orient(a, b, d), orient(c, d, a), orient(c, d, b)
    return (o1 * o2 <= 0) & (o3 * o4 <= 0) & ~((o1 == 0) & (o2 == 0))


def box_segment_distance(boxes, segments) -> np.ndarray:
    """Smallest distance between each box and each segment, pixels (0 when they touch or cross).

    Parameters
    ----------
    boxes : array_like, shape (n, 4)
        ``(x0, y0, x1, y1)``.
    segments : array_like, shape (m, 2, 2)
        End points.

    Returns
    -------
    ndarray, shape (n, m)
    """
    B = np.asarray(boxes, dtype=float).reshape(-1, 4)
    S = np.asarray(segments, dtype=float).reshape(-1, 2, 2)
    n, m = len(B), len(S)
    if n == 0 or m == 0:
        return np.zeros((n, m))
    Bi = np.repeat(B, m, axis=0)
    a = np.tile(S[:, 0], (n, 1))
    b = np.tile(S[:, 1], (n, 1))
    corners = [Bi[:, [0, 1]], Bi[:, [2, 1]], Bi[:, [2, 3]], Bi[:, [0, 3]]]
    d = np.minimum(_point_box_distance(a, Bi), _point_box_distance(b, Bi))
    for c in corners:
        d = np.minimum(d, point_segment_distance(c, a, b))
    for k in range(4):  # a segment passing through the box without an end inside it
        hit = _segments_cross(a, b, corners[k], corners[(k + 1) % 4])
        d = np.where(hit, 0.0, d)
    return d.reshape(n, m)


def box_box_gap(boxes_a, boxes_b) -> np.ndarray:
    """Gap between boxes (n, 4) and boxes (m, 4), pixels: Euclidean distance, negative overlap depth if they overlap.

    Returns
    -------
    ndarray, shape (n, m)
    """
    A = np.asarray(boxes_a, dtype=float).reshape(-1, 1, 4)
    B = np.asarray(boxes_b, dtype=float).reshape(1, -1, 4)
    dx = np.maximum(A[..., 0] - B[..., 2], B[..., 0] - A[..., 2])
    dy = np.maximum(A[..., 1] - B[..., 3], B[..., 1] - A[..., 3])
    outside = np.hypot(np.maximum(dx, 0.0), np.maximum(dy, 0.0))
    return np.where((dx < 0) & (dy < 0), np.maximum(dx, dy), outside)


def preferred_direction(anchor, neighbours) -> np.ndarray:
    """Unit vector pointing away from the bonds at ``anchor`` (zero vector when they cancel or there are none).

    Parameters
    ----------
    anchor : array_like, shape (2,)
    neighbours : array_like, shape (k, 2)
        Positions of the bonded atoms.
    """
    a = np.asarray(anchor, dtype=float)
    nb = np.asarray(neighbours, dtype=float).reshape(-1, 2)
    if len(nb) == 0:
        return np.zeros(2)
    u = nb - a
    u = u / np.maximum(np.linalg.norm(u, axis=1, keepdims=True), 1e-9)
    s = -u.sum(axis=0)
    n = np.linalg.norm(s)
    if n < 1e-6:  # a straight chain through the anchor: go sideways
        return np.array([-u[0, 1], u[0, 0]]) if len(nb) == 2 else np.zeros(2)
    return s / n


# ------------------------------------------------------------------------------------------ placement
def _candidates(anchor, size, n_directions, gaps, pref, start_at_anchor):
    ang = np.arange(n_directions) * 2 * np.pi / n_directions
    u = np.column_stack([np.cos(ang), np.sin(ang)])
    w2, h2 = size[0] / 2.0, size[1] / 2.0
    support = np.abs(u[:, 0]) * w2 + np.abs(u[:, 1]) * h2  # centre-to-edge distance along u
    rows = []
    if start_at_anchor:
        rows.append((anchor[0], anchor[1], 0.0, 1.0))
    for g in gaps:
        c = anchor + u * (g + support)[:, None]
        align = u @ pref if np.any(pref) else np.zeros(len(u))
        rows.extend(zip(c[:, 0], c[:, 1], np.full(len(u), g), align))
    cand = np.array(rows)
    boxes = np.column_stack([cand[:, 0] - w2, cand[:, 1] - h2, cand[:, 0] + w2, cand[:, 1] + h2])
    return boxes, cand[:, 2], cand[:, 3]


def place_labels(anchors, sizes, segments, *, obstacles=(), canvas=(0.0, 0.0, np.inf, np.inf),
                 preferred=None, start_at_anchor=None, incident=None, bond_clear_px: float = 5.0,
                 box_gap_px: float = 4.0, gaps_px=(3.0, 6.0, 10.0, 15.0, 21.0, 28.0, 36.0, 46.0, 58.0),
                 leader_after_px: float = 16.0, n_directions: int = 32, soft_segments=None,
                 max_gap_px=None, order=None) -> list[Placement]:
    """Place labels one by one, clear of bonds, obstacles and each other.

    Parameters
    ----------
    anchors : array_like, shape (n, 2)
        Pixel point each label belongs to.
    sizes : array_like, shape (n, 2)
        Width and height of each label box, pixels.
    segments : array_like, shape (m, 2, 2)
        Bond lines to keep ``bond_clear_px`` away from.
    obstacles : array_like, shape (k, 4)
        Fixed boxes (atom symbols, a legend) to keep ``box_gap_px`` away from.
    canvas : (x0, y0, x1, y1)
        Boxes stay inside.
    preferred : array_like, shape (n, 2), optional
        Preferred direction from each anchor (unit or zero vectors).
    start_at_anchor : sequence of bool, optional
        Also try the box centred on the anchor (circuit labels at a ring centre).
    incident : sequence of sequence of int, optional
        Segment indices that end at each anchor: a leader line may start on them.
    soft_segments : array_like, shape (s, 2, 2), optional
        Lines a label should rather not cover (highlight bands); a cost, not a constraint.
    max_gap_px : sequence of float, optional
        Farthest gap tried for each label (a circuit name stays inside its ring); no limit by default.
    order : sequence of int, optional
        Placement order (default: input order).

    Returns
    -------
    list of Placement, in input order.
    """
    A = np.asarray(anchors, dtype=float).reshape(-1, 2)
    Z = np.asarray(sizes, dtype=float).reshape(-1, 2)
    S = np.asarray(segments, dtype=float).reshape(-1, 2, 2)
    obst = np.asarray(obstacles, dtype=float).reshape(-1, 4)
    soft = np.zeros((0, 2, 2)) if soft_segments is None else np.asarray(soft_segments, dtype=float).reshape(-1, 2, 2)
    n = len(A)
    pref = np.zeros((n, 2)) if preferred is None else np.asarray(preferred, dtype=float).reshape(n, 2)
    at_anchor = [False] * n if start_at_anchor is None else list(start_at_anchor)
    inc = [()] * n if incident is None else [tuple(x) for x in incident]
    far = np.full(n, np.inf) if max_gap_px is None else np.asarray(max_gap_px, dtype=float).reshape(n)
    placed: list[np.ndarray] = []
    leaders: list[np.ndarray] = []
    out: list[Placement | None] = [None] * n
    x0, y0, x1, y1 = canvas
    unit = max(float(np.median(np.linalg.norm(S[:, 1] - S[:, 0], axis=1))) if len(S) else 40.0, 1.0)
    for i in (range(n) if order is None else order):
        boxes, gap, align = _candidates(A[i], Z[i], n_directions, [g for g in gaps_px if g <= far[i]] or gaps_px[:1],
                                        pref[i], at_anchor[i])
        # violations (pixels short of each requirement); 0 means allowed
        bad = np.zeros(len(boxes))
        if len(S):
            bad += np.maximum(bond_clear_px - box_segment_distance(boxes, S).min(axis=1), 0.0)
        others = np.vstack([obst, *placed]) if (len(obst) or placed) else np.zeros((0, 4))
        if len(others):
            bad += np.maximum(box_gap_px - box_box_gap(boxes, others).min(axis=1), 0.0)
        if leaders:
            bad += np.maximum(box_gap_px - box_segment_distance(boxes, np.array(leaders)).min(axis=1), 0.0)
        bad += np.maximum(x0 - boxes[:, 0], 0) + np.maximum(boxes[:, 2] - x1, 0)
        bad += np.maximum(y0 - boxes[:, 1], 0) + np.maximum(boxes[:, 3] - y1, 0)
        needs = gap > leader_after_px
        lines = _leader_lines(A[i], boxes)
        if np.any(needs):
            free = [k for k in range(len(S)) if k not in inc[i]]
            if free:
                d = _segment_segment_distance(lines[needs], S[free])
                bad[needs] += np.maximum(2.0 - d, 0.0)
            if len(others):
                bad[needs] += np.maximum(2.0 - box_segment_distance(others, lines[needs]).min(axis=0), 0.0)
        cost = gap / unit + 0.6 * (1.0 - align) + 0.15 * needs
        if len(soft):
            cost += 0.4 * (box_segment_distance(boxes, soft).min(axis=1) < 1.0)
        ok = bad <= 1e-9
        k = int(np.argmin(np.where(ok, cost, np.inf))) if np.any(ok) else int(np.argmin(bad * 1e3 + cost))
        leader = lines[k] if needs[k] else None
        out[i] = Placement(boxes[k], leader, not bool(ok[k]))
        placed.append(boxes[k][None])
        if leader is not None:
            leaders.append(leader)
    return out  # type: ignore[return-value]


def _leader_lines(anchor, boxes) -> np.ndarray:
    """Segments from just off the anchor to the nearest point of each box, shape (n, 2, 2)."""
    near = np.column_stack([np.clip(anchor[0], boxes[:, 0], boxes[:, 2]), np.clip(anchor[1], boxes[:, 1], boxes[:, 3])])
    v = near - anchor
    L = np.maximum(np.linalg.norm(v, axis=1, keepdims=True), 1e-9)
    start = anchor + v / L * np.minimum(6.0, L)
    end = near - v / L * np.minimum(1.5, L)
    return np.stack([start, end], axis=1)


def _segment_segment_distance(P, Q) -> np.ndarray:
    """Smallest distance of each segment in P (n, 2, 2) to any segment in Q (m, 2, 2)."""
    n, m = len(P), len(Q)
    if n == 0 or m == 0:
        return np.full(n, np.inf)
    a = np.repeat(P[:, 0], m, axis=0)
    b = np.repeat(P[:, 1], m, axis=0)
    c = np.tile(Q[:, 0], (n, 1))
    d = np.tile(Q[:, 1], (n, 1))
    dist = np.minimum.reduce([point_segment_distance(a, c, d), point_segment_distance(b, c, d),
                              point_segment_distance(c, a, b), point_segment_distance(d, a, b)])
    dist = np.where(_segments_cross(a, b, c, d), 0.0, dist)
    return dist.reshape(n, m).min(axis=1)

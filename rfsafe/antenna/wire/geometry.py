"""Segmentation, junctions, images and basis functions of a wire structure.

Each wire is cut into straight segments (at its vertices, at its feed points and by the segment
rule). A piecewise-sinusoidal basis function spans the two segments on either side of every interior
node of a wire; where n >= 2 wire ends meet, n - 1 basis functions run from the first wire into each
of the others, which enforces current continuity (Kirchhoff's current law) at the junction; a wire
end on a perfectly conducting ground carries a basis function that continues into its image.
Free ends carry no basis function, so the current vanishes there.

References
----------
J. H. Richmond, NASA CR-2396 (1974), piecewise-sinusoidal expansion on wire structures with junctions.
C. A. Balanis, Antenna Theory, 3rd ed., Wiley, 2005, Sec. 4.7 (ground plane, image theory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from rfsafe.errors import InputError, bad_value

__all__ = ["Structure", "HalfMap", "build_structure", "segment_distances", "point_segment_distances",
           "DEFAULT_SEGMENTS_PER_WAVELENGTH", "MAX_SEGMENT_WAVELENGTHS", "MIN_SEGMENT_RADII",
           "JOIN_TOLERANCE_M", "MAX_JUNCTION_RADIUS_RATIO", "unique_ints", "unique_inverse", "unique_rows"]

#: Default rule when a wire gives neither ``segments`` nor ``max_segment_m``: lambda/40.
DEFAULT_SEGMENTS_PER_WAVELENGTH = 40
#: Longest segment accepted anywhere [wavelengths] (common practice for PWS moment methods).
MAX_SEGMENT_WAVELENGTHS = 0.1
#: Shortest segment accepted [wire radii]: below this the thin-wire kernel fails (common practice).
MIN_SEGMENT_RADII = 4.0
#: Largest ratio of radii accepted among wires meeting at a junction (see solver.impedance_matrix).
MAX_JUNCTION_RADIUS_RATIO = 2.0
#: Wire ends closer than this are joined [m].
JOIN_TOLERANCE_M = 1e-6


class HalfMap:
    """The sparse (2 Ns, Nb) map from basis amplitudes to half-function amplitudes (entries +-1).

    Each half-function belongs to one basis function (a few at a junction), so the map is held as its
    nonzero entries (row-major order, as ``np.nonzero`` of the dense matrix gives them) instead of a dense
    matrix (64 MB at 2,000 segments). ``p @ vector`` is the sparse product; ``p[r0:r1]`` a dense block of
    rows; ``p[rows, cols]`` entries; ``toarray()`` (and ``p.T``, or ``@`` with a matrix) the dense form.
    """

    __slots__ = ("rows", "cols", "vals", "shape")
    __array_ufunc__ = None     # ``matrix @ p`` comes to __rmatmul__ (numpy defers)
    dtype = np.dtype(float)
    ndim = 2

    def __init__(self, rows, cols, vals, shape):
        self.rows = np.asarray(rows, dtype=np.intp)
        self.cols = np.asarray(cols, dtype=np.intp)
        self.vals = np.asarray(vals, dtype=float)
        self.shape = (int(shape[0]), int(shape[1]))

    @classmethod
    def from_entries(cls, n_rows: int, n_cols: int, entries) -> HalfMap:
        """From (row, column, value) triples; repeated entries are summed, zero sums dropped."""
        acc: dict = {}
        for h, m, v in entries:
            acc[(h, m)] = acc.get((h, m), 0.0) + v
        keys = sorted(k for k, v in acc.items() if v != 0.0)
        rows = np.array([k[0] for k in keys], dtype=np.intp)
        cols = np.array([k[1] for k in keys], dtype=np.intp)
        return cls(rows, cols, np.array([acc[k] for k in keys], dtype=float), (n_rows, n_cols))

    def nonzero(self):
        return self.rows.copy(), self.cols.copy()

    def toarray(self) -> np.ndarray:
        out = np.zeros(self.shape)
        out[self.rows, self.cols] = self.vals
        return out

    @property
    def T(self) -> np.ndarray:   # noqa: N802 (numpy's name)
        return self.toarray().T

    def __getitem__(self, key):
        if isinstance(key, slice):
            r0, r1, step = key.indices(self.shape[0])
            if step != 1:
                raise IndexError("HalfMap rows: contiguous slices only")
            lo, hi = np.searchsorted(self.rows, [r0, r1])
            out = np.zeros((max(0, r1 - r0), self.shape[1]))
            out[self.rows[lo:hi] - r0, self.cols[lo:hi]] = self.vals[lo:hi]
            return out
        r, c = (np.asarray(x, dtype=np.intp) for x in key)
        flat = self.rows * self.shape[1] + self.cols           # sorted (row-major)
        q = r * self.shape[1] + c
        i = np.minimum(np.searchsorted(flat, q), max(0, len(flat) - 1))
        hit = flat[i] == q if len(flat) else np.zeros(q.shape, dtype=bool)
        return np.where(hit, self.vals[i] if len(flat) else 0.0, 0.0)

    def __matmul__(self, other):
        other = np.asarray(other)
        if other.ndim != 1:
            return self.toarray() @ other
        out = np.zeros(self.shape[0], dtype=np.result_type(self.vals, other))
        np.add.at(out, self.rows, self.vals * other[self.cols])
        return out

    def __rmatmul__(self, other):
        return np.asarray(other) @ self.toarray()


@dataclass(frozen=True)
class Structure:
    """A segmented wire structure ready for the matrix fill (all lengths in metres)."""

    freq_hz: float
    wavelength_m: float
    ground: bool
    start_m: np.ndarray        # (Ns, 3) segment start points
    end_m: np.ndarray          # (Ns, 3) segment end points
    radius_m: np.ndarray       # (Ns,)
    wire: np.ndarray           # (Ns,) wire index of each segment
    node1: np.ndarray          # (Ns,) global node id at start
    node2: np.ndarray          # (Ns,) global node id at end
    ground_nodes: frozenset    # node ids lying on a perfect ground
    half_to_basis: HalfMap     # (2 Ns, Nb) sparse: basis current -> half-function amplitude (+-1)
    feed_coupling: np.ndarray  # (Nf, Nb): current through each feed gap per basis amplitude
    feed_voltage_v: np.ndarray  # (Nf,) complex source voltages (amplitude, phase)
    feed_position_m: np.ndarray  # (Nf, 3)
    wire_labels: tuple[str, ...]
    wire_fields: tuple[str, ...]
    distance_m: np.ndarray = field(repr=False)        # (Ns, Ns) real-real, exact below a segment length
    image_distance_m: np.ndarray | None = field(repr=False, default=None)  # (Ns, Ns) real-image, likewise
    load_coupling: np.ndarray | None = field(repr=False, default=None)  # (Nl, Nb), like feed_coupling
    load_position_m: np.ndarray | None = field(repr=False, default=None)  # (Nl, 3)
    #: Real ground: complex relative permittivity of the soil (None otherwise); the images then carry
    #: -K = -(eps_c - 1) / (eps_c + 1) instead of -1 and the Sommerfeld remainder is added (``ground``).
    soil_eps_c: complex | None = None

    @property
    def length_m(self) -> np.ndarray:
        return np.linalg.norm(self.end_m - self.start_m, axis=1)

    @property
    def direction(self) -> np.ndarray:
        return (self.end_m - self.start_m) / self.length_m[:, None]

    @property
    def image_sign(self) -> complex:
        """Current factor of the images: -1 over a perfect ground, -K over real soil."""
        if self.soil_eps_c is None:
            return -1.0
        return -(self.soil_eps_c - 1.0) / (self.soil_eps_c + 1.0)

    @property
    def num_segments(self) -> int:
        return self.start_m.shape[0]

    @property
    def num_unknowns(self) -> int:
        return self.half_to_basis.shape[1]

    def sources(self):
        """Source segments: the real ones, then (perfect ground) the images with current sign -1.

        Yields ``(start, end, radius, sign, distance)`` where ``distance`` is the (Ns_test, Ns_src)
        matrix of test-to-source segment distances.
        """
        yield self.start_m, self.end_m, self.radius_m, 1.0, self.distance_m
        if self.ground:
            m = np.array([1.0, 1.0, -1.0])
            yield self.start_m * m, self.end_m * m, self.radius_m, self.image_sign, self.image_distance_m


def unique_ints(values) -> np.ndarray:
    """``np.unique(values)`` of an integer array: its distinct values, sorted.

    The same values by a sort and a comparison of neighbours: numpy's own ``np.unique`` (without
    ``return_index``/``inverse``/``counts``) asks ``np.ma.is_masked`` first, which imports ``numpy.ma``
    (about 5 ms) on its first call. Any other dtype is handed to ``np.unique``.
    """
    a = np.asarray(values)
    if a.dtype.kind not in "iub":
        return np.unique(a)
    s = np.sort(a.ravel())
    keep = np.empty(len(s), dtype=bool)
    keep[:1] = True
    np.not_equal(s[1:], s[:-1], out=keep[1:])
    return s[keep]


def unique_inverse(values) -> tuple[np.ndarray, np.ndarray]:
    """``np.unique(values, return_inverse=True)`` of an integer array: its distinct values and, for each
    element, the index of its value among them (the same arrays, by :func:`unique_ints` and a search;
    fewer steps). Any other dtype is handed to ``np.unique``."""
    a = np.asarray(values)
    if a.dtype.kind not in "iub":
        return np.unique(a, return_inverse=True)
    u = unique_ints(a)
    return u, np.searchsorted(u, a)


def unique_rows(rows) -> np.ndarray:
    """``np.unique(rows, axis=0)`` of a 2-D float array: its distinct rows in lexicographic order.

    The same rows by a lexicographic sort and a comparison of neighbours (without ``numpy.ma``, see
    :func:`unique_ints`), for finite rows without a negative zero (where rows equal as numbers are equal
    bit for bit, so which duplicate is kept does not matter); any other input is handed to ``np.unique``.
    """
    a = np.asarray(rows, dtype=float)
    if a.ndim != 2 or not a.shape[1] or not np.all(np.isfinite(a)) or np.any((a == 0.0) & np.signbit(a)):
        return np.unique(a, axis=0)
    s = a[np.lexsort(a.T[::-1])]
    keep = np.empty(len(s), dtype=bool)
    keep[:1] = True
    np.any(s[1:] != s[:-1], axis=1, out=keep[1:])
    return s[keep]


def point_segment_distances(points, a0, a1):
    """Distances from points (..., 3) to segments a0->a1 (broadcasting) [m]."""
    u = a1 - a0
    uu = np.einsum("...i,...i->...", u, u)
    w = points - a0
    t = np.minimum(np.maximum(np.einsum("...i,...i->...", w, u) / uu, 0.0), 1.0)   # np.clip's values, fewer steps
    d = w - t[..., None] * u
    return np.sqrt(np.add.reduce(d * d, axis=-1))   # np.linalg.norm(d, axis=-1) of real d, as numpy computes it


def segment_distances(a0, a1, b0, b1, exact_below: float | None = None) -> np.ndarray:
    """Shortest distances between segments a (N) and segments b (M) [m], shape (N, M).

    The minimum is reached at an end of one segment or at interior points of both (common
    perpendicular); all five candidates are evaluated. With ``exact_below`` [m], only pairs that
    may be closer than that are evaluated so; the others get the lower bound "midpoint distance
    minus the half lengths", which is at least ``exact_below`` (every comparison with a threshold
    up to ``exact_below`` comes out the same, in O(N M) cheap operations).
    """
    if exact_below is not None:
        la, lb = np.linalg.norm(a1 - a0, axis=1), np.linalg.norm(b1 - b0, axis=1)
        ma, mb = 0.5 * (a0 + a1), 0.5 * (b0 + b1)
        d = np.sqrt(sum((ma[:, None, j] - mb[None, :, j]) ** 2 for j in range(3)))
        d -= 0.5 * (la[:, None] + lb[None, :])
        i, j = np.nonzero(d < exact_below)
        d[i, j] = _pair_distances(a0[i], a1[i], b0[j], b1[j])
        return d
    return _pair_distances(a0[:, None, :], a1[:, None, :], b0[None, :, :], b1[None, :, :])


def _pair_distances(A0, A1, B0, B1) -> np.ndarray:
    """Shortest distances between segments A0-A1 and B0-B1 (broadcasting (..., 3)) [m]."""
    d = np.minimum.reduce([
        point_segment_distances(A0, B0, B1), point_segment_distances(A1, B0, B1),
        point_segment_distances(B0, A0, A1), point_segment_distances(B1, A0, A1)])
    u, v, w = A1 - A0, B1 - B0, A0 - B0
    a = np.einsum("...i,...i->...", u, u)
    b = np.einsum("...i,...i->...", u, v)
    c = np.einsum("...i,...i->...", v, v)
    dd = np.einsum("...i,...i->...", u, w)
    e = np.einsum("...i,...i->...", v, w)
    den = a * c - b * b
    ok = den > 1e-12 * a * c
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.where(ok, (b * e - c * dd) / den, -1.0)
        t = np.where(ok, (a * e - b * dd) / den, -1.0)
    inside = (s > 0) & (s < 1) & (t > 0) & (t < 1)
    if np.any(inside):
        pa = A0 + s[..., None] * u
        pb = B0 + t[..., None] * v
        d = np.where(inside, np.linalg.norm(pa - pb, axis=-1), d)
    return d


def _allocate(total: int, lengths: list[float]) -> list[int]:
    """Split ``total`` segments over pieces in proportion to length, at least one each."""
    ltot = sum(lengths)
    n = [max(1, int(math.floor(total * x / ltot))) for x in lengths]
    while sum(n) < total:
        i = max(range(len(n)), key=lambda j: lengths[j] / n[j])
        n[i] += 1
    while sum(n) > total:
        i = min((j for j in range(len(n)) if n[j] > 1), key=lambda j: lengths[j] / (n[j] - 1))
        n[i] -= 1
    return n


def _check_segment_budget(n: int, path: str, w) -> None:
    """Refuse more segments than :data:`rfsafe.bounds.MAX_WIRE_SEGMENTS` before allocating them."""
    from rfsafe.bounds import MAX_WIRE_SEGMENTS

    if n > MAX_WIRE_SEGMENTS:
        key, value = (("segments", w.segments) if w.segments is not None else
                      ("max_segment_m", w.max_segment_m) if w.max_segment_m is not None else
                      ("segments", "default (wavelength/40)"))
        raise bad_value(f"{path}.{key}", value, f"gives {n:,} segments (accepted: at most {MAX_WIRE_SEGMENTS} "
                        "segments per wire antenna; use longer segments, a lower frequency or shorter wires)")


def _segment_wire(w, path, feeds_here, wavelength_m):
    """Node coordinates of one wire and the node index of each feed on it."""
    pts = np.asarray(w.points_m, dtype=float)
    piece = np.linalg.norm(np.diff(pts, axis=0), axis=1)
    cum = np.concatenate([[0.0], np.cumsum(piece)])
    total = cum[-1]
    breaks = list(cum)
    for pos in feeds_here:
        breaks.append(pos * total)
    breaks = sorted(breaks)
    merged = [breaks[0]]
    for b in breaks[1:]:
        if b - merged[-1] > JOIN_TOLERANCE_M:
            merged.append(b)
    merged[-1] = total
    sub = [merged[i + 1] - merged[i] for i in range(len(merged) - 1)]
    if w.segments is not None:
        if w.segments < len(sub):
            raise bad_value(f"{path}.segments", w.segments,
                            f"is too few: the wire has {len(sub)} straight pieces between corners and "
                            f"feed points (accepted: at least {len(sub)})")
        counts = _allocate(w.segments, sub)
    else:
        max_seg = w.max_segment_m if w.max_segment_m is not None else wavelength_m / DEFAULT_SEGMENTS_PER_WAVELENGTH
        counts = [max(1, math.ceil(x / max_seg - 1e-9)) for x in sub]
    _check_segment_budget(sum(counts), path, w)

    arcs = [0.0]
    for i, n in enumerate(counts):
        arcs.extend(merged[i] + sub[i] * (np.arange(1, n + 1) / n))
    arcs = np.asarray(arcs)
    arcs[-1] = total
    # the point at each arc length along the polyline (all nodes at once)
    j = np.minimum(np.searchsorted(cum, arcs, side="right") - 1, len(piece) - 1)
    t = (arcs - cum[j]) / piece[j]
    nodes = pts[j] + t[:, None] * (pts[j + 1] - pts[j])
    for j, c in enumerate(cum):  # vertices exactly as given
        nodes[int(np.argmin(np.abs(arcs - c)))] = pts[j]
    feed_nodes = [int(np.argmin(np.abs(arcs - pos * total))) for pos in feeds_here]
    return nodes, feed_nodes


def build_structure(spec, freq_hz: float, feed_wires: tuple[int, ...], *, prefix: str = "",
                    enforce_limits: bool = True, load_places: tuple[tuple[int, float], ...] = (),
                    wire_fields: tuple[str, ...] | None = None) -> Structure:
    """Segment the wires of ``spec``, find junctions and build the basis functions.

    Parameters
    ----------
    spec : WireAntennaSpec
        Checked model (see ``check_wire_antenna``).
    freq_hz : float
        Frequency [Hz].
    feed_wires : tuple of int
        Wire index of each feed.
    prefix : str
        Field-path prefix for messages.
    enforce_limits : bool
        Refuse segments longer than lambda/10 or shorter than 4 radii (default). Only method
        validation (e.g. the one-basis induced-EMF check) turns this off; segments must always be
        shorter than lambda/2.
    load_places : tuple of (int, float)
        Wire index and fraction along the wire of each lumped load (a node is put there).
    wire_fields : tuple of str, optional
        Field path of each wire for messages (default ``<prefix>wires[i]``).

    Raises
    ------
    InputError
        Segment limits, wires that touch or cross without a junction, feeds on free ends.
    """
    from rfsafe.antenna.wire.model import wire_label

    lam = 299_792_458.0 / freq_hz
    ground = spec.ground in ("perfect", "real")   # real: images weighted by -K, see Structure.soil_eps_c
    labels = tuple(wire_label(spec, i) for i in range(len(spec.wires)))
    fields = wire_fields or tuple(f"{prefix}wires[{i}]" for i in range(len(spec.wires)))

    wire_nodes, feed_nodes_by_wire, load_nodes = [], [], {}
    for i, w in enumerate(spec.wires):
        here = [(f, feed.position) for f, feed in enumerate(spec.feeds) if feed_wires[f] == i]
        loads_here = [(n, p) for n, (iw, p) in enumerate(load_places) if iw == i]
        nodes, fn = _segment_wire(w, fields[i], [p for _, p in here] + [p for _, p in loads_here], lam)
        wire_nodes.append(nodes)
        _check_segment_budget(sum(len(x) - 1 for x in wire_nodes), fields[i], w)
        feed_nodes_by_wire.append(dict(zip([f for f, _ in here], fn)))
        load_nodes.update({n: (i, j) for (n, _), j in zip(loads_here, fn[len(here):])})

    # Global node ids: interior nodes unique, wire ends clustered into junctions.
    ends = [(i, e, wire_nodes[i][0 if e == 0 else -1]) for i in range(len(wire_nodes)) for e in (0, 1)]
    cluster = list(range(len(ends)))
    end_pts = np.array([e[2] for e in ends])
    near_end = np.sqrt(np.sum((end_pts[:, None, :] - end_pts[None, :, :]) ** 2, axis=-1)) <= JOIN_TOLERANCE_M
    for a in range(len(ends)):
        b = np.flatnonzero(near_end[a, :a])
        if len(b):                           # the first earlier end within the tolerance
            cluster[a] = cluster[int(b[0])]
    next_id = max(cluster) + 1
    node_ids = []
    for i, nodes in enumerate(wire_nodes):
        ids = np.empty(len(nodes), dtype=int)
        ids[1:-1] = np.arange(next_id, next_id + len(nodes) - 2)
        next_id += len(nodes) - 2
        ids[0], ids[-1] = cluster[2 * i], cluster[2 * i + 1]
        node_ids.append(ids)
    ground_nodes = frozenset(cluster[a] for a in range(len(ends)) if ground and abs(ends[a][2][2]) <= JOIN_TOLERANCE_M)

    counts = [len(nodes) - 1 for nodes in wire_nodes]
    first_seg = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(int).tolist()
    start = np.concatenate([nodes[:-1] for nodes in wire_nodes])
    end = np.concatenate([nodes[1:] for nodes in wire_nodes])
    radius = np.repeat([float(w.radius_m) for w in spec.wires], counts)
    wire = np.repeat(np.arange(len(wire_nodes)), counts)
    n1 = np.concatenate([ids[:-1] for ids in node_ids])
    n2 = np.concatenate([ids[1:] for ids in node_ids])
    ns = len(start)
    length = np.linalg.norm(end - start, axis=1)

    for i in range(len(spec.wires)):
        li = length[wire == i]
        hint = f"{fields[i]}.segments" if spec.wires[i].segments is not None else (
            f"{fields[i]}.max_segment_m" if spec.wires[i].max_segment_m is not None else f"{fields[i]}.segments")
        if li.max() >= 0.5 * lam:
            raise bad_value(hint, spec.wires[i].segments or spec.wires[i].max_segment_m or "default",
                            f"gives segments of {li.max():.4g} m on wire {labels[i]!r}, at least half a "
                            f"wavelength ({0.5 * lam:.4g} m): accepted: shorter than lambda/10 = {lam / 10:.4g} m")
        if not enforce_limits:
            continue
        if li.max() > MAX_SEGMENT_WAVELENGTHS * lam * (1 + 1e-9):
            need = math.ceil(li.sum() / (MAX_SEGMENT_WAVELENGTHS * lam))
            raise bad_value(hint, spec.wires[i].segments or spec.wires[i].max_segment_m or "default",
                            f"gives segments of {li.max():.4g} m on wire {labels[i]!r}, longer than "
                            f"lambda/10 = {lam / 10:.4g} m at {freq_hz / 1e6:g} MHz (accepted: at most "
                            f"lambda/10, e.g. segments >= {need})")
        a = spec.wires[i].radius_m
        if li.min() < MIN_SEGMENT_RADII * a * (1 - 1e-9):
            raise bad_value(hint, spec.wires[i].segments or spec.wires[i].max_segment_m or "default",
                            f"gives a segment of {li.min():.4g} m on wire {labels[i]!r}, shorter than "
                            f"{MIN_SEGMENT_RADII:g} wire radii ({MIN_SEGMENT_RADII * a:.4g} m): the thin-wire "
                            "kernel does not hold (accepted: segments at least 4 radii long; use fewer "
                            "segments, move feeds away from corners, or a thinner wire)")

    # Basis functions: lists of (half-function index, sign). Half index 2q = shape 1 (peak at the
    # start of segment q), 2q + 1 = shape 2 (peak at its end).
    bases: list[list[tuple[int, float]]] = []
    interior_basis: dict[tuple[int, int], int] = {}
    for i, nodes in enumerate(wire_nodes):
        q0 = first_seg[i]
        for j in range(1, len(nodes) - 1):
            interior_basis[(i, j)] = len(bases)
            bases.append([(2 * (q0 + j - 1) + 1, 1.0), (2 * (q0 + j), 1.0)])

    def end_half(a, toward_node: bool):
        i, e, _ = ends[a]
        q = first_seg[i] + (len(wire_nodes[i]) - 2 if e == 1 else 0)
        h = 2 * q + (1 if e == 1 else 0)
        # segment direction points toward the node at the wire's last end
        sign = 1.0 if (e == 1) == toward_node else -1.0
        return h, sign

    members: dict[int, list[int]] = {}
    for a in range(len(ends)):
        members.setdefault(cluster[a], []).append(a)
    end_bases: dict[int, list[int]] = {a: [] for a in range(len(ends))}
    for cid, mem in members.items():
        if cid in ground_nodes:
            for a in mem:
                end_bases[a].append(len(bases))
                bases.append([end_half(a, True)])
        elif len(mem) >= 2:
            radii = [spec.wires[ends[a][0]].radius_m for a in mem]
            if max(radii) > MAX_JUNCTION_RADIUS_RATIO * min(radii) * (1 + 1e-9):
                i_big = ends[mem[radii.index(max(radii))]][0]
                i_small = ends[mem[radii.index(min(radii))]][0]
                raise bad_value(f"{fields[i_big]}.radius_m", max(radii),
                                f"joins wire {labels[i_small]!r} of radius {min(radii):g} m at "
                                f"{np.round(ends[mem[0]][2], 4).tolist()}: accepted: radii at a junction within a "
                                f"factor of {MAX_JUNCTION_RADIUS_RATIO:g} (the thin-wire kernel is unreliable at "
                                "larger radius steps; use equal radii or step through short intermediate pieces)")
            u = mem[0]
            for v in mem[1:]:
                end_bases[u].append(len(bases)); end_bases[v].append(len(bases))
                bases.append([end_half(u, True), end_half(v, False)])

    nb = len(bases)
    p_mat = HalfMap.from_entries(2 * ns, nb, ((h, m, sgn) for m, entries in enumerate(bases) for h, sgn in entries))

    def gap_row(row: np.ndarray, i: int, j: int, field: str, value) -> None:
        """Current through a gap at node j of wire i per basis amplitude (feeds and lumped loads)."""
        if 0 < j < len(wire_nodes[i]) - 1:
            row[interior_basis[(i, j)]] = 1.0
            return
        a = 2 * i + (0 if j == 0 else 1)
        if not end_bases[a]:
            raise bad_value(field, value, f"is a free end of wire {labels[i]!r}, where no current flows (accepted: "
                                          "0 < position < 1, or an end joined to other wires or touching a perfect "
                                          "ground)")
        h_end, _ = end_half(a, True)
        for m in end_bases[a]:
            for h, sgn in bases[m]:
                if h == h_end:
                    row[m] = sgn

    nf = len(spec.feeds)
    g = np.zeros((nf, nb))
    volts = np.zeros(nf, dtype=complex)
    fpos = np.zeros((nf, 3))
    for f, feed in enumerate(spec.feeds):
        i = feed_wires[f]
        j = feed_nodes_by_wire[i][f]
        fpos[f] = wire_nodes[i][j]
        volts[f] = feed.amplitude * np.exp(1j * math.radians(feed.phase_deg))
        gap_row(g[f], i, j, f"{prefix}feeds[{f}].position", feed.position)
    # Lumped loads: the current through a gap at a node, built as for a feed.
    gl = np.zeros((len(load_places), nb))
    lpos = np.zeros((len(load_places), 3))
    for n, (i, j) in sorted(load_nodes.items()):
        lpos[n] = wire_nodes[i][j]
        gap_row(gl[n], i, j, f"{prefix}loads[{n}].position", load_places[n][1])
    if nb == 0:
        raise InputError(f"{prefix}wires: the structure carries no current (every wire end is free and "
                         "no wire has an interior node)")

    # Wires that touch or cross without a junction, and wires touching their ground image.
    # Exact where a pair may touch or be a near pair of the matrix fill (closer than a segment length).
    exact_below = 1.01 * max(float(length.max()), 2.0 * float(radius.max()))
    dist = segment_distances(start, end, start, end, exact_below)
    # pairs within the sum of their radii that share no node (found among the close pairs only)
    p, q = np.nonzero(dist <= radius[:, None] + radius[None, :])
    share = (n1[p] == n1[q]) | (n1[p] == n2[q]) | (n2[p] == n1[q]) | (n2[p] == n2[q])
    touch = np.zeros(dist.shape, dtype=bool)
    touch[p[~share], q[~share]] = True
    _report_touch(touch, start, end, wire, labels, fields, dist, "")
    img_dist = None
    if ground:
        m3 = np.array([1.0, 1.0, -1.0])
        img_dist = segment_distances(start, end, start * m3, end * m3, exact_below)
        on_g = np.array([[x in ground_nodes for x in (a, b)] for a, b in zip(n1, n2)])
        gnode = np.where(on_g[:, 0], n1, np.where(on_g[:, 1], n2, -1))
        p, q = np.nonzero(img_dist <= radius[:, None] + radius[None, :])
        share_img = (gnode[p] == gnode[q]) & (gnode[p] >= 0)
        touch = np.zeros(img_dist.shape, dtype=bool)
        touch[p[~share_img], q[~share_img]] = True
        _report_touch(touch, start, end, wire, labels, fields, img_dist, "image ")

    return Structure(freq_hz=float(freq_hz), wavelength_m=lam, ground=ground, start_m=start, end_m=end,
                     radius_m=radius, wire=wire, node1=n1, node2=n2, ground_nodes=ground_nodes,
                     half_to_basis=p_mat, feed_coupling=g, feed_voltage_v=volts, feed_position_m=fpos,
                     wire_labels=labels, wire_fields=fields, distance_m=dist, image_distance_m=img_dist,
                     load_coupling=gl, load_position_m=lpos)


def _report_touch(touch, start, end, wire, labels, fields, dist, what):
    if not np.any(touch):
        return
    p, q = map(int, np.argwhere(touch)[0])
    at = np.round(0.5 * (start[p] + end[p]), 4).tolist()
    wp, wq = int(wire[p]), int(wire[q])
    if what:
        raise bad_value(fields[wp], labels[wp],
                        f"comes within {dist[p, q]:.3g} m of its ground image near {at} (accepted: ends on "
                        "the ground at z = 0, or every part more than one radius above ground)")
    if wp == wq:
        raise bad_value(fields[wp], labels[wp],
                        f"touches or crosses itself near {at} (accepted: wires join only at their ends)")
    raise bad_value(fields[wp], labels[wp],
                    f"touches or crosses wire {labels[wq]!r} near {at} without a junction (accepted: wires "
                    "join only where their end points coincide; split a wire at a T-junction, or keep "
                    "them more than the sum of their radii apart)")

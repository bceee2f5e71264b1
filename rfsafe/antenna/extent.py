"""The radiating structure of an antenna in space, and the distance from points to its nearest part.

Near-field decisions, far-field distances, compliance distances and the exemption separation are all
measured from the nearest part of the radiating structure, never from a reference point. This module
says what that structure is for each antenna kind:

- ``wire``: the declared wire geometry;
- ``half-wave-dipole``: a straight element of its textbook length lambda/2 along its axis (horizontal:
  broadside to the azimuth; vertical: the antenna's up axis, tilted with it);
- ``short-dipole``: an element of at most lambda/2 (a dipole shorter than a half wave; its real length
  is not declared, so the longest it can be is taken);
- ``quarter-wave-vertical``: a vertical element of lambda/4 centred on the declared centre of radiation
  (standing on the ground if that puts its base below it), with a horizontal radial system (or
  counterpoise) of radius lambda/4 at its base when the base is above the ground;
- ``beam``: a flat rectangle in the plane of its boom and elements: the boom (``boom_length_m``)
  along the main beam, the longest element (``element_span_m``) along the element axis; an undeclared
  size is replaced by a conservative one for the band (stated);
- any kind with ``aperture_m``: a sphere of diameter D around the declared position (its nearest part
  cannot be farther than that);
- ``isotropic``, ``table`` and ``other`` without ``aperture_m``: no size is known; a sphere of radius
  lambda/4 (a half-wave element in any orientation) is assumed, and the size counts as unknown, so no
  exemption is claimed from it.

Larger assumed structures bring every part nearer to a person, which can only raise the estimate and
widen the near-field flags: the choice that cannot understate exposure.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np

from rfsafe.units import C0_M_S

__all__ = ["Extent", "antenna_extent", "nearest_distance_m", "farthest_distance_m", "NearestPart", "structure_parts", "shifted", "extent_key", "BEAM_DEFAULT_SPAN_WAVELENGTHS",
           "BEAM_DEFAULT_BOOM_WAVELENGTHS", "UNKNOWN_RADIUS_WAVELENGTHS"]

#: Element span assumed for a beam that does not declare ``element_span_m`` [wavelengths]: a full-size
#: half-wave reflector at the lowest frequency of a band reaching 17 % below the operating frequency
#: (0.5 / 0.83 = 0.6; the widest HF amateur bands span about 13 %): common practice, conservative.
BEAM_DEFAULT_SPAN_WAVELENGTHS = 0.6
#: Boom length assumed for a beam that does not declare ``boom_length_m`` [wavelengths] (common HF
#: beams of up to five or six elements have shorter booms; a longer boom must be declared).
BEAM_DEFAULT_BOOM_WAVELENGTHS = 1.0
#: Radius of the sphere assumed around an antenna of unknown size [wavelengths]: a half-wave element
#: in any orientation.
UNKNOWN_RADIUS_WAVELENGTHS = 0.25


@dataclass(frozen=True)
class Extent:
    """The radiating structure of one antenna at one frequency (station frame, metres).

    Attributes
    ----------
    segments_m : ndarray (n, 2, 3)
        Straight pieces (start, end) [m].
    discs : tuple
        Horizontal discs ``(centre (3,), radius_m)`` (radial systems).
    rectangles : tuple
        Flat rectangles ``(centre (3,), u (3,), v (3,), half_u_m, half_v_m)`` with unit axes u, v.
    spheres : tuple
        Spheres ``(centre (3,), radius_m)``.
    basis : str
        What was taken and where its size comes from (shown in results as ``distance_basis``).
    known : bool
        True when the size is declared or fixed by the kind (or bounded from above); False when it is an
        assumption, from which no exemption may be claimed.
    size_m : float
        Largest dimension of the structure taken [m].
    """

    segments_m: np.ndarray = field(default_factory=lambda: np.zeros((0, 2, 3)))
    discs: tuple = ()
    rectangles: tuple = ()
    spheres: tuple = ()
    basis: str = ""
    known: bool = True
    size_m: float = 0.0


def _frame(azimuth_deg: float, tilt_deg: float):
    """Forward, right and up unit vectors of the antenna frame (see rfsafe.antenna.patterns)."""
    a, t = math.radians(azimuth_deg), math.radians(tilt_deg)
    sa, ca, st, ct = math.sin(a), math.cos(a), math.sin(t), math.cos(t)
    return (np.array([sa * ct, ca * ct, st]), np.array([ca, -sa, 0.0]), np.array([-sa * st, -ca * st, ct]))


#: Extents made lately, under their inputs: the same antenna at the same frequency gives the same object, so
#: its prepared geometry (:func:`structure_parts`) and what callers keep per extent serve every evaluation of
#: it (the remedies re-evaluate a station dozens of times with only a power or a schedule changed).
_MADE: dict = {}
_MADE_ENTRIES = 64


def antenna_extent(ant, freq_hz: float, wire_spec=None) -> Extent:
    """The radiating structure of a declared antenna at ``freq_hz`` [Hz] (the same object for the same inputs,
    among the last ``_MADE_ENTRIES``; an extent is never changed after it is made).

    Parameters
    ----------
    ant : rfsafe.station.schema.Antenna
        The antenna (position, kind, orientation, optional size keys).
    freq_hz : float
        Operating frequency [Hz]; textbook and assumed sizes scale with the wavelength.
    wire_spec : WireAntennaSpec, optional
        The validated wire geometry of a wire antenna.

    References
    ----------
    Textbook element lengths: C. A. Balanis, *Antenna Theory*, 4th ed., sec. 4.6 (half-wave dipole) and
    sec. 4.7 (quarter-wave monopole over a ground plane); a short dipole is shorter than a half wave.
    47 CFR 1.1307(b)(3): the separation is measured from any part of the radiating structure.
    """
    try:
        key = (type(ant).__name__, ant.model_dump_json(), float(freq_hz),
               None if wire_spec is None else wire_spec.model_dump_json())
    except (AttributeError, TypeError, ValueError):   # not a file model: made afresh
        return _antenna_extent(ant, freq_hz, wire_spec)
    made = _MADE.get(key)
    if made is None:
        made = _MADE[key] = _antenna_extent(ant, freq_hz, wire_spec)
        for a in (made.segments_m, *(x for part in (*made.discs, *made.rectangles, *made.spheres) for x in part)):
            if isinstance(a, np.ndarray):
                a.setflags(write=False)   # shared: a change in place would reach every later evaluation
        while len(_MADE) > _MADE_ENTRIES:
            _MADE.pop(next(iter(_MADE)))
    return made


def _antenna_extent(ant, freq_hz: float, wire_spec) -> Extent:
    lam = C0_M_S / float(freq_hz)
    centre = np.array([ant.x_m, ant.y_m, ant.height_m], dtype=float)
    fwd, right, up = _frame(ant.azimuth_deg, ant.tilt_deg)
    vertical = ant.polarisation == "vertical"
    if ant.kind == "wire" and wire_spec is not None:
        segs = np.array([(a, b) for w in wire_spec.wires for a, b in zip(w.points_m[:-1], w.points_m[1:])],
                        dtype=float)
        from rfsafe.antenna.wire.shield import route_polyline_m

        route = route_polyline_m(wire_spec)   # a modelled feedline shield radiates too
        if route is not None:
            segs = np.concatenate([segs, np.stack([route[:-1], route[1:]], axis=1)])
        pts = segs.reshape(-1, 3)
        size = float(np.linalg.norm(pts[:, None, :] - pts[None, :, :], axis=2).max())
        return Extent(segments_m=segs, basis="nearest point of the declared wire geometry", size_m=size)
    beam_dims = (getattr(ant, "element_span_m", None), getattr(ant, "boom_length_m", None))
    if ant.aperture_m is not None and not (ant.kind == "beam" and any(v is not None for v in beam_dims)):
        r = ant.aperture_m / 2.0
        return Extent(spheres=((centre, r),), size_m=float(ant.aperture_m),
                      basis=f"nearest point of a sphere of the declared aperture_m {ant.aperture_m:g} m "
                            "around the declared position")
    if ant.kind in ("half-wave-dipole", "short-dipole"):
        axis = up if vertical else right
        half = lam / 4.0
        seg = np.array([[centre - half * axis, centre + half * axis]])
        what = ("a half-wave dipole of its textbook length" if ant.kind == "half-wave-dipole"
                else "a short dipole taken as long as it can be (a half wave)")
        orient = "vertical" if vertical else f"horizontal, broadside to azimuth {ant.azimuth_deg:g} deg"
        return Extent(segments_m=seg, size_m=lam / 2,
                      basis=f"nearest point of {what}, lambda/2 = {lam / 2:.3g} m ({orient})")
    if ant.kind == "quarter-wave-vertical":
        half = lam / 8.0
        vup = np.array([0.0, 0.0, 1.0])
        bottom = centre - half * vup
        if bottom[2] < 0.0:                  # a vertical stands on the ground, never below it
            bottom = bottom - bottom[2] * vup
        top = bottom + 2 * half * vup
        elevated = bottom[2] > 0.0           # radials on the ground belong to the ground system
        return Extent(segments_m=np.array([[bottom, top]]), discs=((bottom, lam / 4.0),) if elevated else (),
                      size_m=lam / 2 if elevated else lam / 4,
                      basis=f"nearest point of a quarter-wave vertical of its textbook length lambda/4 = "
                            f"{lam / 4:.3g} m centred on the declared height"
                            + (" with radials of lambda/4 at its base" if elevated else ", base on the ground"))
    if ant.kind == "beam":
        span = getattr(ant, "element_span_m", None)
        boom = getattr(ant, "boom_length_m", None)
        notes = []
        if span is None:
            span = BEAM_DEFAULT_SPAN_WAVELENGTHS * lam
            notes.append(f"element span not declared: {BEAM_DEFAULT_SPAN_WAVELENGTHS:g} lambda = {span:.3g} m assumed "
                         "(a full-size element at the bottom of the band; declare element_span_m)")
        if boom is None:
            boom = BEAM_DEFAULT_BOOM_WAVELENGTHS * lam
            notes.append(f"boom length not declared: {BEAM_DEFAULT_BOOM_WAVELENGTHS:g} lambda = {boom:.3g} m assumed "
                         "(declare boom_length_m)")
        axis = up if vertical else right
        basis = (f"nearest point of the beam's elements and boom ({span:.3g} m x {boom:.3g} m, boom along the "
                 f"main beam, centred on the declared position)")
        if notes:
            basis += "; " + "; ".join(notes)
        return Extent(rectangles=((centre, fwd, axis, boom / 2.0, span / 2.0),), basis=basis,
                      known=not notes, size_m=math.hypot(span, boom))
    r = UNKNOWN_RADIUS_WAVELENGTHS * lam
    return Extent(spheres=((centre, r),), known=False, size_m=2 * r,
                  basis=f"no dimension declared for kind {ant.kind!r}: a half-wave element in any orientation "
                        f"assumed (sphere of radius lambda/4 = {r:.3g} m around the declared position; declare "
                        "aperture_m)")


def shifted(extent: Extent, offset_m) -> Extent:
    """The same structure moved by ``offset_m`` (3,) [m] (e.g. into the frame of its declared position)."""
    o = np.asarray(offset_m, dtype=float)
    return dataclasses.replace(
        extent, segments_m=np.asarray(extent.segments_m, dtype=float).reshape(-1, 2, 3) + o,
        discs=tuple((np.asarray(c, dtype=float) + o, r) for c, r in extent.discs),
        rectangles=tuple((np.asarray(c, dtype=float) + o, u, v, hu, hv) for c, u, v, hu, hv in extent.rectangles),
        spheres=tuple((np.asarray(c, dtype=float) + o, r) for c, r in extent.spheres))


def extent_key(extent: Extent | None) -> tuple:
    """A hashable value equal for structures of equal geometry (to group emitters that share one)."""
    if extent is None:
        return ()
    arr = lambda v: tuple(float(x) for x in np.ravel(v))  # noqa: E731
    return (arr(extent.segments_m), tuple((arr(c), float(r)) for c, r in extent.discs),
            tuple((arr(c), arr(u), arr(v), float(hu), float(hv)) for c, u, v, hu, hv in extent.rectangles),
            tuple((arr(c), float(r)) for c, r in extent.spheres))


class _Linear:
    """``a (x, y) + c z`` of one projection of a point: the horizontal part ``a`` is computed once.

    ``a`` is a scalar when the projection has no horizontal component (then the whole projection is a
    scalar at each height, which makes vertical and horizontal elements cost one addition per height).
    """

    __slots__ = ("a", "c")

    def __init__(self, x, y, vec, origin, dtype) -> None:
        vx, vy, vz = (float(t) for t in vec)
        off = -float(np.dot(origin, vec))
        if vx == 0.0 and vy == 0.0:
            self.a = dtype(off)
        else:
            a = x * dtype(vx)
            a += y * dtype(vy)
            a += dtype(off)
            self.a = a
        self.c = dtype(vz)

    def at(self, z):
        return self.a + self.c * z if self.c != 0.0 else self.a


def _perpendicular(u):
    """Two unit vectors perpendicular to the unit vector ``u`` and to each other (the first horizontal if it can be)."""
    w1 = np.array([u[1], -u[0], 0.0])    # u x z
    if np.linalg.norm(w1) < 1e-12:
        w1 = np.array([1.0, 0.0, 0.0])
    w1 = w1 / np.linalg.norm(w1)
    return w1, np.array([u[1] * w1[2] - u[2] * w1[1], u[2] * w1[0] - u[0] * w1[2], u[0] * w1[1] - u[1] * w1[0]])


def structure_parts(extent: Extent) -> tuple:
    """The geometry of ``extent`` prepared for :class:`NearestPart` (compute once, bind to many point sets).

    Returns ``(reference (3,), quadratic, discs, spheres)``: every position relative to the reference
    point; quadratic parts are ``(origin, plain axes, clamped (axis, half))``. Kept on the extent after the
    first call (an extent is never changed after it is made; :func:`shifted` makes a new one).
    """
    cached = extent.__dict__.get("_parts")
    if cached is not None:
        return cached
    segs = np.asarray(extent.segments_m, dtype=float).reshape(-1, 2, 3)
    centres = ([0.5 * (a + b) for a, b in segs] + [np.asarray(c, dtype=float) for c, *_ in extent.rectangles]
               + [np.asarray(c, dtype=float) for c, _ in extent.discs]
               + [np.asarray(c, dtype=float) for c, _ in extent.spheres])
    if not centres:
        raise ValueError("the extent has no part")
    ref = np.array([centres[0][0], centres[0][1], 0.0])
    quadratic = []
    for a, b in segs:
        ab = b - a
        length = float(np.linalg.norm(ab))
        u = ab / length if length > 0.0 else np.array([0.0, 0.0, 1.0])
        quadratic.append((0.5 * (a + b) - ref, _perpendicular(u), ((u, 0.5 * length),)))
    for c, u, v, hu, hv in extent.rectangles:
        u, v = np.asarray(u, dtype=float), np.asarray(v, dtype=float)
        quadratic.append((np.asarray(c, dtype=float) - ref, (np.cross(u, v),), ((u, hu), (v, hv))))
    discs = tuple((np.asarray(c, dtype=float) - ref, float(r)) for c, r in extent.discs)
    spheres = tuple((np.asarray(c, dtype=float) - ref, float(r)) for c, r in extent.spheres)
    parts = (ref, tuple(quadratic), discs, spheres)
    object.__setattr__(extent, "_parts", parts)   # a frozen dataclass: a cache, not a field
    return parts


class NearestPart:
    """Distance from points ``(x, y)`` at any height ``z`` to the nearest part of ``extent``.

    The parts of every projection that depend only on ``(x, y)`` are computed once, so a grid of points
    evaluated at several heights pays per height only what depends on the height: one addition for a
    horizontal or vertical element, an untilted beam's rectangle or a radial disc.

    Parameters
    ----------
    extent : Extent
    x_m, y_m : array_like
        Point coordinates [m] (same shape).
    dtype : numpy float type
        Precision of the per-point arithmetic, in coordinates relative to the structure (float64 by
        default; float32 keeps relative rounding about 1e-6, far below the uncertainty of any input).
    parts : tuple, optional
        ``structure_parts(extent)``, when already computed (the same structure for many point sets).

    Notes
    -----
    Each part is a clamped projection (textbook vector geometry, common practice): a segment of unit
    direction u, half length a and centre m gives ``d^2 = (q.w1)^2 + (q.w2)^2 + (s - clamp(s, -a, a))^2``
    with ``q = p - m``, ``s = q.u`` and w1, w2 perpendicular to u (no cancellation near the element);
    a rectangle of axes u, v and normal n gives ``(q.n)^2`` plus the clamped excess along u and v; a
    horizontal disc of radius r gives ``max(rho - r, 0)^2 + dz^2``; a sphere ``max(|q| - r, 0)``.
    """

    def __init__(self, extent: Extent, x_m, y_m, dtype=np.float64, parts: tuple | None = None) -> None:
        ref, quadratic, discs, spheres = parts if parts is not None else structure_parts(extent)
        x = (np.asarray(x_m, dtype=float) - ref[0]).astype(dtype, copy=False)
        y = (np.asarray(y_m, dtype=float) - ref[1]).astype(dtype, copy=False)
        self.dtype = dtype
        self._quadratic = []   # (constant part of d^2, plain projections, clamped (projection, half))
        for origin, plain, clamped in quadratic:
            self._add(x, y, origin, plain, clamped)
        self._discs = []
        for c, r in discs:
            dx, dy = x - dtype(c[0]), y - dtype(c[1])
            rho = np.sqrt(dx * dx + dy * dy)
            rho -= dtype(r)
            np.maximum(rho, 0.0, out=rho)
            self._discs.append((rho * rho, dtype(c[2])))
        self._spheres = []
        for c, r in spheres:
            dx, dy = x - dtype(c[0]), y - dtype(c[1])
            self._spheres.append((dx * dx + dy * dy, dtype(c[2]), dtype(r)))

    def _add(self, x, y, origin, plain, clamped) -> None:
        const = None
        terms, cterms = [], []
        for vec in plain:
            lin = _Linear(x, y, vec, origin, self.dtype)
            if lin.c == 0.0:
                const = np.square(lin.a) if const is None else const + np.square(lin.a)
            else:
                terms.append(lin)
        for vec, half in clamped:
            lin = _Linear(x, y, vec, origin, self.dtype)
            if lin.c == 0.0:
                e = lin.a - np.clip(lin.a, -half, half)
                const = np.square(e) if const is None else const + np.square(e)
            else:
                cterms.append((lin, self.dtype(half)))
        if const is None:
            const = np.zeros(np.shape(x), dtype=self.dtype)
        self._quadratic.append((const, terms, cterms))

    def squared_m2(self, z_m):
        """Squared distance [m^2] at height(s) ``z_m`` (a scalar, or an array shaped like the points)."""
        best = None
        for const, terms, cterms in self._quadratic:
            d2 = const
            for lin in terms:
                d2 = d2 + np.square(lin.at(z_m))
            for lin, half in cterms:
                s = lin.at(z_m)
                d2 = d2 + np.square(s - np.clip(s, -half, half))
            best = d2 if best is None else np.minimum(best, d2)
        for rho2, cz, in self._discs:
            d2 = rho2 + np.square(z_m - cz)
            best = d2 if best is None else np.minimum(best, d2)
        for rho2, cz, r in self._spheres:
            d = np.maximum(np.sqrt(rho2 + np.square(z_m - cz)) - r, 0.0)
            best = d * d if best is None else np.minimum(best, d * d)
        if self._quadratic and best is self._quadratic[0][0]:   # never hand out the stored array
            best = best.copy()
        return best

    def distance_m(self, z_m):
        """Distance [m] at height(s) ``z_m`` (0 on or inside the structure)."""
        return np.sqrt(self.squared_m2(z_m))


def nearest_distance_m(extent: Extent, points_m) -> np.ndarray:
    """Distance [m] from each point (..., 3) to the nearest part of ``extent`` (0 on or inside it).

    References
    ----------
    Point-segment, point-disc and point-rectangle distances by clamped projection (textbook vector
    geometry, common practice); see :class:`NearestPart`.
    """
    p = np.asarray(points_m, dtype=float)
    d = NearestPart(extent, p[..., 0], p[..., 1]).distance_m(p[..., 2])
    return np.broadcast_to(d, p.shape[:-1]).astype(float)


def farthest_distance_m(extent: Extent, point_m) -> float:
    """Largest distance [m] from ``point_m`` (3,) to any part of ``extent``.

    With the declared position as ``point_m``, every point within a distance d of the structure lies
    within d + this of the position (triangle inequality): grids that measure from the position use it
    to flag a superset of the points near any part of the antenna.
    """
    c = np.asarray(point_m, dtype=float)
    far = 0.0
    segs = np.asarray(extent.segments_m, dtype=float).reshape(-1, 2, 3)
    if len(segs):
        far = max(far, float(np.linalg.norm(segs.reshape(-1, 3) - c, axis=1).max()))
    for centre, radius in extent.discs:
        rho = math.hypot(centre[0] - c[0], centre[1] - c[1])
        far = max(far, math.hypot(rho + radius, centre[2] - c[2]))
    for centre, u, v, hu, hv in extent.rectangles:
        for su in (-hu, hu):
            for sv in (-hv, hv):
                far = max(far, float(np.linalg.norm(centre + su * u + sv * v - c)))
    for centre, radius in extent.spheres:
        far = max(far, float(np.linalg.norm(centre - c)) + radius)
    return far

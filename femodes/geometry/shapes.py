"""The built-in cross-sections: rectangle (optionally with rounded corners), circle, ellipse, coaxial
and rectangular coaxial lines, single- and double-ridge guides, L-shape, sector and any polygon
with holes.  Each returns a validated :class:`~femodes.geometry.section.Section` in SI metres and
refuses bad parameters with a message saying what would be valid.
"""

from __future__ import annotations

import math

import numpy as np

from femodes.errors import FemodesError, check_nonnegative, check_positive
from femodes.geometry.loops import Arc, Line, Loop, _filleted_loop, _full_ellipse_loop, _polygon_loop
from femodes.geometry.section import Section
from femodes.geometry.standards import standard_size


def _offset(offset):
    """(dx, dy) in metres from a pair of finite numbers."""
    try:
        if isinstance(offset, (str, bytes, dict)) or len(offset) != 2 or any(isinstance(v, bool) for v in offset):
            raise TypeError
        dx, dy = (float(offset[0]), float(offset[1]))
    except (TypeError, IndexError, ValueError, KeyError):
        raise FemodesError(f"offset must be a pair (dx, dy) in metres, got {offset!r}") from None
    if not (math.isfinite(dx) and math.isfinite(dy)):
        raise FemodesError(f"offset must be a pair of finite numbers (dx, dy) in metres, got {offset!r}")
    return dx, dy


def rectangle(width, height, corner_radius=0.0):
    """Rectangle ``width`` (x) by ``height`` (y) metres, centred at the origin.

    ``corner_radius`` rounds all four corners (a milled guide); it must be below half the smaller side.
    """
    a = check_positive("width", width)
    b = check_positive("height", height)
    r = check_nonnegative("corner_radius", corner_radius)
    if r >= 0.5 * min(a, b) * (1 - 1e-12) and r > 0:
        raise FemodesError(f"corner_radius {r * 1e3:.6g} mm is too large: it must be below half the smaller "
                           f"side, {0.5 * min(a, b) * 1e3:.6g} mm")
    v = [(-a / 2, -b / 2), (a / 2, -b / 2), (a / 2, b / 2), (-a / 2, b / 2)]
    loop = _filleted_loop(v, [r] * 4) if r > 0 else _polygon_loop(v)
    params = {"width": a, "height": b}
    if r > 0:
        params["corner_radius"] = r
    return Section(loop, (), "rectangle" if r == 0 else "rounded_rectangle", params)


def circle(radius):
    """Circle of ``radius`` metres centred at the origin."""
    r = check_positive("radius", radius)
    return Section(_full_ellipse_loop((0.0, 0.0), r, r), (), "circle", {"radius": r})


def ellipse(a, b):
    """Ellipse with semi-axis ``a`` along x and ``b`` along y (metres), centred at the origin."""
    a = check_positive("a (semi-axis along x)", a)
    b = check_positive("b (semi-axis along y)", b)
    if math.isclose(a, b, rel_tol=1e-12):
        return Section(_full_ellipse_loop((0.0, 0.0), a, a), (), "circle", {"radius": a})
    return Section(_full_ellipse_loop((0.0, 0.0), a, b), (), "ellipse", {"a": a, "b": b})


def coaxial(outer_radius, inner_radius, offset=(0.0, 0.0)):
    """Coaxial line: outer wall of ``outer_radius`` centred at the origin, inner conductor of
    ``inner_radius`` centred at ``offset`` (metres)."""
    b = check_positive("outer_radius", outer_radius)
    a = check_positive("inner_radius", inner_radius)
    if a >= b:
        raise FemodesError(f"inner_radius ({a * 1e3:.6g} mm) must be smaller than outer_radius ({b * 1e3:.6g} mm)")
    dx, dy = _offset(offset)
    if math.hypot(dx, dy) + a >= b * (1 - 1e-6):
        raise FemodesError(f"the inner conductor (radius {a * 1e3:.6g} mm, offset {math.hypot(dx, dy) * 1e3:.6g} mm) "
                           f"touches the outer wall: the offset must be below {(b - a) * 1e3:.6g} mm")
    inner = _full_ellipse_loop((dx, dy), a, a)
    params = {"outer_radius": b, "inner_radius": a}
    if dx or dy:
        params.update(offset_x=dx, offset_y=dy)
    return Section(_full_ellipse_loop((0.0, 0.0), b, b), (inner,), "coaxial", params)


def rectangular_coax(width, height, inner_width, inner_height, offset=(0.0, 0.0)):
    """Rectangular coax: a ``width`` x ``height`` outer wall with an ``inner_width`` x ``inner_height``
    rectangular inner conductor centred at ``offset`` (metres)."""
    a = check_positive("width", width)
    b = check_positive("height", height)
    w = check_positive("inner_width", inner_width)
    h = check_positive("inner_height", inner_height)
    dx, dy = _offset(offset)
    if abs(dx) + w / 2 >= a / 2 or abs(dy) + h / 2 >= b / 2:
        raise FemodesError(f"the inner conductor ({w * 1e3:.6g} x {h * 1e3:.6g} mm at offset "
                           f"({dx * 1e3:.6g}, {dy * 1e3:.6g}) mm) does not fit inside the "
                           f"{a * 1e3:.6g} x {b * 1e3:.6g} mm outer wall")
    inner = _polygon_loop([(dx - w / 2, dy - h / 2), (dx + w / 2, dy - h / 2),
                           (dx + w / 2, dy + h / 2), (dx - w / 2, dy + h / 2)])
    outer = _polygon_loop([(-a / 2, -b / 2), (a / 2, -b / 2), (a / 2, b / 2), (-a / 2, b / 2)])
    params = {"width": a, "height": b, "inner_width": w, "inner_height": h}
    if dx or dy:
        params.update(offset_x=dx, offset_y=dy)
    return Section(outer, (inner,), "rectangular_coax", params)


def ridged(width, height, ridge_width, gap, ridges=2, ridge_corner_radius=0.0, base_radius=0.0):
    """Rectangular guide ``width`` x ``height`` with one (``ridges=1``, from the bottom wall) or two
    (``ridges=2``, top and bottom, symmetric) centred ridges of ``ridge_width``; ``gap`` is the
    distance between the ridge face and the opposite ridge (or wall).

    ``ridge_corner_radius`` rounds the ridge tips; ``base_radius`` rounds the re-entrant corners
    where a ridge meets its wall (a milling-tool radius).
    """
    a = check_positive("width", width)
    b = check_positive("height", height)
    s = check_positive("ridge_width", ridge_width)
    g = check_positive("gap", gap)
    rt = check_nonnegative("ridge_corner_radius", ridge_corner_radius)
    rb = check_nonnegative("base_radius", base_radius)
    if ridges not in (1, 2):
        raise FemodesError(f"ridges must be 1 or 2, got {ridges!r}")
    if s >= a:
        raise FemodesError(f"ridge_width ({s * 1e3:.6g} mm) must be smaller than the guide width ({a * 1e3:.6g} mm)")
    if g >= b:
        raise FemodesError(f"gap ({g * 1e3:.6g} mm) must be smaller than the guide height ({b * 1e3:.6g} mm)")
    depth = (b - g) / ridges  # how far each ridge protrudes
    if rt > 0 and rt >= min(s / 2, depth) * (1 - 1e-9):
        raise FemodesError(f"ridge_corner_radius ({rt * 1e3:.6g} mm) must be below half the ridge width and the "
                           f"ridge depth: at most {min(s / 2, depth) * 1e3:.4g} mm")
    if rb > 0 and rb >= min((a - s) / 2, depth) * (1 - 1e-9):
        raise FemodesError(f"base_radius ({rb * 1e3:.6g} mm) must be below the ridge depth and the side clearance: "
                           f"at most {min((a - s) / 2, depth) * 1e3:.4g} mm")
    ya, yb = -b / 2, b / 2
    # counter-clockwise, starting at the bottom-left outer corner
    v, r = [], []
    v += [(-a / 2, ya)]
    r += [0]
    y_bot = ya + depth
    v += [(-s / 2, ya), (-s / 2, y_bot), (s / 2, y_bot), (s / 2, ya)]
    r += [rb, rt, rt, rb]
    v += [(a / 2, ya), (a / 2, yb)]
    r += [0, 0]
    if ridges == 2:
        y_top = yb - depth
        v += [(s / 2, yb), (s / 2, y_top), (-s / 2, y_top), (-s / 2, yb)]
        r += [rb, rt, rt, rb]
    v += [(-a / 2, yb)]
    r += [0]
    loop = _filleted_loop(v, r) if (rt or rb) else _polygon_loop(v)
    params = {"width": a, "height": b, "ridge_width": s, "gap": g}
    if rt:
        params["ridge_corner_radius"] = rt
    if rb:
        params["base_radius"] = rb
    return Section(loop, (), "double_ridge" if ridges == 2 else "single_ridge", params)


def single_ridge(width, height, ridge_width, gap, ridge_corner_radius=0.0, base_radius=0.0):
    """Single-ridge guide (ridge on the bottom wall); see :func:`ridged`."""
    return ridged(width, height, ridge_width, gap, 1, ridge_corner_radius, base_radius)


def double_ridge(width, height, ridge_width, gap, ridge_corner_radius=0.0, base_radius=0.0):
    """Double-ridge guide (ridges on top and bottom walls); see :func:`ridged`."""
    return ridged(width, height, ridge_width, gap, 2, ridge_corner_radius, base_radius)


def l_shape(width, height, notch_width, notch_height):
    """L-shaped guide: the ``width`` x ``height`` rectangle [0, width] x [0, height] with the
    ``notch_width`` x ``notch_height`` rectangle removed from its top-right corner.
    (The lower-left corner sits at the origin.)"""
    a = check_positive("width", width)
    b = check_positive("height", height)
    nw = check_positive("notch_width", notch_width)
    nh = check_positive("notch_height", notch_height)
    if nw >= a or nh >= b:
        raise FemodesError(f"the notch ({nw * 1e3:.6g} x {nh * 1e3:.6g} mm) must be smaller than the guide "
                           f"({a * 1e3:.6g} x {b * 1e3:.6g} mm) in both directions")
    v = [(0, 0), (a, 0), (a, b - nh), (a - nw, b - nh), (a - nw, b), (0, b)]
    return Section(_polygon_loop(v), (), "l_shape",
                   {"width": a, "height": b, "notch_width": nw, "notch_height": nh})


def sector(radius, angle, inner_radius=0.0):
    """Circular sector of ``radius`` and opening ``angle`` (radians, 0 < angle < 2 pi), apex at the
    origin, straight edges along angle 0 and ``angle``; with ``inner_radius`` > 0 an annular sector
    centred at the origin."""
    R = check_positive("radius", radius)
    try:
        ang = float(angle)
    except (TypeError, ValueError):
        raise FemodesError(f"angle must be a number of radians, got {angle!r}") from None
    if not (0 < ang < 2 * math.pi):
        hint = f" (degrees? give math.radians({ang:g}))" if 2 * math.pi <= ang < 360 else ""
        raise FemodesError(f"angle is the opening angle in radians and must lie strictly between 0 and 2 pi, "
                           f"got {ang!r}{hint}")
    ri = check_nonnegative("inner_radius", inner_radius)
    if ri >= R:
        raise FemodesError(f"inner_radius ({ri * 1e3:.6g} mm) must be smaller than radius ({R * 1e3:.6g} mm)")
    outer_arcs = Arc((0.0, 0.0), R, R, 0.0, 0.0, ang).split(math.pi / 2)
    end = outer_arcs[-1].end
    if ri == 0:
        segs = [Line((0.0, 0.0), (R, 0.0))] + outer_arcs + [Line(end, (0.0, 0.0))]
    else:
        inner_arcs = Arc((0.0, 0.0), ri, ri, 0.0, ang, 0.0).split(math.pi / 2)
        segs = [Line((ri, 0.0), (R, 0.0))] + outer_arcs + [Line(end, inner_arcs[0].start)] + inner_arcs
    params = {"radius": R, "angle": ang}
    if ri:
        params["inner_radius"] = ri
    return Section(Loop(tuple(segs)), (), "sector", params)


def polygon(vertices, holes=()):
    """General polygonal guide: ``vertices`` is a list of (x, y) points in metres in order around the
    outline; each hole is a vertex list or a shape (its outline is used; move it with
    ``.translated``) and is a PEC inner conductor."""
    try:
        v = [(float(p[0]), float(p[1])) for p in vertices]
    except (TypeError, IndexError, ValueError):
        raise FemodesError("vertices must be a list of (x, y) pairs in metres") from None
    if len(v) < 3:
        raise FemodesError(f"a polygon needs at least 3 vertices, got {len(v)}")
    if not np.all(np.isfinite(v)):
        raise FemodesError("vertices must be finite numbers")
    for i in range(len(v)):
        if math.dist(v[i], v[(i + 1) % len(v)]) == 0:
            raise FemodesError(f"vertices {i + 1} and {(i + 1) % len(v) + 1} coincide at ({v[i][0] * 1e3:.6g}, "
                               f"{v[i][1] * 1e3:.6g}) mm: remove the repeat")
    loops = []
    for k, h in enumerate(holes):
        if isinstance(h, Section):
            loops.append(h.outer)
        else:
            try:
                hv = [(float(p[0]), float(p[1])) for p in h]
            except (TypeError, IndexError, ValueError):
                raise FemodesError(f"hole {k + 1} must be a list of (x, y) pairs or a shape") from None
            if len(hv) < 3:
                raise FemodesError(f"hole {k + 1} needs at least 3 vertices, got {len(hv)}")
            loops.append(_polygon_loop(hv))
    # drop collinear vertices so that no spurious 180-degree corners are reported
    return Section(_polygon_loop(v), tuple(loops), "polygon", {})


def standard(designation, corner_radius=0.0):
    """The standard rectangular guide ``designation`` ('WR-90', 'WR-62', ...): a :func:`rectangle`
    of its inner dimensions (:mod:`femodes.geometry.standards`; EIA sizes, from memory), with
    ``corner_radius`` for a milled one."""
    a, b, _ = standard_size(designation)
    return rectangle(a, b, corner_radius)

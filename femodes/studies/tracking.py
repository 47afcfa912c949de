"""Mode identity followed from point to point of a sweep.

At each point of a sweep the solver returns its modes in cutoff order; where two modes cross,
the k-th cutoff changes from one mode to the other.  :func:`follow` joins the modes of
neighbouring points into curves, each curve one physical mode:

1. **Class signature.**  A mode can only continue a curve of its own class: the family (TE, TM,
   TEM, hybrid) and, where the section has mirror symmetry, the parity of its potential under
   x -> -x and y -> -y (``Mode.symmetry``).  A continuous change of a parameter that keeps the
   symmetry cannot change a mode's class, so modes of different classes may cross freely (their
   eigenvalue curves belong to different invariant subspaces).
2. **Extrapolated cutoff.**  Within a class, each curve's cutoff at the new point is predicted
   linearly from its previous two points (from its last point where it has only one), and the
   modes are assigned to the curves by the least total (fc - predicted fc)^2
   (``scipy.optimize.linear_sum_assignment``, the Hungarian method; squared, because with
   absolute distances two curves shifted the same way by more than their spacing tie between
   keeping and swapping their order, while a convex cost keeps the order unless the predictions
   themselves cross).  Modes left over start new
   curves (a mode entering from above the highest cutoff computed); curves left over end.
3. **Ambiguity.**  The assignment of a mode to a curve is flagged ``ambiguous`` when another mode
   of the same class is as close to the prediction within the error bars: the two distances differ
   by less than the sum of the modes' cutoff errors and the prediction's own uncertainty.  That
   uncertainty is the difference between the linear and the quadratic extrapolation where three
   points are known, half the predicted change where two are, and the cutoff error where one is.
   Two modes of one class that touch (an avoided crossing, a degenerate pair) are flagged: the
   data cannot tell them apart, and the figure and the Dataset say so rather than guess.  So are
   the members of a group the solver found degenerate (``Mode.degenerate_with``: cutoffs equal
   within their error estimates) that may be of one class.  Members of different known classes
   are not flagged: the solver turns a group's fields into the section's symmetry classes, so
   each class is one curve, and their cutoffs are equal within the error bars either way (the
   curves touch or cross there; a double ridge's two side-trough modes of opposite x parity
   cross at a gap near 2 mm, 8 Hz apart at 9.4 GHz against error bars of 38 Hz).

Curves are numbered 1.. in the order they first appear (at the first point: in cutoff order).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import linear_sum_assignment

__all__ = ["follow", "Tracks", "class_signature"]

#: cost of pairing a mode with a curve of another class (never chosen while a same-class match exists)
_FORBIDDEN = 1e30


def class_signature(family, symmetry=None):
    """The class of a mode: its family and its mirror parities, e.g. ``'TE|x:even,y:odd'``;
    ``symmetry`` a dict ({'x': 'even', ...}) or its text ('x:even,y:odd'), empty when unknown."""
    if isinstance(symmetry, dict):
        symmetry = ",".join(f"{k}:{symmetry[k]}" for k in sorted(symmetry))
    return f"{family or ''}|{symmetry or ''}"


def _compatible(a, b):
    """Two class signatures may be the same mode: equal families and, where both know their
    parities, equal parities."""
    fa, sa = a.split("|", 1)
    fb, sb = b.split("|", 1)
    return fa == fb and (not sa or not sb or sa == sb)


@dataclass(frozen=True)
class Tracks:
    """The curves of a sweep along one parameter.

    curve     : per point an int array over its modes (cutoff order): the curve (1..) each mode
                belongs to (0 where the point has no such mode)
    ambiguous : per point a bool array over its modes: True where the assignment to the curve
                could not be decided within the error bars
    n_curves  : how many curves
    """

    curve: tuple
    ambiguous: tuple
    n_curves: int

    def fc_by_curve(self, fc):
        """``fc`` (points x modes, cutoff order) rearranged to points x curves (NaN where a
        curve is absent)."""
        fc = np.asarray(fc, dtype=float)
        out = np.full((fc.shape[0], self.n_curves), np.nan)
        for i, cur in enumerate(self.curve):
            for k, c in enumerate(cur):
                if c > 0 and k < fc.shape[1]:
                    out[i, c - 1] = fc[i, k]
        return out


def _predict(history):
    """(predicted fc, uncertainty) of a curve at the next point from its (x, fc, error) history
    and the next x (see the module docstring)."""
    xs, fs, es, x = history
    if len(xs) == 1 or xs[-1] == xs[-2]:
        return fs[-1], es[-1]
    x1, x0 = xs[-1], xs[-2]
    t = (x - x1) / (x1 - x0)
    lin = fs[-1] + t * (fs[-1] - fs[-2])
    err = abs(1 + t) * es[-1] + abs(t) * es[-2]
    if len(xs) >= 3 and len({xs[-1], xs[-2], xs[-3]}) == 3:
        quad = np.polyval(np.polyfit(xs[-3:], fs[-3:], 2), x)
        err += abs(quad - lin)
    else:
        err += 0.5 * abs(lin - fs[-1])
    return lin, err


def _degenerate_alike(degenerate, cls, fc, err):
    """Per mode: True where the mode is a member of a degenerate group (``degenerate``, per mode)
    together with a mode that may be of its own class and whose cutoff is within the two error
    bars: which of them continues which curve is not known.  Members of different known classes
    are told apart by their classes (a circle's TE11 pair, two side-trough modes of a double
    ridge of opposite x parity)."""
    deg = [bool(v) for v in (degenerate or [])][:len(fc)] + [False] * max(0, len(fc) - len(degenerate or []))
    amb = np.zeros(len(fc), dtype=bool)
    for k in range(len(fc)):
        for k2 in range(len(fc)):
            if k2 != k and deg[k] and deg[k2] and _compatible(cls[k], cls[k2]) \
                    and abs(fc[k] - fc[k2]) <= err[k] + err[k2]:
                amb[k] = True
    return amb


def follow(points, x=None):
    """The curves through the modes of a sweep's points (see the module docstring).

    points : sequence of per-point dicts in the order of the varied parameter, each with
             ``fc`` and ``fc_error`` (Hz, cutoff order), ``family`` (per mode) and optionally
             ``symmetry`` (per mode: a dict or its text), ``degenerate`` (per mode: True for a
             member of a degenerate group) and ``status`` ('ok'; any other point,
             e.g. an invalid geometry, has no modes and is skipped: curves continue past it)
    x      : the parameter value of each point (default 0, 1, 2, ...)

    Returns :class:`Tracks`.
    """
    points = list(points)
    xs = np.arange(len(points), dtype=float) if x is None else np.asarray(x, dtype=float)
    hist = {}        # curve -> ([x], [fc], [err], class)
    last_seen = {}   # curve -> index of the last point it was found at
    curves, flags = [], []
    n = 0
    for i, p in enumerate(points):
        fc = [float(v) for v in p.get("fc", [])] if p.get("status", "ok") == "ok" else []
        err = [float(v) if math.isfinite(float(v)) else 0.0 for v in p.get("fc_error", [])][:len(fc)]
        err += [0.0] * (len(fc) - len(err))
        fam = list(p.get("family", [""] * len(fc)))
        sym = list(p.get("symmetry") or [""] * len(fc))
        cls = [class_signature(fam[k], sym[k] if k < len(sym) else "") for k in range(len(fc))]
        cur = np.zeros(len(fc), dtype=int)
        amb = _degenerate_alike(p.get("degenerate"), cls, fc, err)
        live = [c for c in hist if last_seen[c] == max(last_seen.values(), default=-1)] if hist else []
        if live and fc:
            preds = {c: _predict((hist[c][0], hist[c][1], hist[c][2], xs[i])) for c in live}
            scale = max(max(fc), max(hist[c][1][-1] for c in live), 1.0)
            cost = np.full((len(live), len(fc)), _FORBIDDEN)
            for r, c in enumerate(live):
                for k in range(len(fc)):
                    if _compatible(hist[c][3], cls[k]):
                        cost[r, k] = ((fc[k] - preds[c][0]) / scale) ** 2
            rows, cols = linear_sum_assignment(cost)
            for r, k in zip(rows, cols):
                if cost[r, k] >= _FORBIDDEN:
                    continue
                c = live[r]
                cur[k] = c
                pred, perr = preds[c]
                d = abs(fc[k] - pred)
                for k2 in range(len(fc)):
                    if k2 != k and _compatible(hist[c][3], cls[k2]):
                        if abs(abs(fc[k2] - pred) - d) <= err[k] + err[k2] + perr:
                            amb[k] = amb[k2] = True
        for k in range(len(fc)):
            if cur[k] == 0:
                n += 1
                cur[k] = n
                hist[n] = ([], [], [], cls[k])
            c = cur[k]
            hist[c][0].append(float(xs[i]))
            hist[c][1].append(fc[k])
            hist[c][2].append(err[k])
            last_seen[c] = i
        # a curve not found at this point has ended (it left the modes computed): it is not
        # continued later (the modes entering at the top start new curves)
        if fc:
            for c in list(hist):
                if last_seen[c] != i:
                    last_seen[c] = -2
        curves.append(cur)
        flags.append(amb)
    return Tracks(tuple(curves), tuple(flags), n)

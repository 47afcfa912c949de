"""Mode identity: degenerate groups, symmetry-adapted bases, and the labels engineers read.

* Degenerate modes (equal cutoff within the error estimate) are grouped.  Inside a group of one
  family the basis is rotated to be symmetry-adapted: first eigenvectors of the mirror maps
  x -> -x and y -> -y (about the section's own axes) where the section has those symmetries, then
  of the x-gradient energy int (d psi / dx)^2 dA.  A circle's TE11 pair thus comes out as the two
  orthogonal polarisations, a square's TE10/TE01 as the two pure modes.
* Rectangles (sharp or with rounded corners): TE_mn / TM_mn with m half-wavelengths along the
  width (x) and n along the height,
  read off the field: (m pi / a)^2 = kc^2 int (d psi/dx)^2 / int |grad psi|^2.
* Circles and centred coax: TE_nm / TM_nm with n the dominant azimuthal harmonic of psi and m the
  ordinal among modes of the same family and n (a degenerate pair counts once).
* Other shapes: the ordinal within the family, with the parity of psi (E_z for TM, H_z for TE)
  under the section's mirror symmetries, e.g. 'TE1 (x odd, y even)'.  A mesh file's section is
  mirrored about its centroid when its symmetry group holds the mirror lines x = x_c / y = y_c.
* Symmetry class (``Mode.symmetry_class``, ``Mode.symmetry_group``): the section's point group
  (:func:`femodes.geometry.symmetry.symmetry_group`, from the walls and material outlines, mesh
  files included) and the class of psi in it.  The share of psi in the class rho is
  (d_rho / |G|) sum_g chi_rho(g) <psi, psi o g> / <psi, psi> (the isotypic projector; the shares
  of all classes add up to one), <.,.> sampled at element centroids and psi o g read at the moved
  points; a mode is named by the class holding at least 0.8 of it, else as a mix of the two
  largest (a degeneracy of the shape beyond its group, e.g. a square's TE13/TE31).  Degenerate
  groups of shapes not named by indices are first split along the classes (the projectors'
  ranges), so that a triangle's pairs are the two-dimensional classes of D3.  Circular sections
  are named by the dominant azimuthal order of psi.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
from scipy import ndimage

from femodes.geometry.symmetry import mesh_symmetry, symmetry_group
from femodes.modes.model import Mode
from femodes.solvers.electrostatic import line_parameters
from femodes.solvers.fields import ModeField, interpolation_matrices, reference_points_matrix

_CENTROID = np.array([[1 / 3], [1 / 3]])
_INDEX_KINDS = ("rectangle", "rounded_rectangle", "circle", "coaxial")
_MAX_SAMPLES = 3000
# nodal regions: grid pixels along the longer side, the |psi| / max below which a pixel lies on a
# nodal line, and the smallest region counted (share of the section's pixels)
_NODAL_GRID = 160
_NODAL_ZERO = 0.02
_NODAL_MIN = 0.004


def _index_label(family, a, b):
    sep = "," if (a > 9 or b > 9) else ""
    return f"{family}{a}{sep}{b}"


class _Analyser:
    """Field-based measurements on one discretisation, in the section's own frame."""

    def __init__(self, section, disc):
        self.disc = disc
        self.basis = disc.basis
        self.frame = section.frame if section is not None else (0.0, 0.0, 0.0)
        x0, y0, th = self.frame
        self.section = section
        canon = section.translated(-x0, -y0).rotated(-th) if section is not None else None
        self.canon = canon
        self.sym = {}
        mesh = self.basis.mesh
        if section is not None:
            self.group = symmetry_group(section)
            for ax in ("x", "y"):
                if canon.is_symmetric(ax):
                    self.sym[ax] = True
        else:  # a mesh file: mirrored about its centroid where its group allows
            self.group = mesh_symmetry(mesh.p, mesh.t)
            g = self.group
            self.frame = (g.centre[0], g.centre[1], 0.0)
            lines = [round(math.degrees(a) % 180.0, 6) for a in g.mirrors]
            if g.continuous or any(abs(d - 90) < 1e-6 for d in lines):
                self.sym["x"] = True  # the line x = x_c: x -> -x
            if g.continuous or any(min(d, 180 - d) < 1e-6 for d in lines):
                self.sym["y"] = True
        self._ops = None if self.group.continuous else self.group.operations()
        self._classes = None if self.group.continuous else self.group.classes()
        self._P = None
        self._mirror = {}
        self._moved = {}
        self._energy = None
        self._grid = None

    def _points(self):
        """Element centroids (at most _MAX_SAMPLES, evenly picked) with area weights."""
        if self._P is None:
            P, xy = reference_points_matrix(self.basis, _CENTROID)
            mesh = self.basis.mesh
            p = mesh.p[:, mesh.t]
            area = 0.5 * np.abs((p[0, 1] - p[0, 0]) * (p[1, 2] - p[1, 0]) - (p[0, 2] - p[0, 0]) * (p[1, 1] - p[1, 0]))
            pick = np.linspace(0, len(area) - 1, min(len(area), _MAX_SAMPLES)).astype(int)
            self._w = area[pick]
            self._xy = xy.reshape(2, -1)[:, pick]
            self._P = P[pick]
        return self._P

    def _to_local(self, xy):
        x0, y0, th = self.frame
        c, s = math.cos(th), math.sin(th)
        dx, dy = xy[0] - x0, xy[1] - y0
        return np.array([c * dx + s * dy, -s * dx + c * dy])

    def _to_global(self, loc):
        x0, y0, th = self.frame
        c, s = math.cos(th), math.sin(th)
        return np.array([x0 + c * loc[0] - s * loc[1], y0 + s * loc[0] + c * loc[1]])

    def mirror_form(self, axis, X):
        """Matrix  int psi_i(x) psi_j(R x) dA  for the columns of X (approximate quadrature)."""
        P = self._points()
        if axis not in self._mirror:
            loc = self._to_local(self._xy)
            if axis == "x":
                loc = np.array([-loc[0], loc[1]])
            else:
                loc = np.array([loc[0], -loc[1]])
            Pm, _, _, ok = interpolation_matrices(self.basis, self._to_global(loc), gradients=False)
            self._mirror[axis] = (Pm, ok)
        Pm, ok = self._mirror[axis]
        w = self._w * ok
        A = (P @ X) * w[:, None]
        S = A.T @ (Pm @ X)
        return 0.5 * (S + S.T)

    def x_energy(self, X):
        """Matrix int (d psi_i/dx')(d psi_j/dx') dA in the section's own x direction."""
        if self._energy is None:
            from skfem import BilinearForm

            th = self.frame[2]
            c, s = math.cos(th), math.sin(th)

            @BilinearForm
            def exx(u, v, w):
                du = c * u.grad[0] + s * u.grad[1]
                dv = c * v.grad[0] + s * v.grad[1]
                return du * dv

            self._energy = exx.assemble(self.basis).tocsr()
        return X.T @ (self._energy @ X)

    def op_form(self, k, X):
        """Matrix  int psi_i(x) psi_j(g_k x) dA  for the columns of X and the k-th operation
        of the section's group (approximate quadrature), and the Gram matrix int psi_i psi_j dA."""
        P = self._points()
        if k not in self._moved:
            op = self._ops[k]
            if op.kind == "turn" and op.angle == 0.0:
                self._moved[k] = (P, np.ones(P.shape[0], dtype=bool))
            else:
                Pm, _, _, ok = interpolation_matrices(self.basis, self.group.apply(op, self._xy), gradients=False)
                self._moved[k] = (Pm, ok)
        Pm, ok = self._moved[k]
        PX = P @ X
        return (PX * (self._w * ok)[:, None]).T @ (Pm @ X), (PX * self._w[:, None]).T @ PX

    def class_shares(self, X):
        """(n_columns, n_classes) share of each column's psi in each class of the group."""
        ops, classes = self._ops, self._classes
        diag = np.zeros((len(ops), X.shape[1]))
        for k in range(len(ops)):
            S, G = self.op_form(k, X)
            diag[k] = np.diag(S) / np.maximum(np.diag(G), 1e-300)
        chars = np.array([c.characters for c in classes])  # (classes, ops)
        dims = np.array([c.dimension for c in classes])[:, None]
        return ((dims / len(ops)) * chars @ diag).T

    def class_split(self, X):
        """The columns of X recombined into blocks, one per class of the group found in their
        span (the ranges of the isotypic projectors, orthonormal in the sampled inner product)."""
        ops, classes = self._ops, self._classes
        Ss = [self.op_form(k, X) for k in range(len(ops))]
        G = Ss[0][1]
        try:
            L = np.linalg.cholesky(0.5 * (G + G.T))
        except np.linalg.LinAlgError:
            return [X]
        Linv = np.linalg.inv(L)
        blocks = []
        for c in classes:
            Pr = sum(ch * (Linv @ S @ Linv.T) for ch, (S, _) in zip(c.characters, Ss)) * (c.dimension / len(ops))
            w, V = np.linalg.eigh(0.5 * (Pr + Pr.T))
            sel = w > 0.5
            if np.any(sel):
                blocks.append(X @ (Linv.T @ V[:, sel]))
        if sum(b.shape[1] for b in blocks) != X.shape[1]:
            return [X]  # the split is not clean (an unresolved field): keep the basis as it was
        return blocks

    def class_words(self, x, kind=None, n_az=None):
        """The words for the class of psi = x (see the module docstring)."""
        g = self.group
        if g.continuous:
            if n_az is None:
                R = float(np.max(np.hypot(self.basis.mesh.p[0] - g.centre[0], self.basis.mesh.p[1] - g.centre[1])))
                n_az = self.azimuthal_order(x, g.centre, 0.1 * R, 0.9 * R)
            return "unchanged by every turn" if n_az == 0 else f"degenerate pair, azimuthal order {n_az}"
        if g.name == "C1":
            return ""
        shares = self.class_shares(x[:, None])[0]
        order = np.argsort(shares)[::-1]
        best = self._classes[order[0]]
        if shares[order[0]] >= 0.8:
            return best.words
        second = self._classes[order[1]]
        return f"mixes ({best.words}) and ({second.words})"

    def parity(self, x):
        out = {}
        for ax in ("x", "y"):
            if self.sym.get(ax):
                v = float(self.mirror_form(ax, x[:, None])[0, 0])
                nrm = float(np.sum(self._w * (self._points() @ x) ** 2))
                r = v / nrm if nrm > 0 else 0.0
                out[ax] = "even" if r > 0.5 else "odd" if r < -0.5 else "mixed"
        return out

    def azimuthal_order(self, x, center, r_lo, r_hi):
        """Dominant angular harmonic n of psi on rings between r_lo and r_hi about center."""
        nphi = 64
        phis = np.linspace(0, 2 * np.pi, nphi, endpoint=False)
        radii = np.linspace(r_lo, r_hi, 5)
        pts = np.array([[center[0] + r * np.cos(p), center[1] + r * np.sin(p)] for r in radii for p in phis]).T
        P, _, _, ok = interpolation_matrices(self.basis, pts, gradients=False)
        v = (P @ x).reshape(len(radii), nphi)
        spec = np.sum(np.abs(np.fft.rfft(v, axis=1)) ** 2, axis=0)
        return int(np.argmax(spec))

    def nodal_domains(self, x):
        """Number of connected regions where psi keeps one sign, counted on a fixed grid that does
        not depend on the mesh: _NODAL_GRID pixels along the longer side of the bounding box,
        psi interpolated at the pixel centres inside the section, pixels with |psi| below
        _NODAL_ZERO of its largest value taken as on a nodal line, regions of one sign found
        with scipy.ndimage.label (edge neighbours only) and regions under _NODAL_MIN of the
        section's pixels dropped (slivers along a nodal line, not domains).  A rectangle's
        TE_mn / TM_mn has (m + 1)(n + 1) / m n regions (sin / cos products, common practice)."""
        if self._grid is None:
            mesh = self.basis.mesh
            lo, hi = mesh.p.min(axis=1), mesh.p.max(axis=1)
            span = hi - lo
            step = float(max(span)) / _NODAL_GRID
            nx, ny = (max(4, int(math.ceil(s / step))) for s in span)
            gx = lo[0] + (np.arange(nx) + 0.5) * span[0] / nx
            gy = lo[1] + (np.arange(ny) + 0.5) * span[1] / ny
            X, Y = np.meshgrid(gx, gy, indexing="ij")
            P, _, _, ok = interpolation_matrices(self.basis, np.array([X.ravel(), Y.ravel()]), gradients=False)
            self._grid = (P, ok.reshape(nx, ny))
        P, inside = self._grid
        v = (P @ x).reshape(inside.shape)
        big = np.max(np.abs(v[inside])) if np.any(inside) else 0.0
        if not big > 0:
            return None
        n_min = _NODAL_MIN * np.count_nonzero(inside)
        count = 0
        for sign in (1, -1):
            lab, n = ndimage.label(inside & (sign * v > _NODAL_ZERO * big))
            if n:
                sizes = np.bincount(lab.ravel())[1:]
                count += int(np.count_nonzero(sizes >= n_min))
        return count


def _symmetry_adapt(an, X, split_classes=True):
    """Rotate the columns of X (one degenerate group of one family) to a symmetry-adapted basis:
    split along the group's classes (not for shapes named by indices: a square's TE13/TE31 would
    mix), then by the x and y mirrors, then by the x-gradient energy."""
    blocks = [X]
    if split_classes and an._ops is not None and len(an._ops) > 1:
        blocks = an.class_split(X)
    for ax in ("x", "y"):
        if not an.sym.get(ax):
            continue
        new = []
        for B in blocks:
            if B.shape[1] == 1:
                new.append(B)
                continue
            S = an.mirror_form(ax, B)
            w, V = np.linalg.eigh(S)
            R = B @ V
            new.extend([R[:, w < 0], R[:, w >= 0]])
        blocks = [b for b in new if b.shape[1]]
    out = []
    for B in blocks:
        if B.shape[1] > 1:
            E = an.x_energy(B)
            _, V = np.linalg.eigh(E)
            B = B @ V[:, ::-1]  # strongest x-variation first
        out.append(B)
    return np.hstack(out)


#: degeneracy kinds (Mode.degeneracy): forced by the section's mirror / rotation symmetry, by the
#: identity of the TE and TM eigenvalue problems (rectangle TE_mn / TM_mn, circle and coax TE_0m /
#: TM_1m: J_0' = -J_1), several TEM modes (kc = 0), or accidental: closer than the error bars
SYMMETRY, IDENTITY, TEM_KIND, WITHIN_ERROR = "symmetry", "TE/TM identity", "TEM", "within error bar"


def _label_kind(section):
    """The shape kind the labels follow: a mesh file's 'mesh'; a section with walls marked
    magnetic is named like any other shape (ordinal and symmetry: its closed forms are not those
    of its kind's index labels)."""
    if section is None:
        return "mesh"
    return "polygon" if getattr(section, "magnetic", ()) else section.kind


def _degeneracy_kind(section, a, b):
    """Why modes a and b share a cutoff: one of the kinds above.  Forced kinds are recognised from
    the point group (two modes of one family in the same 2-D class) and on the shapes whose closed
    forms show them (rectangle, square, circle, centred coax); anything else grouped by the error
    bars is called accidental."""
    if a.family == "TEM" and b.family == "TEM":
        return TEM_KIND
    if (a.family == b.family and a.symmetry_class and a.symmetry_class == b.symmetry_class
            and a.symmetry_class.startswith("degenerate pair")):
        # both in the same 2-D class of the section's point group (a cross's TE1 / TE2 under D4,
        # found from the geometry for any shape): the group forces the pair
        return SYMMETRY
    kind = _label_kind(section)
    params = section.params if section is not None else {}
    ia, ib = a.indices, b.indices
    if ia is None or ib is None:
        return WITHIN_ERROR
    if kind in ("rectangle", "rounded_rectangle"):
        square = math.isclose(params["width"], params["height"], rel_tol=1e-12)
        swapped = square and tuple(ia) == tuple(ib)[::-1]
        if a.family == b.family:
            return SYMMETRY if swapped and tuple(ia) != tuple(ib) else WITHIN_ERROR
        if kind == "rectangle" and (tuple(ia) == tuple(ib) or swapped) and min(ia) > 0:
            return IDENTITY
        return WITHIN_ERROR
    if kind in ("circle", "coaxial") and "offset_x" not in params and "offset_y" not in params:
        if a.family == b.family:
            return SYMMETRY if ia == ib and ia[0] > 0 else WITHIN_ERROR
        te, tm = (ia, ib) if a.family == "TE" else (ib, ia)
        return IDENTITY if te[0] == 0 and tm[0] == 1 and te[1] == tm[1] else WITHIN_ERROR
    return WITHIN_ERROR


def build_modes(section, fine, merged, tem, eps_r, mu_r, safety, n_modes, line=None):
    """Turn merged eigen rows and TEM potentials into labelled Mode objects (ascending cutoff).

    TEM modes (kc = 0) come first, one per inner conductor: the modal set of the line
    (``line``, :class:`femodes.solvers.electrostatic.LineParameters`, computed from ``tem`` when
    not given), mode k with the potential psi_k = sum_i T_ik phi_i of the conductor potentials
    phi_i and the modal voltages T (eigenvectors of the capacitance matrix, ascending modal
    impedance), e_t = -grad psi_k / sqrt(int |grad psi_k|^2 dA), and the line's modal label
    ('TEM' for one inner conductor, 'TEM even' / 'TEM odd' for a symmetric pair, else 'TEM1',
    'TEM2', ...).  The fields of different TEM modes are orthogonal (int e_k . e_l dA = 0)."""
    disc = fine["disc"]
    an = _Analyser(section, disc)
    kind = _label_kind(section)
    M = disc.M
    rows = list(merged)
    lam = np.array([r[0] for r in rows])
    err = np.array([r[1] for r in rows])
    # degenerate groups: chains of neighbours closer than their combined error estimates
    groups = []
    for i in range(len(rows)):
        if groups and abs(lam[i] - lam[groups[-1][-1]]) <= 2 * safety * (err[i] + err[groups[-1][-1]]) + 1e-10 * lam[i]:
            groups[-1].append(i)
        else:
            groups.append([i])
    vectors = [fine[r[2]][1][:, r[3]].copy() for r in rows]
    for g in groups:
        for fam in ("TE", "TM"):
            idx = [i for i in g if rows[i][2] == fam]
            if len(idx) > 1:
                X = np.column_stack([vectors[i] for i in idx])
                Y = _symmetry_adapt(an, X, split_classes=kind not in _INDEX_KINDS)
                for k, i in enumerate(idx):
                    vectors[i] = Y[:, k]
    modes = []
    if tem is not None and line is None:
        line = line_parameters(tem, eps_r, mu_r)
    tem_labels = []
    if tem is not None:
        for k in range(line.n_conductors):
            t = line.modal_voltages[:, k]
            psi = tem.potentials @ t
            energy = float(t @ tem.gram @ t)  # int |grad psi|^2 dA = Lambda_k / eps
            fld = ModeField(disc.basis, psi, "TEM", 0.0, 1.0 / math.sqrt(energy))
            modes.append(dict(family="TEM", lam=0.0, err=0.0, field=fld, res=0.0, vec=psi))
            tem_labels.append(line.modal_labels[k])
    for i, r in enumerate(rows):
        x = vectors[i]
        x = x / math.sqrt(float(x @ (M @ x)))
        # fix the sign: largest vertex value positive (deterministic figures)
        j = int(np.argmax(np.abs(x)))
        x = x if x[j] > 0 else -x
        modes.append(dict(family=r[2], lam=r[0], err=r[1], res=r[4], vec=x,
                          field=ModeField(disc.basis, x, r[2], math.sqrt(r[0]), 1.0 / math.sqrt(r[0]))))
    # identities (every computed row is labelled: the rows beyond ``n_modes`` are members of a
    # degenerate group the count cut, kept below if the degeneracy is forced)
    ordinals = {}
    group_of = {}
    offset = len([m for m in modes if m["family"] == "TEM"])
    for gi, g in enumerate(groups):
        for i in g:
            group_of[i + offset] = gi
    params = section.params if section is not None else {}
    out = []
    azim_counts = {}
    azim_seen = {}
    for k, m in enumerate(modes):
        fam = m["family"]
        ordinals[fam] = ordinals.get(fam, 0) + 1
        kc = math.sqrt(m["lam"])
        info = dict(indices=None, symmetry={}, nodal_domains=None, cls="")
        if fam == "TEM":
            label = tem_labels[k]
        else:
            x = m["vec"]
            info["symmetry"] = an.parity(x)
            info["nodal_domains"] = an.nodal_domains(x)
            label = None
            if kind in ("rectangle", "rounded_rectangle"):
                a, b = params["width"], params["height"]
                ex = float(an.x_energy(x[:, None])[0, 0]) / m["lam"]
                mm = round(math.sqrt(max(ex, 0.0) * m["lam"]) * a / math.pi)
                nn = round(math.sqrt(max(1 - ex, 0.0) * m["lam"]) * b / math.pi)
                info["indices"] = (mm, nn)
                label = _index_label(fam, mm, nn)
            elif kind in ("circle", "coaxial") and "offset_x" not in params and "offset_y" not in params:
                R = params.get("radius", params.get("outer_radius"))
                ri = params.get("inner_radius", 0.0)
                center = an._to_global(np.array([[0.0], [0.0]]))[:, 0]
                n_az = an.azimuthal_order(x, center, ri + 0.15 * (R - ri), ri + 0.85 * (R - ri))
                gkey = group_of.get(k)
                key = (fam, n_az)
                seen = azim_seen.setdefault(key, set())
                if gkey not in seen or n_az == 0:
                    azim_counts[key] = azim_counts.get(key, 0) + 1
                    seen.add(gkey)
                mr = azim_counts[key]
                info["indices"] = (n_az, mr)
                label = _index_label(fam, n_az, mr)
            n_az = info["indices"][0] if kind in ("circle", "coaxial") and info["indices"] else None
            info["cls"] = an.class_words(x, kind, n_az)
            if label is None:
                label = f"{fam}{ordinals[fam]}"
                sym = info["symmetry"]
                if sym:
                    label += " (" + ", ".join(f"{ax} {sym[ax]}" for ax in ("x", "y") if ax in sym) + ")"
        out.append(Mode(family=fam, kc=kc, kc_error=safety * m["err"] / (2 * kc) if kc > 0 else 0.0,
                        eps_r=eps_r, mu_r=mu_r, label=label, index=k, ordinal=ordinals[fam],
                        indices=info["indices"], symmetry=info["symmetry"],
                        symmetry_class=info["cls"], symmetry_group=an.group.name,
                        nodal_domains=info["nodal_domains"], residual=m["res"], potential=m["field"],
                        section=section))
    # degeneracy links (TEM modes form one group at kc = 0) and their kinds; a group the count
    # cuts is completed when its degeneracy is forced (symmetry, TE/TM identity: any member alone
    # is an arbitrary pick of the group's span); not the TEM modes, which the line's modal set
    # (ascending modal impedance) already tells apart; the
    # multiplicity also counts members computed beyond the modes returned
    tem_idx = tuple(i for i, m in enumerate(out) if m.family == "TEM")
    members = []
    for k, m in enumerate(out):
        if m.family == "TEM":
            members.append(tuple(i for i in tem_idx if i != k))
        else:
            g = group_of[k]
            members.append(tuple(i for i in range(len(out)) if i != k and group_of.get(i) == g))
    kinds = [", ".join(sorted({_degeneracy_kind(section, out[k], out[i]) for i in members[k]}))
             for k in range(len(out))]
    n_keep = min(n_modes, len(out))
    while 0 < n_keep < len(out) and n_keep - 1 in members[n_keep] and kinds[n_keep] \
            and kinds[n_keep] not in (WITHIN_ERROR, TEM_KIND):
        n_keep += 1
    final = []
    for k in range(n_keep):
        m = out[k]
        mult = len(tem_idx) if m.family == "TEM" else len(groups[group_of[k]])
        others = tuple(i for i in members[k] if i < n_keep)
        final.append(replace(m, degenerate_with=others, multiplicity=mult, degeneracy=kinds[k]))
    for k, m in enumerate(final):
        same = [i for i in m.degenerate_with if final[i].family == m.family]
        if len(same) == 1:
            object.__setattr__(m, "partner", final[same[0]])
    return final

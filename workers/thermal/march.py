"""Nonlinear steps: an implicit finite-volume march, vectorised over the parts.

Where a step has radiation, h(T_s) or temperature-dependent k and rho*c, no closed-form series holds
over the section: freezing k and rho*c uniform across it over substeps and chaining series cannot place
a latent-heat peak or a steep k(T) gradient that moves through a part during a quench. Such steps are
marched instead (plates, two-face plates and bars on 1-D grids; blocks and short cylinders, ``Solid``,
on tensor grids of the same 1-D nodes):

- Space: vertex-centred finite volumes on nodes x = l * f(xi), with a node on every face (so the surface
  temperature is a state) and the grid graded towards the exchanging faces. The state of a node is its
  temperature; its balance is written in enthalpy, rho * int cp dT, so a latent-heat peak is conserved.
  The flow between two nodes is the Kirchhoff difference of int k dT over their distance, exact for a
  steady section whatever k(T).
- Time: implicit, solved by Newton's method. The first time step of a schedule step is implicit Euler
  with local Richardson extrapolation (taken whole and in two halves; their difference is the error
  estimate, 2 * halves - whole is kept); the rest are variable-step BDF2 with the Milne estimate (the
  corrector against a predictor through the last two points and the last slope). Each part has its own
  step size, kept so that the local estimate stays below ``Tolerance.step_k``. Reported times between
  step ends take the quadratic through the last three step ends.
- Grids: every part is marched on two grids, one with every second node of the other. Reported values
  are extrapolated, (4 fine - coarse) / 3, which removes the O(dx^2) error of the grid; |fine - coarse|
  / 3, the fine grid's own error estimate, plus the sum of the local time-error estimates, is the
  reported error bound.
- Vectorised: all nodes of all parts and both grids sit in one flat array; every Newton iteration is one
  tridiagonal (banded) solve over all of them for 1-D parts, couplings cut between parts and grids, or
  one sparse solve for solids.

Symbols: ``vol`` node volume and ``cond`` face area over node distance (per unit face area for plates,
per radian for bars); H enthalpy per volume (J/m^3); Kc the Kirchhoff integral int k dT (W/m).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray
from scipy import sparse
from scipy.linalg import solve_banded
from scipy.sparse import linalg as splinalg

from workers.thermal.frozen import KELVIN, SIGMA, enthalpy
from workers.thermal.spec import Face, FloatArray, Material

Kind = Literal["plate", "plate2", "bar"]
IntArray = NDArray[np.intp]

GRADING = 0.8  # share of the node spacing removed at the exchanging faces (0 = uniform)
# Newton stops once no node moves by more than this; convergence is quadratic where the properties
# and h are smooth, so what remains is far smaller
NEWTON_TOL_K = 1e-3
NEWTON_MAX = 12
GROWTH = 2.0  # largest growth of a time step over the one before
SHRINK = 0.2  # largest cut after a rejected time step
COMPACT = 0.6  # once fewer than this share of the parts still step, the finished ones are dropped
TABLE_STEP_K = 0.5  # spacing of the property tables
TABLE_RANGE_C = (-275.0, 2500.0)  # beyond, the (flat-ended) curves are extended exactly


def node_xi(kind: Kind, intervals: int) -> FloatArray:
    """Dimensionless node positions on [0, 1], graded towards the exchanging face(s)."""
    s = np.linspace(0.0, 1.0, intervals + 1)
    if kind == "plate2":
        xi = s - GRADING * np.sin(2.0 * np.pi * s) / (2.0 * np.pi)
    else:
        xi = s + GRADING * np.sin(np.pi * s) / np.pi
    xi[0], xi[-1] = 0.0, 1.0
    return np.asarray(xi, dtype=float)


def _axis(kind: Kind, length: float, xi: FloatArray) -> tuple[FloatArray, FloatArray, float, float]:
    """Volumes, conductances (to the next node), outer face area and section volume of one grid."""
    mid = np.concatenate([[0.0], 0.5 * (xi[1:] + xi[:-1]), [1.0]])
    if kind == "bar":
        vol = 0.5 * (mid[1:] ** 2 - mid[:-1] ** 2) * length**2
        cond = mid[1:-1] / np.diff(xi)
        return vol, cond, length, 0.5 * length**2
    return np.diff(mid) * length, 1.0 / (np.diff(xi) * length), 1.0, length


class Tables:
    """cp, enthalpy int cp dT, k and Kirchhoff int k dT of each material on one uniform temperature grid.

    Enthalpy and Kirchhoff integrals are exact at the table points (piecewise quadratic between them,
    read linearly: error below cp' * step^2 / 8); one index computation serves all four and all
    materials at once.
    """

    def __init__(self, materials: Sequence[Material]) -> None:
        lo, hi = TABLE_RANGE_C
        self.lo = lo
        self.temps = np.arange(lo, hi + TABLE_STEP_K / 2, TABLE_STEP_K)
        self.size = self.temps.size
        rows = []
        for m in materials:
            rows.append(
                np.stack(
                    [
                        m.density * enthalpy(m.specific_heat, self.temps),
                        m.density * m.specific_heat(self.temps),
                        enthalpy(m.conductivity, self.temps),
                        m.conductivity(self.temps),
                    ]
                )
            )
        # (materials * size, 4): the four values of one table point side by side, one gather per node
        self.table = np.ascontiguousarray(np.stack(rows, axis=1).reshape(4, -1).T)

    def lookup(self, base: IntArray, T: FloatArray) -> FloatArray:
        """(4, N): H, C = rho cp, Kc, k at temperatures ``T`` of nodes whose material row starts at
        ``base`` (material index * table size)."""
        x = (T - self.lo) / TABLE_STEP_K
        i = np.clip(x.astype(np.intp), 0, self.size - 2)
        f = x - i
        j = base + i
        lo = self.table[j]
        hi = self.table[j + 1]
        return np.asarray((lo + f[:, None] * (hi - lo)).T, dtype=float)


@dataclass(frozen=True)
class PartGrid:
    """One part as the march sees it."""

    kind: Kind
    length: float  # half thickness, full thickness (plate2) or radius, m
    material: int  # index into the materials given to ``Nodes``


class Nodes:
    """All nodes of all parts on both grids, flat; each part's fine then coarse nodes are contiguous."""

    def __init__(self, parts: Sequence[PartGrid], materials: Sequence[Material], intervals: int) -> None:
        self.P = len(parts)
        self.tables = Tables(materials)
        vol, cond, part, base, fine = [], [], [], [], []
        face_node, face_part, face_area, face_law, face_fine = [], [], [], [], []
        self.core = np.empty((2, self.P), dtype=np.intp)  # (fine, coarse) node of each reported point
        self.surface = np.empty((2, self.P), dtype=np.intp)
        self.second = np.full((2, self.P), -1, dtype=np.intp)
        self.total = np.empty(self.P)
        # a two-face plate's grid spans its whole thickness: twice the intervals of a half thickness
        self.intervals: dict[Kind, int] = {"plate": intervals, "bar": intervals, "plate2": 2 * intervals}
        self.xi = {k: node_xi(k, n) for k, n in self.intervals.items()}
        self.kinds = [pg.kind for pg in parts]
        start = 0
        self.starts = np.empty(self.P, dtype=np.intp)
        for p, pg in enumerate(parts):
            self.starts[p] = start
            full = self.intervals[pg.kind]
            for g, n_int in enumerate((full, full // 2)):
                xi = self.xi[pg.kind][:: 1 if g == 0 else 2]
                v, c, area, total = _axis(pg.kind, pg.length, xi)
                n = xi.size
                vol.append(v)
                cond.append(np.append(c, 0.0))
                part.append(np.full(n, p))
                base.append(np.full(n, pg.material * self.tables.size))
                fine.append(np.full(n, g == 0))
                last = start + n_int
                if g == 0:
                    self.total[p] = total
                if pg.kind == "plate2":
                    self.core[g, p], self.surface[g, p], self.second[g, p] = start + n_int // 2, start, last
                    ends = [(start, 0), (last, 1)]
                else:
                    self.core[g, p], self.surface[g, p] = start, last
                    ends = [(last, 0)]
                for node, law in ends:
                    face_node.append(node)
                    face_part.append(p)
                    face_area.append(area)
                    face_law.append(law)
                    face_fine.append(g == 0)
                start += n
        self.N = start
        self.vol = np.concatenate(vol)
        self.cond = np.concatenate(cond)
        self.part = np.concatenate(part)
        self.base = np.concatenate(base)
        self.fine = np.concatenate(fine)
        self.face_node = np.array(face_node, dtype=np.intp)
        self.face_part = np.array(face_part, dtype=np.intp)
        self.face_area = np.array(face_area, dtype=float)
        self.face_law = np.array(face_law, dtype=np.intp)
        self.face_fine = np.array(face_fine, dtype=bool)
        self.two_faces = bool((self.face_law == 1).any())
        self.edges: tuple[IntArray, IntArray, FloatArray] | None = None  # multi-axis parts only
        self.corner: IntArray | None = None
        self.factor: Any = None  # sparse LU kept between solves (multi-axis parts)

    def subset(self, keep: NDArray[np.bool_]) -> tuple[Nodes, NDArray[np.bool_]]:
        """The same nodes for the parts ``keep`` only (renumbered), and which nodes were kept."""
        node_keep = keep[self.part]
        face_keep = keep[self.face_part]
        part_no = np.cumsum(keep) - 1
        node_no = np.cumsum(node_keep) - 1
        new = object.__new__(Nodes)
        new.P = int(keep.sum())
        new.N = int(node_keep.sum())
        new.tables = self.tables
        new.intervals, new.xi = self.intervals, self.xi
        new.kinds = [k for k, kept in zip(self.kinds, keep, strict=True) if kept]
        new.two_faces = self.two_faces
        for name in ("vol", "cond", "base", "fine"):
            setattr(new, name, getattr(self, name)[node_keep])
        new.part = part_no[self.part[node_keep]]
        new.face_node = node_no[self.face_node[face_keep]]
        new.face_part = part_no[self.face_part[face_keep]]
        for name in ("face_area", "face_law", "face_fine"):
            setattr(new, name, getattr(self, name)[face_keep])
        new.core = node_no[self.core[:, keep]]
        new.surface = node_no[self.surface[:, keep]]
        second = self.second[:, keep]
        new.second = np.where(second >= 0, node_no[np.maximum(second, 0)], -1)
        new.total = self.total[keep]
        new.starts = node_no[self.starts[keep]]
        new.edges, new.corner, new.factor = None, None, None
        if self.corner is not None:
            new.corner = node_no[self.corner[:, keep]]
        if self.edges is not None:
            ei, ej, ec = self.edges
            e_keep = node_keep[ei]
            new.edges = (node_no[ei[e_keep]], node_no[ej[e_keep]], ec[e_keep])
        return new, node_keep

    def mean(self, T: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Volume-mean temperature of every part on the fine and on the coarse grid."""
        w = T * self.vol
        f = np.bincount(self.part, weights=np.where(self.fine, w, 0.0), minlength=self.P)
        c = np.bincount(self.part, weights=np.where(self.fine, 0.0, w), minlength=self.P)
        return f / self.total, c / self.total

    def per_part_max(self, v: FloatArray) -> FloatArray:
        return np.asarray(np.maximum.reduceat(v, self.starts), dtype=float)

    def fill(self, profiles: Sequence[FloatArray]) -> FloatArray:
        """Flat node temperatures from each part's profile on the fine nodes of its kind."""
        T = np.empty(self.N)
        for p, fine in enumerate(profiles):
            s = self.starts[p]
            T[s : s + fine.size] = fine
            T[s + fine.size : s + fine.size + fine[::2].size] = fine[::2]
        return T

    def fine_profile(self, T: FloatArray, parts: slice) -> FloatArray:
        """Fine-grid temperatures (p, n) of the parts ``parts``, which share a kind."""
        kinds = set(self.kinds[parts])
        assert len(kinds) == 1
        n = self.xi[kinds.pop()].size
        idx = self.starts[parts, None] + np.arange(n)[None, :]
        return np.asarray(T[idx], dtype=float)


@dataclass(frozen=True)
class SolidGrid:
    """One block or short cylinder as the march sees it: its axes (a plate axis or a bar's radius),
    their lengths (half sizes, radius), its material, and the xi of its reported points."""

    axes: tuple[Kind, ...]
    lengths: tuple[float, ...]
    material: int
    surface: tuple[float, ...]
    intervals: int  # node spacings along every axis (even)


class Solid(Nodes):
    """Nodes of blocks and short cylinders: a tensor grid per part (axis 0 varying fastest), both
    grids; volumes, conductances and face areas are products of the 1-D ones of each axis."""

    def __init__(self, parts: Sequence[SolidGrid], materials: Sequence[Material]) -> None:
        self.P = len(parts)
        self.tables = Tables(materials)
        self.intervals, self.xi = {}, {}  # per part here, see SolidGrid
        self.kinds = ["plate"] * self.P  # not used for profiles: solids never hand one to a series
        vol, part, base, fine, ei, ej, ec = [], [], [], [], [], [], []
        face_node, face_part, face_area, face_fine = [], [], [], []
        self.core = np.empty((2, self.P), dtype=np.intp)
        self.surface = np.empty((2, self.P), dtype=np.intp)
        self.corner = np.empty((2, self.P), dtype=np.intp)
        self.second = np.full((2, self.P), -1, dtype=np.intp)
        self.total = np.empty(self.P)
        self.starts = np.empty(self.P, dtype=np.intp)
        start = 0
        for p, sg in enumerate(parts):
            self.starts[p] = start
            for g in (0, 1):
                xis = [node_xi(k, sg.intervals)[:: 1 if g == 0 else 2] for k in sg.axes]
                geo = [_axis(k, ell, xi) for k, ell, xi in zip(sg.axes, sg.lengths, xis, strict=True)]
                shape = tuple(xi.size for xi in xis)
                n = int(np.prod(shape))
                index = start + np.arange(n).reshape(shape, order="F")
                v = _outer([a[0] for a in geo])
                vol.append(v.reshape(-1, order="F"))
                for a in range(len(geo)):
                    others = [geo[b][0] for b in range(len(geo))]
                    others[a] = np.append(geo[a][1], 0.0)  # conductance to the next node on axis a
                    c = _outer(others)
                    lo = [slice(None)] * len(shape)
                    hi = [slice(None)] * len(shape)
                    lo[a], hi[a] = slice(0, -1), slice(1, None)
                    ei.append(index[tuple(lo)].reshape(-1))
                    ej.append(index[tuple(hi)].reshape(-1))
                    ec.append(c[tuple(lo)].reshape(-1))
                    face = [geo[b][0] for b in range(len(geo))]
                    face[a] = np.append(np.zeros(shape[a] - 1), geo[a][2])  # face area at xi = 1
                    fa = _outer(face)
                    end = [slice(None)] * len(shape)
                    end[a] = slice(-1, None)
                    face_node.append(index[tuple(end)].reshape(-1))
                    face_area.append(fa[tuple(end)].reshape(-1))
                    face_part.append(np.full(face_node[-1].size, p))
                    face_fine.append(np.full(face_node[-1].size, g == 0))
                part.append(np.full(n, p))
                base.append(np.full(n, sg.material * self.tables.size))
                fine.append(np.full(n, g == 0))
                if g == 0:
                    self.total[p] = float(np.prod([a[3] for a in geo]))

                self.core[g, p] = _node_at(index, xis, [0.0] * len(shape))
                self.surface[g, p] = _node_at(index, xis, sg.surface)
                self.corner[g, p] = _node_at(index, xis, [1.0] * len(shape))
                start += n
        self.N = start
        self.vol = np.concatenate(vol)
        self.part = np.concatenate(part)
        self.base = np.concatenate(base)
        self.fine = np.concatenate(fine)
        self.cond = np.zeros(self.N)
        self.face_node = np.concatenate(face_node)
        self.face_part = np.concatenate(face_part)
        self.face_area = np.concatenate(face_area)
        self.face_law = np.zeros(self.face_node.size, dtype=np.intp)
        self.face_fine = np.concatenate(face_fine)
        self.two_faces = False
        self.edges = (np.concatenate(ei), np.concatenate(ej), np.concatenate(ec))
        self.factor = None


GMRES_ITERATIONS = 20  # more than this with the kept factorization, and it is refreshed


def _sparse_solve(nodes: Nodes, J: sparse.csc_matrix, rhs: FloatArray) -> FloatArray:
    """Solve J x = rhs: GMRES preconditioned with an LU factorization kept from an earlier Jacobian
    (the Jacobian changes slowly from one Newton iteration and time step to the next); a fresh LU when
    that no longer converges quickly."""
    lu = nodes.factor
    if lu is not None:
        count = [0]

        def tick(_: float) -> None:
            count[0] += 1

        pre = splinalg.LinearOperator(J.shape, matvec=lu.solve)
        x, info = splinalg.gmres(
            J,
            rhs,
            rtol=1e-5,
            atol=0.0,
            restart=GMRES_ITERATIONS,
            maxiter=1,
            M=pre,
            callback=tick,
            callback_type="pr_norm",
        )
        if info == 0:
            return np.asarray(x, dtype=float)
    nodes.factor = splinalg.splu(J, permc_spec="MMD_AT_PLUS_A")
    return np.asarray(nodes.factor.solve(rhs), dtype=float)


def _node_at(index: NDArray[np.intp], xis: Sequence[FloatArray], target: Sequence[float]) -> int:
    """Flat number of the node nearest ``target`` (xi per axis)."""
    return int(index[tuple(int(np.argmin(np.abs(x - t))) for x, t in zip(xis, target, strict=True))])


def _outer(vecs: Sequence[FloatArray]) -> FloatArray:
    out = np.asarray(vecs[0], dtype=float)
    for v in vecs[1:]:
        out = np.multiply.outer(out, v)
    return out


class Laws:
    """The step's face laws: law 0 the main face and ambient, law 1 the second face (two-face plates)."""

    def __init__(self, faces: Sequence[tuple[Face, float, float]]) -> None:
        """``faces``: (face, ambient at the step start degC, ambient rate K/s) per law."""
        self.faces = list(faces)
        self.slopes = [_slopes(f.htc.temp_c, f.htc.value) for f, _, _ in faces]

    def flux(self, nodes: Nodes, Ts: FloatArray, t_part: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Flux into the part (W/m^2) at every face entry and its slope in the surface temperature."""
        q = np.empty_like(Ts)
        dq = np.empty_like(Ts)
        for law, (face, a0, rate) in enumerate(self.faces):
            sel = nodes.face_law == law
            if not sel.any():
                continue
            ts = Ts[sel]
            ta = a0 + rate * t_part[nodes.face_part[sel]]
            tp = np.asarray(face.htc.temp_c, dtype=float)
            h = np.interp(ts, tp, face.htc.value)
            knots, s = self.slopes[law]
            if s.size:
                j = np.clip(np.searchsorted(knots, ts, side="right") - 1, 0, s.size - 1)
                slope = np.where((ts >= knots[0]) & (ts < knots[-1]), s[j], 0.0)
            else:
                slope = np.zeros_like(ts)
            qq = h * (ta - ts)
            dd = slope * (ta - ts) - h
            if face.emissivity > 0.0:
                tk, ak = ts + KELVIN, ta + KELVIN
                qq = qq + face.emissivity * SIGMA * (ak**4 - tk**4)
                dd = dd - 4.0 * face.emissivity * SIGMA * tk**3
            q[sel], dq[sel] = qq, dd
        return q, dq


def _slopes(temp_c: Sequence[float], value: Sequence[float]) -> tuple[FloatArray, FloatArray]:
    x = np.asarray(temp_c, dtype=float)
    if x.size < 2:
        return x, np.zeros(0)
    return x, np.diff(np.asarray(value, dtype=float)) / np.diff(x)


@dataclass
class Solved:
    """One implicit solve: node temperatures and enthalpies, heat in per volume on both grids (P,)
    each, and whether Newton converged for each part."""

    T: FloatArray
    H: FloatArray
    C: FloatArray  # rho cp at T
    heat_f: FloatArray
    heat_c: FloatArray
    ok: NDArray[np.bool_]


def implicit_solve(
    nodes: Nodes, laws: Laws, guess: FloatArray, target: FloatArray, t1: FloatArray, g: FloatArray
) -> Solved:
    """Solve vol * (H(T) - target) = g * net(T, t1) for T by Newton's method.

    ``g`` (per part) is the step times the formula's weight: implicit Euler has target = H_n and g = h;
    the two-step formula (BDF2) has target = a H_n - b H_(n-1) and g = c h. ``net`` is the heat flow
    into each node (conduction from its neighbours plus its share of the faces) at the end time ``t1``.
    Plates and bars have tridiagonal Jacobians (one banded solve); blocks and short cylinders a sparse
    one (one sparse LU per iteration, every part a separate block of it).
    """
    gn = g[nodes.part]
    T = guess.copy()
    fn = nodes.face_node
    N = nodes.N
    ok = np.zeros(nodes.P, dtype=bool)
    for _ in range(NEWTON_MAX):
        H, C, Kc, k = nodes.tables.lookup(nodes.base, T)
        q, dq = laws.flux(nodes, T[fn], t1)
        face_diag = np.bincount(fn, weights=-gn[fn] * dq * nodes.face_area, minlength=N)
        if nodes.edges is None:
            flow = np.zeros(N)  # from node j + 1 into node j (zero across part and grid ends)
            flow[:-1] = nodes.cond[:-1] * (Kc[1:] - Kc[:-1])
            net = flow.copy()
            net[1:] -= flow[:-1]
            net += np.bincount(fn, weights=q * nodes.face_area, minlength=N)
            R = nodes.vol * (H - target) - gn * net
            gk = gn * nodes.cond  # weight * conductance to the next node
            ab = np.zeros((3, N))
            ab[1] = nodes.vol * C + face_diag
            ab[1, :-1] += gk[:-1] * k[:-1]
            ab[1, 1:] += gk[:-1] * k[1:]
            ab[0, 1:] = -gk[:-1] * k[1:]  # d R_j / d T_(j+1)
            ab[2, :-1] = -gk[:-1] * k[:-1]  # d R_(j+1) / d T_j
            delta = solve_banded((1, 1), ab, -R, overwrite_ab=True, overwrite_b=True, check_finite=False)
        else:
            ei, ej, ec = nodes.edges
            eflow = ec * (Kc[ej] - Kc[ei])  # from node ej into node ei
            net = np.asarray(
                np.bincount(ei, weights=eflow, minlength=N)
                - np.bincount(ej, weights=eflow, minlength=N)
                + np.bincount(fn, weights=q * nodes.face_area, minlength=N),
                dtype=float,
            )
            R = nodes.vol * (H - target) - gn * net
            ge = gn[ei] * ec
            diag = (
                nodes.vol * C
                + face_diag
                + np.bincount(ei, weights=ge * k[ei], minlength=N)
                + np.bincount(ej, weights=ge * k[ej], minlength=N)
            )
            rows = np.concatenate([ei, ej, np.arange(N)])
            cols = np.concatenate([ej, ei, np.arange(N)])
            vals = np.concatenate([-ge * k[ej], -ge * k[ei], diag])
            J = sparse.csc_matrix((vals, (rows, cols)), shape=(N, N))
            delta = _sparse_solve(nodes, J, -R)
        T = T + delta
        ok = nodes.per_part_max(np.abs(delta)) < NEWTON_TOL_K
        if ok.all():
            break
    H, C = nodes.tables.lookup(nodes.base, T)[:2]
    q, _ = laws.flux(nodes, T[fn], t1)
    flow_in = q * nodes.face_area * g[nodes.face_part]
    heat_f = np.bincount(nodes.face_part, weights=np.where(nodes.face_fine, flow_in, 0.0), minlength=nodes.P)
    heat_c = np.bincount(nodes.face_part, weights=np.where(nodes.face_fine, 0.0, flow_in), minlength=nodes.P)
    return Solved(T, H, C, heat_f / nodes.total, heat_c / nodes.total, ok)


@dataclass
class MarchResult:
    """Read-outs at the reported times of one step and the node temperatures at its end."""

    values: dict[str, FloatArray]  # name -> (P, m): core, surface, second (two-face plates), mean
    heat: FloatArray  # (P, m) heat in per volume since the step start
    error: FloatArray  # (P, m) error estimate, K
    end: FloatArray  # (N,) flat node temperatures at the step end
    steps: NDArray[np.int64]  # (P,) time steps taken by each part


# Local error of BDF2 over its difference from the predictor (a quadratic through T_(n-1), T_n with
# the slope dT/dt at t_n). Taylor expansion at constant step h, with D the third time derivative:
# corrector error +2/9 h^3 D, predictor error -1/3 h^3 D, so the corrector's error is 0.4 of the
# difference.
MILNE = 0.4


def march(
    nodes: Nodes, laws: Laws, T0: FloatArray, offsets: FloatArray, step_k: float, first_dt: FloatArray
) -> MarchResult:
    """March every part through one step from node temperatures ``T0``, reporting at ``offsets`` (s).

    The first time step of each part is implicit Euler with Richardson extrapolation (no history yet;
    the ambient or the face law may have jumped at the step start); the rest are variable-step BDF2 with
    the Milne error estimate. Both are sized so that the local error estimate stays below ``step_k``.
    """
    P, m = nodes.P, offsets.size
    end_t = float(offsets[-1])
    part = nodes.part
    tabs = nodes.tables
    points = _points(nodes)

    def readout(T: FloatArray, heat_f: FloatArray, heat_c: FloatArray, err: FloatArray) -> FloatArray:
        rows = []
        space = np.zeros(P)
        for idx in points.values():
            f, c = T[idx[0]], T[idx[1]]
            rows.append((4.0 * f - c) / 3.0)
            space = np.maximum(space, np.abs(f - c) / 3.0)
        mf, mc = nodes.mean(T)
        rows += [(4.0 * mf - mc) / 3.0, (4.0 * heat_f - heat_c) / 3.0, err + space]
        return np.stack(rows)  # (names, P)

    names = [*points, "mean", "heat", "error"]
    out = np.empty((len(names), P, m))
    hmin = 1e-9 * end_t
    taken = np.ones(P, dtype=np.int64)

    # --- first step: implicit Euler, whole and in halves, extrapolated
    H0 = tabs.lookup(nodes.base, T0)[0]
    h = np.minimum(np.asarray(first_dt, dtype=float), end_t)
    T = T0.copy()
    todo = np.ones(P, dtype=bool)
    est = np.zeros(P)
    Q_f, Q_c = np.zeros(P), np.zeros(P)  # last step's heat in, for the BDF2 energy recursion
    while todo.any():
        hh = np.where(todo, h, 0.0)
        a = implicit_solve(nodes, laws, T0, H0, hh, hh)
        b1 = implicit_solve(nodes, laws, 0.5 * (T0 + a.T), H0, 0.5 * hh, 0.5 * hh)
        b2 = implicit_solve(nodes, laws, a.T, b1.H, hh, 0.5 * hh)
        e = nodes.per_part_max(np.abs(b2.T - a.T))
        solved = a.ok & b1.ok & b2.ok
        fine = solved & ((e <= step_k) | (hh <= hmin)) & todo
        T = np.where(fine[part], 2.0 * b2.T - a.T, T)
        Q_f = np.where(fine, 2.0 * (b1.heat_f + b2.heat_f) - a.heat_f, Q_f)
        Q_c = np.where(fine, 2.0 * (b1.heat_c + b2.heat_c) - a.heat_c, Q_c)
        est = np.where(fine, e, est)
        cut = np.clip(0.9 * np.sqrt(step_k / np.maximum(e, 1e-300)), SHRINK, 1.0)
        h = np.where(todo & ~fine, h * np.where(solved, cut, 0.25), h)
        todo = todo & ~fine
        _guard(todo & ~solved & (hh <= hmin))
    H, C = tabs.lookup(nodes.base, T)[:2]
    t = np.where(h >= end_t, end_t, h)
    heat_f, heat_c = Q_f.copy(), Q_c.copy()
    err_sum = est.copy()
    h_prev = h.copy()
    T_prev, H_prev = T0.copy(), H0
    dTdt = (H - H0) / (h[part] * C)  # the step's own balance gives dT/dt at its end

    r_prev = readout(T0, np.zeros(P), np.zeros(P), np.zeros(P))
    r_now = readout(T, heat_f, heat_c, err_sum)
    t_before = np.zeros(P)  # time of r_prev
    ids = np.arange(P)  # original number of each part still in the arrays
    node_ids = np.arange(nodes.N)
    T_end = np.empty(nodes.N)
    nxt = _emit(
        out, offsets, np.zeros(P, dtype=np.intp), np.ones(P, dtype=bool), t_before, t, r_prev, r_now, ids
    )
    h = np.minimum(h * np.clip(0.9 * np.cbrt(step_k / np.maximum(est, 1e-300)), SHRINK, GROWTH), end_t)
    while True:
        active = nxt < m
        if not active.any():
            break
        if active.sum() < COMPACT * active.size:
            # drop the parts that are done: their end temperatures are final
            nodes, kept = nodes.subset(active)
            T_end[node_ids[~kept]] = T[~kept]
            node_ids = node_ids[kept]
            T, T_prev, H, H_prev, dTdt = T[kept], T_prev[kept], H[kept], H_prev[kept], dTdt[kept]
            t, h, h_prev, t_before, nxt, ids = (
                t[active],
                h[active],
                h_prev[active],
                t_before[active],
                nxt[active],
                ids[active],
            )
            heat_f, heat_c, Q_f, Q_c, err_sum = (
                heat_f[active],
                heat_c[active],
                Q_f[active],
                Q_c[active],
                err_sum[active],
            )
            r_prev, r_now = r_prev[:, active], r_now[:, active]
            P, part, points = nodes.P, nodes.part, _points(nodes)
            active = active[active]
        left = end_t - t
        hh = np.where(active, np.minimum(h, left), 0.0)
        w = hh / h_prev
        a2 = (1.0 + w) ** 2 / (1.0 + 2.0 * w)
        b2c = w * w / (1.0 + 2.0 * w)
        c2 = (1.0 + w) / (1.0 + 2.0 * w)
        hp = h_prev[part]
        s = hh[part]
        pred = T + s * dTdt + (s * s) * (T_prev - T + hp * dTdt) / (hp * hp)
        target = a2[part] * H - b2c[part] * H_prev
        sol = implicit_solve(nodes, laws, pred, target, t + hh, c2 * hh)
        e = MILNE * nodes.per_part_max(np.abs(sol.T - pred))
        good = sol.ok & ((e <= step_k) | (hh <= hmin)) & active
        _guard(active & ~sol.ok & (hh <= hmin))
        sel = good[part]
        new_dTdt = (sol.H - target) / (c2[part] * np.maximum(s, 1e-300) * sol.C)
        T_prev, H_prev = np.where(sel, T, T_prev), np.where(sel, H, H_prev)
        T, H = np.where(sel, sol.T, T), np.where(sel, sol.H, H)
        dTdt = np.where(sel, new_dTdt, dTdt)
        Q_f = np.where(good, b2c * Q_f + sol.heat_f, Q_f)
        Q_c = np.where(good, b2c * Q_c + sol.heat_c, Q_c)
        heat_f = np.where(good, heat_f + Q_f, heat_f)
        heat_c = np.where(good, heat_c + Q_c, heat_c)
        err_sum = np.where(good, err_sum + e, err_sum)
        taken[ids] += good
        t_new = np.where(hh >= left, end_t, t + hh)
        r_new = readout(T, heat_f, heat_c, err_sum)
        nxt = _emit(out, offsets, nxt, good, t, t_new, r_now, r_new, ids, (t_before, r_prev))
        gsel = good[None, :]
        r_prev, r_now = np.where(gsel, r_now, r_prev), np.where(gsel, r_new, r_now)
        t_before = np.where(good, t, t_before)
        h_prev = np.where(good, hh, h_prev)
        t = np.where(good, t_new, t)
        factor = np.clip(0.9 * np.cbrt(step_k / np.maximum(e, 1e-300)), SHRINK, GROWTH)
        grown = hh * np.where(sol.ok, factor, 0.25)
        # a step cut short to end the schedule step does not shrink the proposal
        h = np.where(good & (hh < h), np.maximum(h, grown), grown)
        h = np.maximum(h, hmin)
    T_end[node_ids] = T
    vals = {name: out[i] for i, name in enumerate(names)}
    heat_out = vals.pop("heat")
    err_out = vals.pop("error")
    return MarchResult(vals, heat_out, err_out, T_end, taken)


def _guard(stuck: NDArray[np.bool_]) -> None:
    """Newton cannot fail on the smallest step (the heat capacity term dominates there); if it ever
    does, stop rather than loop."""
    if stuck.any():
        raise ArithmeticError("the march could not solve a time step even at the smallest step size")


def _points(nodes: Nodes) -> dict[str, NDArray[np.intp]]:
    """Reported points: (fine, coarse) node of each part."""
    points = {"core": nodes.core, "surface": nodes.surface}
    if nodes.two_faces:
        points["second"] = nodes.second
    if nodes.corner is not None:
        points["corner"] = nodes.corner
    return points


def _emit(
    out: FloatArray,
    offsets: FloatArray,
    nxt: NDArray[np.intp],
    good: NDArray[np.bool_],
    t0: FloatArray,
    t1: FloatArray,
    r0: FloatArray,
    r1: FloatArray,
    ids: NDArray[np.intp],
    before: tuple[FloatArray, FloatArray] | None = None,
) -> NDArray[np.intp]:
    """Write the read-outs (names, P) at every reported time in (t0, t1] of the parts that stepped:
    the quadratic through the point ``before`` (time, read-outs) and the step's ends when given (its
    error is of the order of the BDF2 step's own), else linear. All read-outs take the same weights, so
    linear relations between them (heat in and mean temperature) hold at the reported times too."""
    m = offsets.size
    nxt = nxt.copy()
    while True:
        due = good & (nxt < m) & (offsets[np.minimum(nxt, m - 1)] <= t1 * (1 + 1e-12))
        if not due.any():
            return nxt
        p = np.nonzero(due)[0]
        c = nxt[p]
        x, x0, x1 = offsets[c], t0[p], t1[p]
        l1 = np.clip((x - x0) / np.maximum(x1 - x0, 1e-300), 0.0, 1.0)
        w0, w1, wm = 1.0 - l1, l1, np.zeros_like(l1)
        if before is not None:
            xm = before[0][p]
            q = x0 > xm
            dm = np.where(q, (xm - x0) * (xm - x1), 1.0)
            d0 = np.where(q, (x0 - xm) * (x0 - x1), 1.0)
            d1 = np.where(q, (x1 - xm) * (x1 - x0), 1.0)
            wm = np.where(q, (x - x0) * (x - x1) / dm, 0.0)
            w0 = np.where(q, (x - xm) * (x - x1) / d0, w0)
            w1 = np.where(q, (x - xm) * (x - x0) / d1, w1)
            out[:, ids[p], c] = wm * before[1][:, p] + w0 * r0[:, p] + w1 * r1[:, p]
        else:
            out[:, ids[p], c] = w0 * r0[:, p] + w1 * r1[:, p]
        nxt[p] += 1

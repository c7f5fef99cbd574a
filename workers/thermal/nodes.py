"""Nodes of the march: grids, property tables and face laws, all parts of a batch in flat arrays.

Plates, two-face plates and bars (``Nodes``) have vertex-centred finite volumes on nodes x = l * f(xi),
with a node on every face and the grid graded towards the exchanging faces; blocks and short cylinders
(``Solid``) have the tensor grid of the same 1-D nodes per axis. Every part is laid out twice: on the
full grid and on every second node of it (the coarse grid of the grid estimate). Each part's nodes, fine
then coarse, are contiguous; couplings are cut between parts and grids.

Symbols: ``vol`` node volume and ``cond`` face area over node distance (per unit face area for plates,
per radian for bars); H enthalpy per volume (J/m^3); Kc the Kirchhoff integral int k dT (W/m).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from workers.thermal.constants import KELVIN, SIGMA
from workers.thermal.layout import Layout
from workers.thermal.properties import integral
from workers.thermal.spec import Face, FloatArray, Material

IntArray = NDArray[np.intp]

GRADING = 0.8  # share of the node spacing removed at the exchanging faces (0 = uniform)
TABLE_STEP_K = 0.5  # spacing of the property tables
TABLE_RANGE_C = (-275.0, 2500.0)  # beyond, the (flat-ended) curves are extended exactly


def node_xi(axis: Layout, intervals: int) -> FloatArray:
    """Dimensionless node positions on [0, 1] of a 1-D axis, graded towards the exchanging face(s)."""
    s = np.linspace(0.0, 1.0, intervals + 1)
    if axis == Layout.PLATE2:
        xi = s - GRADING * np.sin(2.0 * np.pi * s) / (2.0 * np.pi)
    else:
        xi = s + GRADING * np.sin(np.pi * s) / np.pi
    xi[0], xi[-1] = 0.0, 1.0
    return np.asarray(xi, dtype=float)


def _axis(axis: Layout, length: float, xi: FloatArray) -> tuple[FloatArray, FloatArray, float, float]:
    """Volumes, conductances (to the next node), outer face area and section volume of one grid."""
    mid = np.concatenate([[0.0], 0.5 * (xi[1:] + xi[:-1]), [1.0]])
    if axis == Layout.BAR:
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
                        m.density * integral(m.specific_heat, self.temps),
                        m.density * m.specific_heat(self.temps),
                        integral(m.conductivity, self.temps),
                        m.conductivity(self.temps),
                    ]
                )
            )
        # one flat table per quantity (materials one after the other): np.take on a 1-D array is about
        # ten times faster than gathering rows of a 2-D one
        self.table = [np.ascontiguousarray(q) for q in np.stack(rows, axis=1).reshape(4, -1)]
        self.slope = [np.append(np.diff(q), 0.0) for q in self.table]

    def lookup(self, base: IntArray, T: FloatArray, count: int = 4) -> list[FloatArray]:
        """H, C = rho cp, Kc, k (the first ``count`` of them) at temperatures ``T`` of nodes whose
        material's table starts at ``base`` (material index * table size)."""
        x = (T - self.lo) / TABLE_STEP_K
        i = np.clip(x.astype(np.intp), 0, self.size - 2)
        f = x - i
        j = base + i
        pairs = zip(self.table[:count], self.slope[:count], strict=True)
        return [np.take(q, j) + f * np.take(d, j) for q, d in pairs]


@dataclass(frozen=True)
class PartGrid:
    """One part as the march sees it."""

    layout: Layout  # PLATE, PLATE2 or BAR
    length: float  # half thickness, full thickness (PLATE2) or radius, m
    material: int  # index into the materials given to ``Nodes``


class Nodes:
    """All nodes of all parts on both grids, flat; each part's fine then coarse nodes are contiguous."""

    def __init__(self, parts: Sequence[PartGrid], materials: Sequence[Material], intervals: int) -> None:
        self.P = len(parts)
        self.tables = Tables(materials)
        vol, cond, part, base, fine = [], [], [], [], []
        face_node, face_part, face_area, face_law, face_fine = [], [], [], [], []
        self.core = np.full((2, self.P), -1, dtype=np.intp)  # (fine, coarse) node of each reported point
        self.surface = np.full((2, self.P), -1, dtype=np.intp)
        self.second = np.full((2, self.P), -1, dtype=np.intp)
        self.total = np.full(self.P, np.nan)
        # a two-face plate's grid spans its whole thickness: twice the intervals of a half thickness
        self.intervals = {Layout.PLATE: intervals, Layout.BAR: intervals, Layout.PLATE2: 2 * intervals}
        self.xi = {k: node_xi(k, n) for k, n in self.intervals.items()}
        self.layouts = [pg.layout for pg in parts]
        start = 0
        self.starts = np.full(self.P, -1, dtype=np.intp)
        for p, pg in enumerate(parts):
            self.starts[p] = start
            full = self.intervals[pg.layout]
            for g, n_int in enumerate((full, full // 2)):
                xi = self.xi[pg.layout][:: 1 if g == 0 else 2]
                v, c, area, total = _axis(pg.layout, pg.length, xi)
                n = xi.size
                vol.append(v)
                cond.append(np.append(c, 0.0))
                part.append(np.full(n, p))
                base.append(np.full(n, pg.material * self.tables.size))
                fine.append(np.full(n, g == 0))
                last = start + n_int
                if g == 0:
                    self.total[p] = total
                if pg.layout == Layout.PLATE2:
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
        _check_filled(self)

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
        new.layouts = [k for k, kept in zip(self.layouts, keep, strict=True) if kept]
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
        new.edges, new.corner = None, None
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
        """Flat node temperatures from each part's profile on the fine nodes of its layout."""
        if len(profiles) != self.P:
            raise ValueError(f"{len(profiles)} profiles for {self.P} parts")
        T = np.concatenate([np.concatenate([fine, fine[::2]]) for fine in profiles])
        if T.size != self.N:
            raise ValueError("a profile does not have its part's number of fine nodes")
        return T

    def fine_profile(self, T: FloatArray, parts: slice) -> FloatArray:
        """Fine-grid temperatures (p, n) of the parts ``parts``, which share a layout."""
        layouts = set(self.layouts[parts])
        assert len(layouts) == 1
        n = self.xi[layouts.pop()].size
        idx = self.starts[parts, None] + np.arange(n)[None, :]
        return np.asarray(T[idx], dtype=float)


@dataclass(frozen=True)
class SolidGrid:
    """One block or short cylinder as the march sees it: its axes (a plate axis or a bar's radius),
    their lengths (half sizes, radius), its material, and the xi of its reported points."""

    axes: tuple[Layout, ...]  # PLATE or BAR each
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
        self.layouts = [Layout.PLATE] * self.P  # not used for profiles: solids never hand one over
        vol, part, base, fine, ei, ej, ec = [], [], [], [], [], [], []
        face_node, face_part, face_area, face_fine = [], [], [], []
        self.core = np.full((2, self.P), -1, dtype=np.intp)
        self.surface = np.full((2, self.P), -1, dtype=np.intp)
        self.corner = np.full((2, self.P), -1, dtype=np.intp)
        self.second = np.full((2, self.P), -1, dtype=np.intp)
        self.total = np.full(self.P, np.nan)
        self.starts = np.full(self.P, -1, dtype=np.intp)
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
        _check_filled(self)


def _check_filled(nodes: Nodes) -> None:
    """Every part got its reported nodes, start and section volume (the loops above set them all)."""
    index = [nodes.core, nodes.surface, nodes.starts] + ([nodes.corner] if nodes.corner is not None else [])
    if any((a < 0).any() for a in index) or np.isnan(nodes.total).any():
        raise ValueError("a part of the march has no reported node or no volume")


def _node_at(index: NDArray[np.intp], xis: Sequence[FloatArray], target: Sequence[float]) -> int:
    """Flat number of the node nearest ``target`` (xi per axis)."""
    return int(index[tuple(int(np.argmin(np.abs(x - t))) for x, t in zip(xis, target, strict=True))])


def _outer(vecs: Sequence[FloatArray]) -> FloatArray:
    out = np.asarray(vecs[0], dtype=float)
    for v in vecs[1:]:
        out = np.multiply.outer(out, v)
    return out


Law = tuple[Face, float, float]


class Laws:
    """The step's face laws: law 0 the main face and ambient, law 1 a two-face plate's lower face.

    Both laws always exist: a step that names no lower face uses its main face's law on both faces
    (README, "The batch file"), so every face entry of every part gets a flux whatever the step says.
    """

    def __init__(self, main: Law, lower: Law | None = None) -> None:
        """Each law: (face, ambient at the step start degC, ambient rate K/s); ``lower`` defaults to
        ``main``."""
        self.faces = [main, main if lower is None else lower]
        # per law: the h curve's knots, values and segment slopes, as arrays once
        self.curves = [
            (np.asarray(f.htc.temp_c, dtype=float), np.asarray(f.htc.value, dtype=float))
            for f, _, _ in self.faces
        ]
        self.slopes = [_slopes(x, v) for x, v in self.curves]

    def flux(self, nodes: Nodes, Ts: FloatArray, t_part: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Flux into the part (W/m^2) at every face entry and its slope in the surface temperature."""
        if nodes.face_law.size and not 0 <= int(nodes.face_law.min()) <= int(nodes.face_law.max()) <= 1:
            raise ValueError("a face entry names a law other than the main (0) or the lower (1) face")
        q = np.zeros_like(Ts)
        dq = np.zeros_like(Ts)
        for law, (face, a0, rate) in enumerate(self.faces):
            sel = nodes.face_law == law
            if not sel.any():
                continue
            ts = Ts[sel]
            ta = a0 + rate * t_part[nodes.face_part[sel]]
            knots, values = self.curves[law]
            h = np.interp(ts, knots, values)
            s = self.slopes[law]
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


def _slopes(x: FloatArray, v: FloatArray) -> FloatArray:
    """Slope of each segment of a piecewise-linear curve (none for a one-point curve)."""
    return np.diff(v) / np.diff(x) if x.size > 1 else np.zeros(0)

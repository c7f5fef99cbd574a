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
- Vectorised: all nodes of all parts and both grids sit in one flat array; the march owns a ``Solver``
  that knows how the nodes are coupled: ``ChainSolver`` (1-D parts, one tridiagonal solve over all of
  them, couplings cut between parts and grids) or ``SparseSolver`` (tensor grids).

The grids, property tables and face laws are in ``nodes``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
from numpy.typing import NDArray
from scipy import sparse
from scipy.linalg import solve_banded
from scipy.sparse import linalg as splinalg

from workers.thermal.nodes import Laws, Nodes, Tables
from workers.thermal.phases.carried import NodePhases, put
from workers.thermal.spec import FloatArray

# Newton stops once no node moves by more than this; convergence is quadratic where the properties
# and h are smooth, so what remains is far smaller
NEWTON_TOL_K = 1e-3
NEWTON_MAX = 12
GROWTH = 2.0  # largest growth of a time step over the one before
SHRINK = 0.2  # largest cut after a rejected time step
COMPACT = 0.6  # once fewer than this share of the parts still step, the finished ones are dropped


GMRES_ITERATIONS = 20  # more than this with the kept factorization, and it is refreshed


class Solver(Protocol):
    """Conduction between the nodes and the solve of the Newton system, for one way of coupling them.

    The Jacobian of a node's balance is ``diag`` on the diagonal plus, for every coupling of conductance
    c between nodes i and j, the Kirchhoff terms g c k_i and g c k_j (g the part's weight); ``net`` is
    the conduction flow into every node from the Kirchhoff integrals ``Kc``.
    """

    def net(self, nodes: Nodes, Kc: FloatArray) -> FloatArray: ...

    def solve(
        self, nodes: Nodes, gn: FloatArray, k: FloatArray, diag: FloatArray, rhs: FloatArray
    ) -> FloatArray: ...

    def reset(self) -> None:
        """The nodes changed (parts dropped out): forget anything kept for the old ones."""
        ...


class ChainSolver:
    """Plates, two-face plates and bars: each part's nodes are a chain (couplings to the next node,
    cut between parts and grids), so the Jacobian is tridiagonal and one banded solve serves all."""

    def net(self, nodes: Nodes, Kc: FloatArray) -> FloatArray:
        flow = np.zeros(nodes.N)  # from node j + 1 into node j (zero across part and grid ends)
        flow[:-1] = nodes.cond[:-1] * (Kc[1:] - Kc[:-1])
        net = flow.copy()
        net[1:] -= flow[:-1]
        return net

    def solve(
        self, nodes: Nodes, gn: FloatArray, k: FloatArray, diag: FloatArray, rhs: FloatArray
    ) -> FloatArray:
        gk = gn * nodes.cond  # weight * conductance to the next node
        ab = np.zeros((3, nodes.N))
        ab[1] = diag
        ab[1, :-1] += gk[:-1] * k[:-1]
        ab[1, 1:] += gk[:-1] * k[1:]
        ab[0, 1:] = -gk[:-1] * k[1:]  # d R_j / d T_(j+1)
        ab[2, :-1] = -gk[:-1] * k[:-1]  # d R_(j+1) / d T_j
        return np.asarray(
            solve_banded((1, 1), ab, rhs, overwrite_ab=True, overwrite_b=True, check_finite=False),
            dtype=float,
        )

    def reset(self) -> None:
        return None


class SparseSolver:
    """Tensor grids (blocks, short cylinders): the couplings are ``nodes.edges``; the Jacobian is solved
    by GMRES preconditioned with an LU factorization kept from an earlier Jacobian (it changes slowly
    from one Newton iteration and time step to the next), a fresh LU when that no longer converges
    within ``GMRES_ITERATIONS``."""

    def __init__(self) -> None:
        self.lu: Any = None

    def net(self, nodes: Nodes, Kc: FloatArray) -> FloatArray:
        assert nodes.edges is not None
        ei, ej, ec = nodes.edges
        eflow = ec * (Kc[ej] - Kc[ei])  # from node ej into node ei
        N = nodes.N
        return np.asarray(
            np.bincount(ei, weights=eflow, minlength=N) - np.bincount(ej, weights=eflow, minlength=N),
            dtype=float,
        )

    def solve(
        self, nodes: Nodes, gn: FloatArray, k: FloatArray, diag: FloatArray, rhs: FloatArray
    ) -> FloatArray:
        assert nodes.edges is not None
        ei, ej, ec = nodes.edges
        N = nodes.N
        ge = gn[ei] * ec
        full = (
            diag
            + np.bincount(ei, weights=ge * k[ei], minlength=N)
            + np.bincount(ej, weights=ge * k[ej], minlength=N)
        )
        rows = np.concatenate([ei, ej, np.arange(N)])
        cols = np.concatenate([ej, ei, np.arange(N)])
        vals = np.concatenate([-ge * k[ej], -ge * k[ei], full])
        J = sparse.csc_matrix((vals, (rows, cols)), shape=(N, N))
        if self.lu is not None:
            pre = splinalg.LinearOperator(J.shape, matvec=self.lu.solve)
            x, info = splinalg.gmres(J, rhs, rtol=1e-5, atol=0.0, restart=GMRES_ITERATIONS, maxiter=1, M=pre)
            if info == 0:
                return np.asarray(x, dtype=float)
        self.lu = splinalg.splu(J, permc_spec="MMD_AT_PLUS_A")
        return np.asarray(self.lu.solve(rhs), dtype=float)

    def reset(self) -> None:
        self.lu = None


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
    nodes: Nodes,
    laws: Laws,
    solver: Solver,
    guess: FloatArray,
    target: FloatArray,
    t1: FloatArray,
    g: FloatArray,
) -> Solved:
    """Solve vol * (H(T) - target) = g * net(T, t1) for T by Newton's method.

    ``g`` (per part) is the step times the formula's weight: implicit Euler has target = H_n and g = h;
    the two-step formula (BDF2) has target = a H_n - b H_(n-1) and g = c h. ``net`` is the heat flow
    into each node (conduction from its neighbours plus its share of the faces) at the end time ``t1``;
    ``solver`` knows how the nodes are coupled and solves each Newton system.
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
        net = solver.net(nodes, Kc) + np.bincount(fn, weights=q * nodes.face_area, minlength=N)
        R = nodes.vol * (H - target) - gn * net
        delta = solver.solve(nodes, gn, k, nodes.vol * C + face_diag, -R)
        T = T + delta
        ok = nodes.per_part_max(np.abs(delta)) < NEWTON_TOL_K
        if ok.all():
            break
    H, C = nodes.tables.lookup(nodes.base, T, 2)
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
    rates: dict[str, FloatArray]  # name -> (P, m) dT/dt of the reported points (not mean), K/s
    phases: NodePhases | None = None  # (N nodes) the phases at the step end, when marched with them


# Local error of BDF2 over its difference from the predictor (a quadratic through T_(n-1), T_n with
# the slope dT/dt at t_n). Taylor expansion at constant step h, with D the third time derivative:
# corrector error +2/9 h^3 D, predictor error -1/3 h^3 D, so the corrector's error is 0.4 of the
# difference.
MILNE = 0.4


def march(
    nodes: Nodes,
    laws: Laws,
    solver: Solver,
    T0: FloatArray,
    offsets: FloatArray,
    step_k: float,
    first_dt: FloatArray,
    phases: NodePhases | None = None,
    phase_change: float = 0.05,
) -> MarchResult:
    """March every part through one step from node temperatures ``T0``, reporting at ``offsets`` (s).

    The first time step of each part is implicit Euler with Richardson extrapolation (no history yet;
    the ambient or the face law may have jumped at the step start); the rest are variable-step BDF2 with
    the Milne error estimate. Both are sized so that the local error estimate stays below ``step_k``.

    ``phases``: the nodes' phase state at the step start when some steels transform (their tables hold
    the base curve, ``phases.carried``). After each solved time step the phases move; a step is taken
    only if no node's austenite fraction changes by more than ``phase_change``, and the latent heat
    released is placed in its node at constant enthalpy (the only place the march meets the phases).
    """
    P, m = nodes.P, offsets.size
    end_t = float(offsets[-1])
    part = nodes.part
    tabs = nodes.tables
    points = _points(nodes)

    def readout(
        T: FloatArray, heat_f: FloatArray, heat_c: FloatArray, err: FloatArray, slope: FloatArray
    ) -> FloatArray:
        rows = []
        space = np.zeros(P)
        for idx in points.values():
            f, c = T[idx[0]], T[idx[1]]
            rows.append((4.0 * f - c) / 3.0)
            space = np.maximum(space, np.abs(f - c) / 3.0)
        mf, mc = nodes.mean(T)
        rows += [(4.0 * mf - mc) / 3.0, (4.0 * heat_f - heat_c) / 3.0, err + space]
        rows += [(4.0 * slope[idx[0]] - slope[idx[1]]) / 3.0 for idx in points.values()]
        return np.stack(rows)  # (names, P)

    names = [*points, "mean", "heat", "error", *(f"{p}_rate" for p in points)]
    out = np.full((len(names), P, m), np.nan)  # every reported time is written by _emit
    hmin = 1e-9 * end_t
    taken = np.ones(P, dtype=np.int64)

    # --- first step: implicit Euler, whole and in halves, extrapolated
    H0 = tabs.lookup(nodes.base, T0, 1)[0]
    h = np.minimum(np.asarray(first_dt, dtype=float), end_t)
    T = T0.copy()
    todo = np.ones(P, dtype=bool)
    est = np.zeros(P)
    Q_f, Q_c = np.zeros(P), np.zeros(P)  # last step's heat in, for the BDF2 energy recursion
    released = np.zeros(nodes.N)  # latent heat of the accepted first steps, J/m^3
    phase_end = phases
    while todo.any():
        hh = np.where(todo, h, 0.0)
        a = implicit_solve(nodes, laws, solver, T0, H0, hh, hh)
        b1 = implicit_solve(nodes, laws, solver, 0.5 * (T0 + a.T), H0, 0.5 * hh, 0.5 * hh)
        b2 = implicit_solve(nodes, laws, solver, a.T, b1.H, hh, 0.5 * hh)
        e = nodes.per_part_max(np.abs(b2.T - a.T))
        solved = a.ok & b1.ok & b2.ok
        fine = solved & ((e <= step_k) | (hh <= hmin)) & todo
        cand = 2.0 * b2.T - a.T
        pcut = np.ones(P)
        if phases is not None:
            tried, rel, change = phases.trial(T0, cand, hh[part])
            moved = nodes.per_part_max(change)
            fine &= (moved <= phase_change) | (hh <= hmin)
            pcut = np.clip(0.9 * phase_change / np.maximum(moved, 1e-300), SHRINK, 1.0)
            phase_end = tried if phase_end is None else phase_end.take(tried, fine[part])
            released = np.where(fine[part], rel, released)
        T = np.where(fine[part], cand, T)
        Q_f = np.where(fine, 2.0 * (b1.heat_f + b2.heat_f) - a.heat_f, Q_f)
        Q_c = np.where(fine, 2.0 * (b1.heat_c + b2.heat_c) - a.heat_c, Q_c)
        est = np.where(fine, e, est)
        cut = np.clip(0.9 * np.sqrt(step_k / np.maximum(e, 1e-300)), SHRINK, 1.0)
        h = np.where(todo & ~fine, h * np.where(solved, np.minimum(cut, pcut), 0.25), h)
        todo = todo & ~fine
        _guard(todo & ~solved & (hh <= hmin))
    phases = phase_end
    H, C = tabs.lookup(nodes.base, T, 2)
    T_unsettled = T
    if phases is not None:
        T, H, C = _warm(tabs, nodes.base, T, H + released)
    t = np.where(h >= end_t, end_t, h)
    heat_f, heat_c = Q_f.copy(), Q_c.copy()
    err_sum = est.copy()
    h_prev = h.copy()
    # history in the frame of the phases now (BDF2 on the total enthalpy with the phases held)
    T_prev, H_prev = T0 + (T - T_unsettled), H0 + released
    dTdt = (H - H_prev) / (h[part] * C)  # the step's own balance gives dT/dt at its end

    r_prev = readout(T0, np.zeros(P), np.zeros(P), np.zeros(P), rate(nodes, laws, solver, T0, np.zeros(P)))
    r_now = readout(T, heat_f, heat_c, err_sum, rate(nodes, laws, solver, T, t))
    t_before = np.zeros(P)  # time of r_prev
    ids = np.arange(P)  # original number of each part still in the arrays
    node_ids = np.arange(nodes.N)
    T_end = np.full(nodes.N, np.nan)  # every node is written when its part leaves or at the end
    record = None if phases is None else phases.subset(slice(None))  # the phases, likewise
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
            solver.reset()
            T_end[node_ids[~kept]] = T[~kept]
            if phases is not None and record is not None:
                put(record, node_ids[~kept], phases.subset(~kept))
                phases = phases.subset(kept)
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
        sol = implicit_solve(nodes, laws, solver, pred, target, t + hh, c2 * hh)
        e = MILNE * nodes.per_part_max(np.abs(sol.T - pred))
        good = sol.ok & ((e <= step_k) | (hh <= hmin)) & active
        pfactor = np.full(P, GROWTH)
        if phases is not None:
            tried, rel, change = phases.trial(T, sol.T, s)
            moved = nodes.per_part_max(change)
            good &= (moved <= phase_change) | (hh <= hmin)
            pfactor = np.clip(0.9 * phase_change / np.maximum(moved, 1e-300), SHRINK, GROWTH)
        _guard(active & ~sol.ok & (hh <= hmin))
        sel = good[part]
        new_dTdt = (sol.H - target) / (c2[part] * np.maximum(s, 1e-300) * sol.C)
        T_prev, H_prev = np.where(sel, T, T_prev), np.where(sel, H, H_prev)
        T, H = np.where(sel, sol.T, T), np.where(sel, sol.H, H)
        dTdt = np.where(sel, new_dTdt, dTdt)
        if phases is not None:
            phases = phases.take(tried, sel)
            rel = np.where(sel, rel, 0.0)
            if rel.any():
                settled, H, _ = _warm(tabs, nodes.base, T, H + rel)
                T_prev = T_prev + (settled - T)
                H_prev = H_prev + rel
                T = settled
        Q_f = np.where(good, b2c * Q_f + sol.heat_f, Q_f)
        Q_c = np.where(good, b2c * Q_c + sol.heat_c, Q_c)
        heat_f = np.where(good, heat_f + Q_f, heat_f)
        heat_c = np.where(good, heat_c + Q_c, heat_c)
        err_sum = np.where(good, err_sum + e, err_sum)
        taken[ids] += good
        t_new = np.where(hh >= left, end_t, t + hh)
        r_new = readout(T, heat_f, heat_c, err_sum, dTdt)  # a BDF2 step's dT/dt is its right-hand side
        nxt = _emit(out, offsets, nxt, good, t, t_new, r_now, r_new, ids, (t_before, r_prev))
        gsel = good[None, :]
        r_prev, r_now = np.where(gsel, r_now, r_prev), np.where(gsel, r_new, r_now)
        t_before = np.where(good, t, t_before)
        h_prev = np.where(good, hh, h_prev)
        t = np.where(good, t_new, t)
        factor = np.minimum(np.clip(0.9 * np.cbrt(step_k / np.maximum(e, 1e-300)), SHRINK, GROWTH), pfactor)
        grown = hh * np.where(sol.ok, factor, 0.25)
        # a step cut short to end the schedule step does not shrink the proposal
        h = np.where(good & (hh < h), np.maximum(h, grown), grown)
        h = np.maximum(h, hmin)
    T_end[node_ids] = T
    if phases is not None and record is not None:
        put(record, node_ids, phases)
    if np.isnan(out).any() or np.isnan(T_end).any():
        raise ArithmeticError("the march left a reported time or an end temperature unset")
    vals = {name: out[i] for i, name in enumerate(names)}
    heat_out = vals.pop("heat")
    err_out = vals.pop("error")
    rates = {p: vals.pop(f"{p}_rate") for p in _points(nodes)}
    return MarchResult(vals, heat_out, err_out, T_end, taken, rates, record)


def rate(nodes: Nodes, laws: Laws, solver: Solver, T: FloatArray, t_part: FloatArray) -> FloatArray:
    """dT/dt of every node at temperatures ``T`` and step times ``t_part`` (per part): the march's
    right-hand side, the heat flowing into each node over its heat capacity."""
    _, C, Kc = nodes.tables.lookup(nodes.base, T, 3)
    fn = nodes.face_node
    q, _ = laws.flux(nodes, T[fn], t_part)
    net = solver.net(nodes, Kc) + np.bincount(fn, weights=q * nodes.face_area, minlength=nodes.N)
    return np.asarray(net / (nodes.vol * C), dtype=float)


def _warm(tabs: Tables, base: NDArray[np.intp], T: FloatArray, H: FloatArray) -> list[FloatArray]:
    """Temperatures whose table enthalpy is ``H`` (J/m^3), from ``T``: where latent heat was placed.

    Newton on the piecewise-linear table enthalpy; returns T, H and rho cp at T."""
    for _ in range(NEWTON_MAX):
        Hn, Cn = tabs.lookup(base, T, 2)
        delta = (H - Hn) / Cn
        T = T + delta
        if np.max(np.abs(delta), initial=0.0) < 1e-9:
            break
    Hn, Cn = tabs.lookup(base, T, 2)
    return [T, Hn, Cn]


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

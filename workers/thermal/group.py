"""One group of same-layout parts through the linear steps of a schedule, by exact series.

Symbols: theta = T - s, the excess over the offset s(xi, t) (the ambient for symmetric layouts, the
straight steady line through both ambients for a two-face plate); A the coefficient tensor of theta on
the current modes; K the decay rates alpha * sum(lam_i^2 / l_i^2) in 1/s; S the coefficients of ds/dt
(ramps); within a step every coefficient obeys A' = -K A - S, solved exactly:
A(t) = A0 exp(-K t) - S t phi(K t).

At each step start the profile is re-expanded on the new modes with closed-form transfer matrices,
plus the projection of the change of offset (a new ambient, a new steady line); after a marched step
the node profile is projected onto the modes instead.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from workers.thermal import eigen, layout, modes, tensor
from workers.thermal.layout import AXES, TAIL, Layout
from workers.thermal.phases.carried import NodePhases
from workers.thermal.properties import slowest_diffusivity
from workers.thermal.spec import Face, FloatArray, PartThermal, Step, Tolerance

_CHUNK = 4_000_000  # elements of exp(-K t) evaluated at once


@dataclass(frozen=True)
class FaceDef:
    """One pair of faces (or one face of a two-face plate) of an axis."""

    axis: int
    xi: float
    geo: float  # face area per volume times the axis length: 1 for plates, 2 for bars
    sign: float  # +1 when the outward normal points to +xi
    second: bool  # uses the step's second face and ambient


FACES: dict[Layout, tuple[FaceDef, ...]] = {
    Layout.PLATE: (FaceDef(0, 1.0, 1.0, 1.0, False),),
    Layout.PLATE2: (FaceDef(0, 0.0, 1.0, -1.0, False), FaceDef(0, 1.0, 1.0, 1.0, True)),
    Layout.BAR: (FaceDef(0, 1.0, 2.0, 1.0, False),),
    Layout.BLOCK: tuple(FaceDef(i, 1.0, 1.0, 1.0, False) for i in range(3)),
    Layout.CYLINDER: (FaceDef(0, 1.0, 2.0, 1.0, False), FaceDef(1, 1.0, 1.0, 1.0, False)),
}


@dataclass(frozen=True)
class State:
    """Where a group stands at the end of a step: what the next step starts from, whatever its method.

    A series leaves modes, coefficients A and the offset line sA + sB xi. A marched step (1-D layouts,
    see ``line``) leaves the profile as node temperatures instead, ``profile`` = (xi (n,), T (P, n)),
    piecewise linear between the nodes and added to the offset line (zero then), and ``carry``, the
    march's own end state, from which a following marched step continues exactly.
    """

    modes: list[modes.Modes] | None
    A: FloatArray | None
    sA: FloatArray
    sB: FloatArray
    profile: tuple[FloatArray, FloatArray] | None = None
    carry: FloatArray | None = None
    phases: NodePhases | None = None  # with ``carry``: the march's phase state of the same nodes

    @staticmethod
    def uniform(temp_c: FloatArray) -> State:
        return State(None, None, np.asarray(temp_c, dtype=float).copy(), np.zeros(len(temp_c)))

    def temperatures(self, xi: FloatArray) -> FloatArray:
        """Temperatures (P, n) of a 1-D layout at the points ``xi`` (n,)."""
        T = self.sA[:, None] + self.sB[:, None] * xi[None, :]
        if self.A is not None and self.modes is not None:
            X = _spread(self.modes[0]).at(xi[None, None, :])  # (P, M, n)
            T = T + np.einsum("pm,pmn->pn", self.A, X)
        if self.profile is not None:
            px, pT = self.profile
            T = T + np.stack([np.interp(xi, px, row) for row in pT])
        return np.asarray(T, dtype=float)


@dataclass(frozen=True)
class Coefficients:
    """The constants of a linear step: face coefficients h (P, F) W/m^2/K, conductivity k (P,) W/m/K
    and heat capacity rc (P,) J/m^3/K."""

    h: FloatArray
    k: FloatArray
    rc: FloatArray


@dataclass(frozen=True)
class Sub:
    """A series step ready to evaluate: its modes, starting coefficients, decay and source."""

    modes: list[modes.Modes]
    A0: FloatArray
    K: FloatArray
    S: FloatArray
    sA: FloatArray
    sB: FloatArray
    dsA: FloatArray
    dsB: FloatArray
    k: FloatArray
    heat_jump: FloatArray  # heat per volume carried by the dropped modes, delivered at once
    heat_rate: FloatArray  # heat per volume and second a ramp drives through the dropped modes
    fn: tuple[list[str], FloatArray, FloatArray, FloatArray]  # read-out weights, see Group.functionals


class Group:
    """Parts of one layout, with everything the series need per part as arrays."""

    def __init__(self, layout_: Layout, parts: Sequence[PartThermal], tol: Tolerance) -> None:
        self.layout = layout_
        self.axes = AXES[layout_]
        self.faces = FACES[layout_]
        self.P = len(parts)
        self.parts = list(parts)
        self.lengths = np.array([layout.axis_lengths(layout_, p) for p in parts], dtype=float)
        self.points = layout.points(layout_, self.lengths)
        self.initial = np.array([p.initial_c for p in parts], dtype=float)
        self.alpha_min = np.array([slowest_diffusivity(p.material) for p in parts], dtype=float)
        self.tol = tol
        self.n_modes: tuple[int, ...] = ()

    # ----------------------------------------------------------------- set-up
    def choose_modes(self, tau_s: float, span_k: float, rate_k_s: float, alpha: FloatArray) -> None:
        """Mode counts whose first dropped term is below the tolerance ``tau_s`` after a step start.

        ``alpha`` is the diffusivity of each part (m^2/s).
        """
        d = len(self.axes)
        budget = self.tol.series_k / d / 3.0 ** (d - 1)
        n = []
        for i, axis in enumerate(self.axes):
            ell2 = self.lengths[:, i] ** 2
            decay = float(np.min(alpha * tau_s / ell2))
            forced = float(np.max(abs(rate_k_s) * ell2 / alpha))
            n.append(layout.choose_modes(axis, d, decay, span_k, forced, budget))
        self.n_modes = tuple(n)

    def bound(self, tau_s: FloatArray, span_k: FloatArray, rate_k_s: float, alpha: FloatArray) -> FloatArray:
        """Truncation bound (P, m) at times ``tau_s`` after a step start, for profiles of span ``span_k``
        and an ambient ramping at ``rate_k_s``."""
        total = np.zeros((self.P, tau_s.size))
        heads = []
        tails = []
        for i, axis in enumerate(self.axes):
            ell2 = self.lengths[:, i : i + 1] ** 2
            decay = alpha[:, None] * tau_s[None, :] / ell2
            h, t = layout.tail_sums(axis, self.n_modes[i], decay)
            lam = layout.lower_roots(axis, self.n_modes[i] + TAIL)
            lag = (
                layout.forced_terms(axis, lam)[self.n_modes[i] :].sum()
                * abs(rate_k_s)
                * ell2
                / alpha[:, None]
            )
            heads.append(h)
            tails.append(span_k[:, None] * t + lag)
        for i in range(len(self.axes)):
            term = tails[i].copy()
            for j in range(len(self.axes)):
                if j != i:
                    term = term * (heads[j] + tails[j] / np.maximum(span_k[:, None], 1e-12))
            total = total + term
        return total

    # ----------------------------------------------------------- coefficients
    def face_specs(self, step: Step) -> list[tuple[Face, Callable[[float], float]]]:
        """Face law and ambient (as a function of step time) of every face of the layout."""

        # ambients are linear in step time, extended past the step's end so that a slope taken at
        # the last instant is still the ramp's
        start = step.ambient_c if step.ambient_start_c is None else step.ambient_start_c
        rate = (step.ambient_c - start) / step.duration_s

        def main(t: float) -> float:
            return start + rate * t

        def second(t: float) -> float:
            return main(t) if step.second_ambient_c is None else step.second_ambient_c

        out: list[tuple[Face, Callable[[float], float]]] = []
        for f in self.faces:
            if f.second and step.second_face is not None:
                out.append((step.second_face, second))
            else:
                out.append((step.face, main))
        return out

    def coefficients(self, specs: Sequence[tuple[Face, Callable[[float], float]]]) -> Coefficients:
        """h, k and rho c of a linear step (constant h, no radiation, constant properties)."""
        if not all(face.is_linear for face, _ in specs) or not all(
            p.material.is_constant for p in self.parts
        ):
            raise ValueError("a series step needs constant h, no radiation and constant properties")
        h = np.array([[face.htc.value[0] for face, _ in specs]] * self.P, dtype=float)
        k = np.array([p.material.conductivity.value[0] for p in self.parts], dtype=float)
        rc = np.array([p.material.density * p.material.specific_heat.value[0] for p in self.parts])
        return Coefficients(h, k, rc)

    # ------------------------------------------------------------------ steps
    def _make_modes(self, co: Coefficients, guess: list[modes.Modes] | None) -> list[modes.Modes]:
        out: list[modes.Modes] = []
        for i, axis in enumerate(self.axes):
            n = self.n_modes[i]
            g = guess[i].z[:, :n] if guess is not None and guess[i].z.shape[1] >= n else None
            ell = self.lengths[:, i]
            if axis == Layout.PLATE2:
                with np.errstate(invalid="ignore"):
                    B1 = co.h[:, 0] * ell / co.k
                    B2 = co.h[:, 1] * ell / co.k
                z = eigen.two_face_roots(B1, B2, n, g)
                out.append(modes.TrigModes.two_face(z, eigen.biot_weight(B1)))
                continue
            fi = next(j for j, f in enumerate(self.faces) if f.axis == i)
            Bi = co.h[:, fi] * ell / co.k
            if axis == Layout.PLATE:
                out.append(modes.TrigModes.symmetric(eigen.plate_roots(Bi, n, g)))
            else:
                out.append(modes.BesselModes(eigen.bar_roots(Bi, n, g)))
        return out

    def _offset(self, co: Coefficients, amb: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Offset line (sA, sB) for face ambients ``amb`` (P, F)."""
        if self.layout != Layout.PLATE2:
            return amb[:, 0].copy(), np.zeros(self.P)
        L = self.lengths[:, 0]
        w1 = eigen.biot_weight(co.h[:, 0] * L / co.k)
        w2 = eigen.biot_weight(co.h[:, 1] * L / co.k)
        u1, u2 = 1 - w1, 1 - w2
        T1, T2 = amb[:, 0], amb[:, 1]
        det = -(w1 * u2 + w1 * w2 + u1 * w2)
        insulated = det == 0.0
        d = np.where(insulated, 1.0, det)
        sA = (-w1 * T1 * (u2 + w2) - u1 * w2 * T2) / d
        sB = (-w1 * w2 * T2 + w1 * w2 * T1) / d
        return np.where(insulated, T1, sA), np.where(insulated, 0.0, sB)

    def prepare(
        self, state: State, co: Coefficients, specs: Sequence[tuple[Face, Callable[[float], float]]]
    ) -> Sub:
        """Re-expand the state on the modes of ``co`` at the step's start."""
        md = self._make_modes(co, state.modes)
        amb0 = np.array([[amb(0.0) for _, amb in specs]] * self.P)
        amb1 = np.array([[amb(1.0) for _, amb in specs]] * self.P)
        sA, sB = self._offset(co, amb0)
        sA1, sB1 = self._offset(co, amb1)
        ones = [modes.ones(m) for m in md]
        one = tensor.outer(ones)
        A0 = (state.sA - sA).reshape((-1,) + (1,) * len(md)) * one
        exact_mean = (state.sA - sA) + 0.5 * (state.sB - sB)
        if self.layout == Layout.PLATE2:
            xi = modes.xi_coefficients(md[0])  # type: ignore[arg-type]
            A0 = A0 + (state.sB - sB)[:, None] * xi
        if state.A is not None and state.modes is not None:
            A0 = A0 + tensor.apply_axes(
                [modes.transfer(n, o) for n, o in zip(md, state.modes, strict=True)], state.A
            )
            exact_mean = exact_mean + self._mean(state.modes, state.A)
        if state.profile is not None:
            coef, mean = _project(md[0], *state.profile)
            A0 = A0 + coef
            exact_mean = exact_mean + mean
        # The dropped modes of the new expansion hold the rest of the mean; by the first reported time
        # they have decayed (the mode count sees to it), so their heat has crossed the faces.
        heat_jump = -co.rc * (exact_mean - self._mean(md, A0))
        alpha = co.k / co.rc
        K = tensor.add_axes(
            [alpha[:, None] * m.z**2 / self.lengths[:, i : i + 1] ** 2 for i, m in enumerate(md)]
        )
        dsA, dsB = sA1 - sA, sB1 - sB
        S = dsA.reshape((-1,) + (1,) * len(md)) * one
        if self.layout == Layout.PLATE2:
            S = S + dsB[:, None] * modes.xi_coefficients(md[0])  # type: ignore[arg-type,operator]
        # Under a ramp the dropped modes settle at once into their quasi-steady lag and from then on
        # pass the source's share that the kept modes miss straight through the faces.
        heat_rate = co.rc * ((dsA + 0.5 * dsB) - self._mean(md, S))
        return Sub(md, A0, K, S, sA, sB, dsA, dsB, co.k, heat_jump, heat_rate, self.functionals(md))

    def _mean(self, md: list[modes.Modes], A: FloatArray) -> FloatArray:
        w = tensor.outer([modes.mean_weights(m) for m in md]).reshape(self.P, -1)
        return np.asarray((w * A.reshape(self.P, -1)).sum(axis=1), dtype=float)

    # ------------------------------------------------------------ read-outs
    def _point_weights(self, md: list[modes.Modes], xi: FloatArray) -> FloatArray:
        return tensor.outer([m.at(xi[:, i : i + 1]) for i, m in enumerate(md)]).reshape(self.P, -1)

    def functionals(self, md: list[modes.Modes]) -> tuple[list[str], FloatArray, FloatArray, FloatArray]:
        """Names, weights (P, F, M) and offset xi (P, F) of the value read-outs; slope weights (P, G, M)."""
        names = ["core", "surface", "mean"]
        pts = [self.points.core, self.points.surface]
        w = [self._point_weights(md, pts[0]), self._point_weights(md, pts[1])]
        means = [modes.mean_weights(m) for m in md]
        w.append(tensor.outer(means).reshape(self.P, -1))
        off = [pts[0][:, 0], pts[1][:, 0], np.full(self.P, 0.5)]
        if self.points.corner is not None:
            names.append("corner")
            w.append(self._point_weights(md, self.points.corner))
            off.append(self.points.corner[:, 0])
        if self.points.second is not None:
            names.append("second")
            w.append(self._point_weights(md, self.points.second))
            off.append(self.points.second[:, 0])
        slopes = []
        for fi, f in enumerate(self.faces):
            vecs = list(means)
            vecs[f.axis] = md[f.axis].at(np.full((self.P, 1), f.xi))
            names.append(f"face{fi}")
            w.append(tensor.outer(vecs).reshape(self.P, -1))
            off.append(np.full(self.P, f.xi))
            svecs = list(means)
            svecs[f.axis] = md[f.axis].slope(np.full((self.P, 1), f.xi))
            slopes.append(
                tensor.outer(svecs).reshape(self.P, -1)
                * (f.geo * f.sign / self.lengths[:, f.axis : f.axis + 1] ** 2)
            )
        return names, np.stack(w, axis=1), np.stack(off, axis=1), np.stack(slopes, axis=1)

    def evaluate(
        self, sub: Sub, dt: FloatArray
    ) -> tuple[dict[str, FloatArray], FloatArray, dict[str, FloatArray]]:
        """Read-outs (name -> (P, m)), heat in per volume (P, m) and the read-outs' time derivatives
        (name -> (P, m), K/s), ``dt`` after the step start.

        Each mode's term A e^(-K t) - S t phi(K t) has the derivative -(K A + S) e^(-K t); the offset
        line's is the ramp (dsA + dsB xi per second): the series' own rate, exact for the kept modes.
        """
        names, W, off, G = sub.fn
        A = sub.A0.reshape(self.P, -1)
        K = sub.K.reshape(self.P, -1)
        S = sub.S.reshape(self.P, -1)
        VA, VS = W * A[:, None, :], W * S[:, None, :]
        VR = -W * (K * A + S)[:, None, :]
        GA, GS = G * A[:, None, :], G * S[:, None, :]
        m = dt.size
        val_parts: list[FloatArray] = []
        rate_parts: list[FloatArray] = []
        heat_parts: list[FloatArray] = []
        step = max(1, _CHUNK // max(1, self.P * K.shape[1]))
        for c0 in range(0, m, step):
            t = dt[c0 : c0 + step]
            x = K[:, None, :] * t[None, :, None]
            E = np.exp(-x)
            ph = tensor.phi(x)
            val_parts.append(
                np.einsum("pfM,ptM->pft", VA, E) - np.einsum("pfM,ptM->pft", VS, ph * t[None, :, None])
            )
            rate_parts.append(np.einsum("pfM,ptM->pft", VR, E))
            integ = np.einsum("pgM,ptM->pgt", GA, ph * t[None, :, None]) - np.einsum(
                "pgM,ptM->pgt", GS, tensor.psi(x) * (t * t)[None, :, None]
            )
            heat_parts.append(
                sub.k[:, None] * integ.sum(axis=1)
                + sub.heat_jump[:, None]
                + sub.heat_rate[:, None] * t[None, :]
            )
        s_line = (
            sub.sA[:, None, None]
            + sub.sB[:, None, None] * off[:, :, None]
            + (sub.dsA[:, None, None] + sub.dsB[:, None, None] * off[:, :, None]) * dt[None, None, :]
        )
        vals = np.concatenate(val_parts, axis=2) + s_line
        ramp = sub.dsA[:, None] + sub.dsB[:, None] * off  # (P, F): the offset line's rate
        rates = np.concatenate(rate_parts, axis=2) + ramp[:, :, None]
        heat = np.concatenate(heat_parts, axis=1)
        return (
            {n: vals[:, i, :] for i, n in enumerate(names)},
            heat,
            {n: rates[:, i, :] for i, n in enumerate(names)},
        )

    def advance(self, sub: Sub, dt: float) -> State:
        x = sub.K * dt
        A = sub.A0 * np.exp(-x) - sub.S * dt * tensor.phi(x)
        return State(sub.modes, A, sub.sA + sub.dsA * dt, sub.sB + sub.dsB * dt)


_PROJECT_NODES = 10  # Gauss points per grid interval when a node profile is projected on modes


def _spread(m: modes.Modes) -> modes.Modes:
    """The same modes with a trailing axis, so that ``at`` evaluates (P, M, n) at n points at once."""
    if isinstance(m, modes.BesselModes):
        return modes.BesselModes(m.z[:, :, None])
    return modes.TrigModes(m.z[:, :, None], m.p[:, :, None], m.q[:, :, None])


def _project(m: modes.Modes, xi: FloatArray, T: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Coefficients (P, M) on ``m`` of the piecewise-linear profile T (P, n) on nodes ``xi``, and its
    weighted mean (P,). Gauss-Legendre on every interval, enough points for the highest mode kept."""
    gx, gw = np.polynomial.legendre.leggauss(_PROJECT_NODES)
    gx, gw = 0.5 * (gx + 1.0), 0.5 * gw
    lo, width = xi[:-1, None], np.diff(xi)[:, None]
    xq = (lo + width * gx[None, :]).reshape(-1)
    wq = (width * gw[None, :]).reshape(-1)
    frac = np.broadcast_to(gx, (xi.size - 1, gx.size)).reshape(-1)
    left = np.repeat(np.arange(xi.size - 1), gx.size)
    Tq = T[:, left] * (1.0 - frac) + T[:, left + 1] * frac  # (P, Q)
    if isinstance(m, modes.BesselModes):
        wq = wq * xq
    X = _spread(m).at(xq[None, None, :])  # (P, M, Q)
    coef = np.einsum("pmq,pq->pm", X, Tq * wq) / m.norm2()
    mean = (Tq * wq).sum(axis=1) / m.weight_total
    return np.asarray(coef, dtype=float), np.asarray(mean, dtype=float)

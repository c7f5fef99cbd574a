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
from workers.thermal.frozen import Frozen, MaterialSet, face_coefficient
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


FACES: dict[layout.Layout, tuple[FaceDef, ...]] = {
    "plate": (FaceDef(0, 1.0, 1.0, 1.0, False),),
    "plate2": (FaceDef(0, 0.0, 1.0, -1.0, False), FaceDef(0, 1.0, 1.0, 1.0, True)),
    "bar": (FaceDef(0, 1.0, 2.0, 1.0, False),),
    "block": tuple(FaceDef(i, 1.0, 1.0, 1.0, False) for i in range(3)),
    "cylinder": (FaceDef(0, 1.0, 2.0, 1.0, False), FaceDef(1, 1.0, 1.0, 1.0, False)),
}


@dataclass
class State:
    """Where a group stands: modes, coefficients and the offset line sA + sB xi, all at one instant.

    After a marched step (1-D layouts, see ``march``) the profile is held as node temperatures instead:
    ``profile`` = (xi (n,), T (P, n)), piecewise linear between the nodes, added to the offset line.
    """

    modes: list[modes.Modes] | None
    A: FloatArray | None
    sA: FloatArray
    sB: FloatArray
    profile: tuple[FloatArray, FloatArray] | None = None


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

    def __init__(self, kind: layout.Layout, parts: Sequence[PartThermal], tol: Tolerance) -> None:
        self.kind = kind
        self.kinds = layout.AXES[kind]
        self.faces = FACES[kind]
        self.P = len(parts)
        self.parts = list(parts)
        self.lengths = np.array([layout.axis_lengths(kind, p) for p in parts], dtype=float)
        self.points = layout.points(kind, self.lengths)
        self.mats = MaterialSet([p.material for p in parts])
        self.initial = np.array([p.initial_c for p in parts], dtype=float)
        self.alpha_min = self.mats.slowest_diffusivity()
        self.tol = tol
        self.n_modes: tuple[int, ...] = ()

    # ----------------------------------------------------------------- set-up
    def choose_modes(self, tau_s: float, span_k: float, rate_k_s: float, alpha: FloatArray) -> None:
        """Mode counts whose first dropped term is below the tolerance ``tau_s`` after a step start.

        ``alpha`` is the diffusivity of each part (m^2/s).
        """
        d = len(self.kinds)
        budget = self.tol.series_k / d / 3.0 ** (d - 1)
        n = []
        for i, kind in enumerate(self.kinds):
            ell2 = self.lengths[:, i] ** 2
            decay = float(np.min(alpha * tau_s / ell2))
            forced = float(np.max(abs(rate_k_s) * ell2 / alpha))
            n.append(layout.choose_modes(kind, d, decay, span_k, forced, budget))
        self.n_modes = tuple(n)

    def bound(self, tau_s: FloatArray, span_k: FloatArray, rate_k_s: float, alpha: FloatArray) -> FloatArray:
        """Truncation bound (P, m) at times ``tau_s`` after a step start, for profiles of span ``span_k``
        and an ambient ramping at ``rate_k_s``."""
        total = np.zeros((self.P, tau_s.size))
        heads = []
        tails = []
        for i, kind in enumerate(self.kinds):
            ell2 = self.lengths[:, i : i + 1] ** 2
            decay = alpha[:, None] * tau_s[None, :] / ell2
            h, t = layout.tail_sums(kind, self.n_modes[i], decay)
            lam = layout.lower_roots(kind, self.n_modes[i] + layout._TAIL)
            lag = (
                layout.forced_terms(kind, lam)[self.n_modes[i] :].sum()
                * abs(rate_k_s)
                * ell2
                / alpha[:, None]
            )
            heads.append(h)
            tails.append(span_k[:, None] * t + lag)
        for i in range(len(self.kinds)):
            term = tails[i].copy()
            for j in range(len(self.kinds)):
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

    def freeze(
        self,
        specs: Sequence[tuple[Face, Callable[[float], float]]],
        face_c: FloatArray,
        mean_c: FloatArray,
        t: float,
    ) -> Frozen:
        h = np.stack(
            [
                face_coefficient(face, face_c[:, i], np.full(self.P, amb(t)))
                for i, (face, amb) in enumerate(specs)
            ],
            axis=1,
        )
        return Frozen(h, self.mats.conductivity(mean_c), self.mats.heat_capacity(mean_c))

    # ------------------------------------------------------------------ steps
    def _make_modes(self, fr: Frozen, guess: list[modes.Modes] | None) -> list[modes.Modes]:
        out: list[modes.Modes] = []
        for i, kind in enumerate(self.kinds):
            n = self.n_modes[i]
            g = guess[i].z[:, :n] if guess is not None and guess[i].z.shape[1] >= n else None
            ell = self.lengths[:, i]
            if kind == "two":
                with np.errstate(invalid="ignore"):
                    B1 = fr.h[:, 0] * ell / fr.k
                    B2 = fr.h[:, 1] * ell / fr.k
                z = eigen.two_face_roots(B1, B2, n, g)
                out.append(modes.TrigModes.two_face(z, eigen.biot_weight(B1)))
                continue
            fi = next(j for j, f in enumerate(self.faces) if f.axis == i)
            Bi = fr.h[:, fi] * ell / fr.k
            if kind == "trig":
                out.append(modes.TrigModes.symmetric(eigen.plate_roots(Bi, n, g)))
            else:
                out.append(modes.BesselModes(eigen.bar_roots(Bi, n, g)))
        return out

    def _offset(self, fr: Frozen, amb: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Offset line (sA, sB) for face ambients ``amb`` (P, F)."""
        if self.kind != "plate2":
            return amb[:, 0].copy(), np.zeros(self.P)
        L = self.lengths[:, 0]
        w1 = eigen.biot_weight(fr.h[:, 0] * L / fr.k)
        w2 = eigen.biot_weight(fr.h[:, 1] * L / fr.k)
        u1, u2 = 1 - w1, 1 - w2
        T1, T2 = amb[:, 0], amb[:, 1]
        det = -(w1 * u2 + w1 * w2 + u1 * w2)
        insulated = det == 0.0
        d = np.where(insulated, 1.0, det)
        sA = (-w1 * T1 * (u2 + w2) - u1 * w2 * T2) / d
        sB = (-w1 * w2 * T2 + w1 * w2 * T1) / d
        return np.where(insulated, T1, sA), np.where(insulated, 0.0, sB)

    def prepare(
        self,
        state: State,
        fr: Frozen,
        specs: Sequence[tuple[Face, Callable[[float], float]]],
        t: float,
    ) -> Sub:
        """Re-expand the state on the modes of ``fr`` at step time ``t``."""
        md = self._make_modes(fr, state.modes)
        amb0 = np.array([[amb(t) for _, amb in specs]] * self.P)
        amb1 = np.array([[amb(t + 1.0) for _, amb in specs]] * self.P)
        sA, sB = self._offset(fr, amb0)
        sA1, sB1 = self._offset(fr, amb1)
        ones = [modes.ones(m) for m in md]
        one = tensor.outer(ones)
        A0 = (state.sA - sA).reshape((-1,) + (1,) * len(md)) * one
        exact_mean = (state.sA - sA) + 0.5 * (state.sB - sB)
        if self.kind == "plate2":
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
        heat_jump = -fr.rc * (exact_mean - self._mean(md, A0))
        alpha = fr.k / fr.rc
        K = tensor.add_axes(
            [alpha[:, None] * m.z**2 / self.lengths[:, i : i + 1] ** 2 for i, m in enumerate(md)]
        )
        dsA, dsB = sA1 - sA, sB1 - sB
        S = dsA.reshape((-1,) + (1,) * len(md)) * one
        if self.kind == "plate2":
            S = S + dsB[:, None] * modes.xi_coefficients(md[0])  # type: ignore[arg-type,operator]
        # Under a ramp the dropped modes settle at once into their quasi-steady lag and from then on
        # pass the source's share that the kept modes miss straight through the faces.
        heat_rate = fr.rc * ((dsA + 0.5 * dsB) - self._mean(md, S))
        return Sub(md, A0, K, S, sA, sB, dsA, dsB, fr.k, heat_jump, heat_rate, self.functionals(md))

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

    def evaluate(self, sub: Sub, dt: FloatArray) -> tuple[dict[str, FloatArray], FloatArray]:
        """Read-outs (name -> (P, m)) and heat in per volume (P, m), ``dt`` after the step start."""
        names, W, off, G = sub.fn
        A = sub.A0.reshape(self.P, -1)
        K = sub.K.reshape(self.P, -1)
        S = sub.S.reshape(self.P, -1)
        VA, VS = W * A[:, None, :], W * S[:, None, :]
        GA, GS = G * A[:, None, :], G * S[:, None, :]
        m = dt.size
        val_parts: list[FloatArray] = []
        heat_parts: list[FloatArray] = []
        step = max(1, _CHUNK // max(1, self.P * K.shape[1]))
        for c0 in range(0, m, step):
            t = dt[c0 : c0 + step]
            x = K[:, None, :] * t[None, :, None]
            E = np.exp(-x)
            ph = phi(x)
            val_parts.append(
                np.einsum("pfM,ptM->pft", VA, E) - np.einsum("pfM,ptM->pft", VS, ph * t[None, :, None])
            )
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
        heat = np.concatenate(heat_parts, axis=1)
        return {n: vals[:, i, :] for i, n in enumerate(names)}, heat

    def temperatures(self, state: State, xi: FloatArray) -> FloatArray:
        """Temperatures (P, n) of a 1-D layout at the points ``xi`` (n,)."""
        T = state.sA[:, None] + state.sB[:, None] * xi[None, :]
        if state.A is not None and state.modes is not None:
            X = _spread(state.modes[0]).at(xi[None, None, :])  # (P, M, n)
            T = T + np.einsum("pm,pmn->pn", state.A, X)
        if state.profile is not None:
            px, pT = state.profile
            T = T + np.stack([np.interp(xi, px, row) for row in pT])
        return np.asarray(T, dtype=float)

    def advance(self, sub: Sub, dt: float) -> State:
        x = sub.K * dt
        A = sub.A0 * np.exp(-x) - sub.S * dt * phi(x)
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


def phi(x: FloatArray) -> FloatArray:
    return tensor.phi(x)

"""Method-of-lines reference solver: the outside check for the engine's ramps, radiation, h(T_s) and k(T).

It shares nothing with ``workers.thermal`` but the input dataclasses of ``spec.py``. Symbols and units:
``x`` position (m) from the centre of a plate or bar, or from the second face of a two-face plate;
``T`` temperature (degC, kelvin only inside the radiation term); ``K(T) = int k dT`` the Kirchhoff
integral of the conductivity (W/m); ``q`` heat flux into the part (W/m^2).

Space: vertex-centred finite volumes with a node on every face (half cells there), so the surface
temperature is a state, not an extrapolation; the grid is smoothly refined towards the exchanging faces.
Fluxes are conservative; the face conductivity is the Kirchhoff mean (K(T1) - K(T0)) / (T1 - T0) by
default, exact for a steady slab, or the arithmetic mean of the node values. Each node's state is its
enthalpy rho int cp dT, so a latent-heat peak in cp(T) is conserved exactly; the heat in through the
faces is integrated as one more state.
Time: ``scipy.integrate.solve_ivp`` (BDF or Radau) per schedule step, tight tolerances, analytic sparse
Jacobian. ``richardson=True`` also runs twice the cells and extrapolates away the O(dx^2) error; the
difference between the two grids (over 3) is returned as an error estimate.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.integrate import solve_ivp
from scipy.sparse import csc_matrix

from workers.thermal.spec import Curve, Face, FloatArray, PartThermal, Step

SIGMA = 5.670374419e-8  # Stefan-Boltzmann constant, W/m^2/K^4 (CODATA 2018)
KELVIN = 273.15

Geometry = Literal["plate", "plate2", "bar"]
FaceK = Literal["kirchhoff", "arithmetic"]


@dataclass(frozen=True)
class MolResult:
    """Reference temperatures at the requested times.

    ``x_m`` are the grid nodes; ``profile_c[i, j]`` is the temperature at ``time_s[i]`` and ``x_m[j]``.
    ``error_k`` (when Richardson extrapolation was asked for) is |fine - coarse| / 3, max over the
    reported points: the error estimate of the finer grid alone. The extrapolated values returned are
    at least five times better on the quench cases of test_mol.py.
    """

    time_s: FloatArray
    core_c: FloatArray
    surface_c: FloatArray
    mean_c: FloatArray
    heat_in_j_m3: FloatArray
    x_m: FloatArray
    profile_c: FloatArray
    second_surface_c: FloatArray | None = None
    error_k: FloatArray | None = None


class Piecewise:
    """Value, slope and antiderivative (zero at the first knot) of a flat-ended piecewise-linear ``Curve``."""

    def __init__(self, curve: Curve) -> None:
        self.t = np.asarray(curve.temp_c, dtype=float)
        self.v = np.asarray(curve.value, dtype=float)
        self.constant = curve.is_constant
        if self.t.size > 1:
            self.s = np.diff(self.v) / np.diff(self.t)
            self.cum = np.concatenate([[0.0], np.cumsum(0.5 * (self.v[1:] + self.v[:-1]) * np.diff(self.t))])
        else:
            self.s = np.zeros(1)
            self.cum = np.zeros(1)

    def _locate(self, temp: FloatArray) -> tuple[NDArray[np.intp], FloatArray, NDArray[np.bool_]]:
        """Segment index, clipped offset into it, and whether the point is on the sloped part."""
        t = self.t
        j = np.clip(np.searchsorted(t, temp, side="right") - 1, 0, max(t.size - 2, 0))
        inside = (temp >= t[0]) & (temp < t[-1])
        d = np.clip(temp, t[0], t[-1]) - t[j]
        return j, np.asarray(d, dtype=float), np.asarray(inside)

    def value(self, temp: FloatArray) -> FloatArray:
        if self.constant:
            return np.full_like(temp, self.v[0])
        return np.asarray(np.interp(temp, self.t, self.v), dtype=float)

    def slope(self, temp: FloatArray) -> FloatArray:
        if self.constant:
            return np.zeros_like(temp)
        j, _, inside = self._locate(temp)
        return np.asarray(np.where(inside, self.s[j], 0.0), dtype=float)

    def integral(self, temp: FloatArray) -> FloatArray:
        if self.constant:
            return np.asarray(self.v[0] * (temp - self.t[0]), dtype=float)
        j, d, _ = self._locate(temp)
        inner = self.cum[j] + self.v[j] * d + 0.5 * self.s[j] * d * d
        end = np.clip(temp, self.t[0], self.t[-1])
        out = inner + self.v[0] * np.minimum(temp - end, 0.0) + self.v[-1] * np.maximum(temp - end, 0.0)
        return np.asarray(out, dtype=float)

    def inverse_integral(self, value: FloatArray) -> FloatArray:
        """Temperature whose ``integral`` is ``value`` (the curve must stay positive)."""
        t, v = self.t, self.v
        if self.constant:
            return np.asarray(t[0] + value / v[0], dtype=float)
        j = np.clip(np.searchsorted(self.cum, value, side="right") - 1, 0, t.size - 2)
        r = np.clip(value, 0.0, self.cum[-1]) - self.cum[j]
        inner = t[j] + 2.0 * r / (v[j] + np.sqrt(np.maximum(v[j] ** 2 + 2.0 * self.s[j] * r, 0.0)))
        below = t[0] + np.minimum(value, 0.0) / v[0]
        above = t[-1] + np.maximum(value - self.cum[-1], 0.0) / v[-1]
        return np.asarray(
            np.where(value < 0.0, below, np.where(value > self.cum[-1], above, inner)), dtype=float
        )


def face_flux(face: Face, surface_c: FloatArray | float, ambient_c: FloatArray | float) -> FloatArray:
    """Heat flux into the part (W/m^2): convection h(T_s) plus grey radiation with the ambient."""
    ts = np.asarray(surface_c, dtype=float)
    ta = np.asarray(ambient_c, dtype=float)
    q = face.htc(ts) * (ta - ts)
    if face.emissivity:
        q = q + face.emissivity * SIGMA * ((ta + KELVIN) ** 4 - (ts + KELVIN) ** 4)
    return np.asarray(q, dtype=float)


def face_flux_slope(face: Face, surface_c: float, ambient_c: float) -> float:
    """d q / d T_s of ``face_flux`` (right derivative at the knots of h)."""
    h = Piecewise(face.htc)
    ts = np.asarray([surface_c], dtype=float)
    dq = h.slope(ts) * (ambient_c - ts) - h.value(ts)
    if face.emissivity:
        dq = dq - 4.0 * face.emissivity * SIGMA * (ts + KELVIN) ** 3
    return float(dq[0])


def geometry_of(part: PartThermal, steps: Sequence[Step]) -> Geometry:
    kind = part.shape.kind
    two = any(s.second_face is not None or s.second_ambient_c is not None for s in steps)
    if kind == "plate":
        return "plate2" if two else "plate"
    if kind == "bar" and not two:
        return "bar"
    raise NotImplementedError(f"the reference solver covers plates and bars, not {kind}")


@dataclass(frozen=True)
class Grid:
    """Nodes and finite volumes; measures are per unit face area (plates) or per radian (bar)."""

    x: FloatArray  # node positions, m
    vol: FloatArray  # control volume of each node
    conduct: FloatArray  # face area / node distance for each internal face
    core: int  # index of the centre node
    total_vol: float
    outer_area: float  # area of one outer face


def make_grid(geometry: Geometry, half_m: float, cells: int, grading: float) -> Grid:
    """Nodes at x = L f(xi), xi uniform, f smooth with slope 1 - grading at the exchanging faces.

    Smooth grading keeps the scheme second order and lets Richardson extrapolation work: doubling
    ``cells`` puts the old nodes at every other new node.
    """
    if not 0.0 <= grading < 1.0:
        raise ValueError("grading must be in [0, 1)")
    xi = np.linspace(0.0, 1.0, cells + 1)
    if geometry == "plate2":
        if cells % 2:
            raise ValueError("a two-face plate needs an even number of cells (a node at the mid-plane)")
        length = 2.0 * half_m
        x = length * (xi - grading * np.sin(2.0 * np.pi * xi) / (2.0 * np.pi))
    else:
        length = half_m
        x = length * (xi + grading * np.sin(np.pi * xi) / np.pi)
    x[0], x[-1] = 0.0, length
    faces = np.concatenate([[0.0], 0.5 * (x[1:] + x[:-1]), [length]])
    if geometry == "bar":
        vol = 0.5 * (faces[1:] ** 2 - faces[:-1] ** 2)
        area = faces[1:-1]
        outer = length
    else:
        vol = np.diff(faces)
        area = np.ones(cells)
        outer = 1.0
    core = cells // 2 if geometry == "plate2" else 0
    return Grid(x, vol, area / np.diff(x), core, float(vol.sum()), outer)


class Model:
    """Right-hand side and Jacobian of the semi-discrete equations.

    The state is the volumetric enthalpy of every node, H = rho int cp dT (J/m^3, zero at the first knot
    of cp), then the heat in per unit volume. With H as the state a latent-heat peak in cp(T) leaves the
    right-hand side once differentiable, which the stiff integrator handles far better than rho cp(T)
    dT/dt, and the energy balance holds by construction.
    """

    def __init__(self, part: PartThermal, geometry: Geometry, grid: Grid, face_k: FaceK) -> None:
        self.two_faces = geometry == "plate2"
        self.g = grid
        self.n = grid.x.size
        mat = part.material
        self.k = Piecewise(mat.conductivity)
        self.cp = Piecewise(mat.specific_heat)
        self.rho = mat.density
        self.face_k = face_k
        n = self.n
        idx = np.arange(n)
        self.rows = np.concatenate([idx, idx[1:], idx[:-1], [n, n]])
        self.cols = np.concatenate([idx, idx[:-1], idx[1:], [n - 1, 0]])

    def enthalpy(self, temp: FloatArray) -> FloatArray:
        return np.asarray(self.rho * self.cp.integral(temp), dtype=float)

    def temperature(self, enthalpy: FloatArray) -> FloatArray:
        return np.asarray(self.cp.inverse_integral(enthalpy / self.rho), dtype=float)

    def flows(self, temp: FloatArray) -> FloatArray:
        """Heat flow from node i to node i + 1."""
        if self.face_k == "kirchhoff":
            return -self.g.conduct * np.diff(self.k.integral(temp))
        k = self.k.value(temp)
        return -self.g.conduct * 0.5 * (k[1:] + k[:-1]) * np.diff(temp)

    def flow_slopes(self, temp: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Derivatives of ``flows`` by T_i and by T_{i+1}."""
        c = self.g.conduct
        k = self.k.value(temp)
        if self.face_k == "kirchhoff":
            return c * k[:-1], -c * k[1:]
        dk = self.k.slope(temp)
        kbar = 0.5 * (k[1:] + k[:-1])
        dt = np.diff(temp)
        return -c * (0.5 * dk[:-1] * dt - kbar), -c * (0.5 * dk[1:] * dt + kbar)

    def ambients(self, step: Step, t: float) -> tuple[float, float]:
        amb = float(step.ambient_at(t))
        return amb, amb if step.second_ambient_c is None else float(step.second_ambient_c)

    def net(self, step: Step, t: float, temp: FloatArray) -> tuple[FloatArray, float]:
        """Net heat flow into every node, and the total through the outer faces."""
        flow = self.flows(temp)
        amb, amb2 = self.ambients(step, t)
        q = float(face_flux(step.face, temp[-1], amb)) * self.g.outer_area
        net = np.zeros(self.n)
        net[:-1] -= flow
        net[1:] += flow
        net[-1] += q
        if self.two_faces:
            q2 = float(face_flux(step.second_face or step.face, temp[0], amb2))
            net[0] += q2
            q += q2
        return net, q

    def rhs(self, t: float, state: FloatArray, step: Step) -> FloatArray:
        net, q = self.net(step, t, self.temperature(state[:-1]))
        out = np.empty(self.n + 1)
        out[:-1] = net / self.g.vol
        out[-1] = q / self.g.total_vol
        return out

    def jac(self, t: float, state: FloatArray, step: Step) -> csc_matrix:
        g = self.g
        temp = self.temperature(state[:-1])
        a, b = self.flow_slopes(temp)
        amb, amb2 = self.ambients(step, t)
        d1 = face_flux_slope(step.face, float(temp[-1]), amb) * g.outer_area
        d2 = face_flux_slope(step.second_face or step.face, float(temp[0]), amb2) if self.two_faces else 0.0
        dtemp = 1.0 / (self.rho * self.cp.value(temp))  # dT/dH of every node: scales column j
        main = np.zeros(self.n)
        main[1:] += b
        main[:-1] -= a
        main[-1] += d1
        main[0] += d2
        data = np.concatenate(
            [
                main * dtemp / g.vol,
                a * dtemp[:-1] / g.vol[1:],
                -b * dtemp[1:] / g.vol[:-1],
                [d1 * dtemp[-1] / g.total_vol, d2 * dtemp[0] / g.total_vol],
            ]
        )
        return csc_matrix((data, (self.rows, self.cols)), shape=(self.n + 1, self.n + 1))


def _step_of(times: FloatArray, steps: Sequence[Step]) -> np.ndarray:
    """Index of the step each time belongs to; a step boundary belongs to the earlier step."""
    ends = np.cumsum([s.duration_s for s in steps])
    slack = 1e-12 * float(ends[-1])
    return np.minimum(np.searchsorted(ends, times - slack, side="left"), len(steps) - 1)


def _run(
    part: PartThermal,
    steps: Sequence[Step],
    times: FloatArray,
    model: Model,
    rtol: float,
    atol: float,
    method: str,
) -> tuple[FloatArray, FloatArray]:
    """Integrate the schedule; return profiles at ``times`` and heat in per unit volume."""
    n = model.n
    mat = part.material
    # tolerances in kelvin, carried to enthalpy with the largest heat capacity
    cap = mat.density * float(np.max(mat.specific_heat.value))
    atol_vec = np.full(n + 1, atol * cap)
    profiles = np.empty((times.size, n))
    heat = np.empty(times.size)
    owner = _step_of(times, steps)
    y = np.append(model.enthalpy(np.full(n, float(part.initial_c))), 0.0)
    start = 0.0
    for si, step in enumerate(steps):
        mine = owner == si
        local = np.clip(times[mine] - start, 0.0, step.duration_s)
        t_eval, back = np.unique(np.append(local, step.duration_s), return_inverse=True)
        sol = solve_ivp(
            model.rhs,
            (0.0, step.duration_s),
            y,
            method=method,
            t_eval=t_eval,
            rtol=rtol,
            atol=atol_vec,
            jac=model.jac,
            args=(step,),
        )
        if not sol.success:
            raise RuntimeError(f"reference integration failed in step {si}: {sol.message}")
        profiles[mine] = model.temperature(sol.y[:n, back[:-1]].T)
        heat[mine] = sol.y[n, back[:-1]]
        y = sol.y[:, -1].copy()
        start += step.duration_s
    return profiles, heat


def _points(grid: Grid, prof: FloatArray, heat: FloatArray, two_faces: bool) -> dict[str, FloatArray]:
    out = {
        "core_c": prof[:, grid.core],
        "surface_c": prof[:, -1],
        "mean_c": prof @ grid.vol / grid.total_vol,
        "heat_in_j_m3": heat,
    }
    if two_faces:
        out["second_surface_c"] = prof[:, 0]
    return out


def solve(
    part: PartThermal,
    steps: Sequence[Step],
    times_s: ArrayLike,
    *,
    cells: int = 100,
    grading: float = 0.75,
    rtol: float = 1e-8,
    atol: float = 1e-8,
    method: str = "BDF",
    face_k: FaceK = "kirchhoff",
    richardson: bool = False,
) -> MolResult:
    """Temperatures of a plate, two-face plate or bar at ``times_s`` (s from the start of the first step).

    ``cells`` counts the cells over the half thickness or radius, or over the full thickness of a
    two-face plate (then rounded up to even). ``grading`` refines the grid towards the exchanging faces
    (0 is uniform). Chained steps start from the last profile; ambients ramp as in ``Step``.
    """
    times = np.asarray(times_s, dtype=float)
    if times.ndim != 1 or np.any(np.diff(times) < 0) or (times.size and times[0] < 0):
        raise ValueError("times_s must be a sorted 1-D array of non-negative times")
    total = sum(s.duration_s for s in steps)
    if times.size and times[-1] > total * (1 + 1e-12) + 1e-9:
        raise ValueError(f"time {times[-1]} s is after the schedule's end {total} s")
    geometry = geometry_of(part, steps)
    two = geometry == "plate2"
    cells += cells % 2 if two else 0
    half = part.shape.half_sizes_m[0]

    def run(cells: int) -> tuple[Grid, FloatArray, dict[str, FloatArray]]:
        grid = make_grid(geometry, half, cells, grading)
        prof, heat = _run(part, steps, times, Model(part, geometry, grid, face_k), rtol, atol, method)
        return grid, prof, _points(grid, prof, heat, two)

    grid, prof, pts = run(cells)
    error = None
    if richardson:
        _, prof_f, fine = run(2 * cells)
        diffs = []
        for key in pts:
            diff = (fine[key] - pts[key]) / 3.0
            pts[key] = fine[key] + diff
            if key != "heat_in_j_m3":
                diffs.append(np.abs(diff))
        prof = prof_f[:, ::2] + (prof_f[:, ::2] - prof) / 3.0
        error = np.max(np.vstack(diffs), axis=0)
    return MolResult(
        time_s=times,
        core_c=pts["core_c"],
        surface_c=pts["surface_c"],
        mean_c=pts["mean_c"],
        heat_in_j_m3=pts["heat_in_j_m3"],
        x_m=grid.x,
        profile_c=prof,
        second_surface_c=pts.get("second_surface_c"),
        error_k=error,
    )

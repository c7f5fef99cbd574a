"""Materials, quench media and schedules shared by the engine tests and the benchmark.

Each outside number carries its source beside it, named as the published text names it. Where a
curve needs points between the published anchors, the in-between points are chosen here and say so:
the engine and the reference solver read the same ``Curve``, so the comparison does not depend on them.
"""

from __future__ import annotations

import numpy as np

from workers.thermal.spec import Curve, Face, Material, PartThermal, Shape, Step


def constant_steel(k: float, rho: float, cp: float) -> Material:
    return Material(Curve.constant(k), rho, Curve.constant(cp))


# read: Incropera, Table A.1 (steel properties at 300 K)
CR_MO_STEEL = constant_steel(37.7, 7822.0, 444.0)  # 1/2Cr-1/4Mo-Si
PLAIN_CARBON = constant_steel(60.5, 7854.0, 434.0)  # plain carbon
AISI_304 = constant_steel(14.9, 7900.0, 477.0)  # AISI 304


def _eurocode_cp(temp_c: float) -> float:
    # read: EN 1993-1-2 (Eurocode 3, fire part), section 3.4, carbon steel specific heat
    t = temp_c
    if t < 600.0:
        return 425.0 + 7.73e-1 * t - 1.69e-3 * t**2 + 2.22e-6 * t**3
    if t < 735.0:
        return 666.0 + 13002.0 / (738.0 - t)
    if t < 900.0:
        return 545.0 + 17820.0 / (t - 731.0)
    return 650.0


def _eurocode_material() -> Material:
    # Tabulation points chosen here, dense around the latent-heat peak at 735 C.
    temps = np.unique(
        np.concatenate(
            [
                np.arange(20.0, 600.0, 20.0),
                np.arange(600.0, 720.0, 10.0),
                np.arange(720.0, 735.0, 2.5),
                [735.0],
                np.arange(737.5, 760.0, 2.5),
                np.arange(760.0, 900.0, 10.0),
                [900.0, 1200.0],
            ]
        )
    )
    cp = tuple(float(_eurocode_cp(t)) for t in temps)
    # read: EN 1993-1-2, section 3.4: k = 54 - 3.33e-2 T for 20-800 C, 27.3 above (joined at 800 C here)
    k = Curve((20.0, 800.0, 1200.0), (54.0 - 3.33e-2 * 20.0, 27.3, 27.3))
    # from memory: density 7850 kg/m^3
    return Material(k, 7850.0, Curve(tuple(float(t) for t in temps), cp))


EUROCODE_STEEL = _eurocode_material()

# read: Buczek and Telejko, Int. J. Heat Fluid Flow 44 (2013) 358-364, mineral quench oil:
# about 0.5 kW/m2K at 800 C, peak 4.7-6.0 kW/m2K at 520-550 C, about 0.5 kW/m2K at 150 C.
# The points at 100, 300, 400, 650 and 700 C are chosen here to join the anchors smoothly.
OIL_QUENCH = Curve(
    (100.0, 150.0, 300.0, 400.0, 520.0, 550.0, 650.0, 700.0, 800.0),
    (400.0, 500.0, 1800.0, 3500.0, 5500.0, 5500.0, 2500.0, 1200.0, 500.0),
)
# read: same source, polymer quenchant: 3.2 kW/m2K at 800 C, peak 7.4 about 100 K lower, 2.0 at 150 C.
# The points at 400 and 550 C are chosen here.
POLYMER_QUENCH = Curve((150.0, 400.0, 550.0, 700.0, 800.0), (2000.0, 4500.0, 6500.0, 7400.0, 3200.0))

FURNACE_GAS_H = 20.0  # chosen here: gas convection in a furnace, a few tens of W/m2K
FURNACE_EMISSIVITY = 0.8  # a furnace at 850 C with emissivity 0.8: radiative h about 250 W/m2K (computed)
STILL_AIR_H = 10.0  # chosen here: natural convection in still air


def plate(half_m: float, mat: Material = CR_MO_STEEL, initial_c: float = 20.0) -> PartThermal:
    return PartThermal(Shape("plate", (half_m,)), mat, initial_c)


def bar(radius_m: float, mat: Material = CR_MO_STEEL, initial_c: float = 20.0) -> PartThermal:
    return PartThermal(Shape("bar", (radius_m,)), mat, initial_c)


def const_face(h: float, emissivity: float = 0.0) -> Face:
    return Face(Curve.constant(h), emissivity)


def heat_treat_schedule(
    *,
    heat_s: float = 5400.0,
    soak_s: float = 3600.0,
    quench_s: float = 900.0,
    temper_s: float = 7200.0,
) -> list[Step]:
    """Heat in a radiant furnace with a ramp, soak, oil quench with h(T_s), temper in a furnace with air."""
    furnace = Face(Curve.constant(FURNACE_GAS_H), FURNACE_EMISSIVITY)
    # read: austenitizing 4140 845-870 C (SAE data as tabulated in engineering references)
    return [
        Step(heat_s, 860.0, furnace, ambient_start_c=600.0),
        Step(soak_s, 860.0, furnace),
        Step(quench_s, 60.0, Face(OIL_QUENCH)),
        Step(temper_s, 550.0, Face(Curve.constant(STILL_AIR_H), FURNACE_EMISSIVITY)),
    ]

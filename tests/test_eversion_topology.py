"""Topological diagnostics of the guide motion (docs/eversion.md).

Checks two independent computations against each other and against degree theory:
the tangent sweep class is an integer that retiming the stages cannot change (the degree
of a map rel boundary is a homotopy invariant: Milnor, "Topology from the Differentiable
Viewpoint", 1965), and the indices of the zeros of the projected latitude direction sum
to twice that class (the Euler number of TS^2 is chi(S^2) = 2: Milnor and Stasheff,
"Characteristic Classes", 1974; Poincare-Hopf).
"""

from __future__ import annotations

import numpy as np
from guide_topology import latitude_direction_zeros, tangent_sweep_class

from turnabout.eversion import Controls
from turnabout.eversion.construction import P_CENTRE, turn_at


def test_tangent_sweep_class_is_an_integer_invariant_of_retiming():
    base = Controls()
    retimed = Controls(timing={**base.timing, "twist": (0.36, 0.6), "tuck": (0.6, 0.9)})
    a = tangent_sweep_class(base, n_lat=201, n_times=401)
    b = tangent_sweep_class(retimed, n_lat=201, n_times=401)
    assert abs(a - round(a)) < 5e-3
    assert round(a) == round(b)


def test_zero_indices_sum_to_twice_the_sweep_class():
    ctl = Controls()
    zeros = latitude_direction_zeros(ctl)
    total = sum(z[2] for z in zeros)
    klass = round(tangent_sweep_class(ctl, n_lat=201, n_times=401))
    assert total == 2 * klass


def test_the_guide_motion_is_in_the_class_of_the_formal_solution():
    # The tangent turns along great circles from T0 to -T0 with the round sphere's end
    # states, so the swept area is -int sin(psi) dlat at the end = 0 (docs/eversion.md):
    # class 0, and the zeros of the projected latitude direction cancel in pairs.
    ctl = Controls()
    assert round(tangent_sweep_class(ctl, n_lat=201, n_times=401)) == 0
    zeros = latitude_direction_zeros(ctl)
    assert sum(z[2] for z in zeros) == 0
    # one of them is the tuck itself: the equator passes through the axis at p = P_CENTRE
    tuck = [
        z for z in zeros if abs(z[1]) < 0.02 and abs(turn_at(ctl, z[0]) - P_CENTRE / np.pi) < 0.01
    ]
    assert len(tuck) == 1 and tuck[0][2] == -1

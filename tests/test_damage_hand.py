"""Damage helpers and the thermal step weight by hand: written to kill surviving mutants of
sim/loads/damage.py and sim/checks/thermal.py (docs/mutation.md)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from sim.checks.thermal import _phi
from sim.core.errors import InputError
from sim.loads.damage import BasquinCurve, cycle_matrix_edges, damage_equivalent_range
from sim.loads.rainflow import Cycles


def test_cycle_matrix_edges_by_hand():
    # ranges from 0 to the largest range, means between the extreme means, bins + 1 edges
    r, m = cycle_matrix_edges(8.0, -3.0, 5.0, bins=4)
    np.testing.assert_array_equal(r, [0.0, 2.0, 4.0, 6.0, 8.0])
    np.testing.assert_array_equal(m, [-3.0, -1.0, 1.0, 3.0, 5.0])
    assert len(cycle_matrix_edges(8.0, -3.0, 5.0)[0]) == 21  # 20 bins by default
    # no cycles (max_range 0, mean_min +inf > mean_max -inf): ranges 0-1, means -1-1
    r, m = cycle_matrix_edges(0.0, math.inf, -math.inf, bins=2)
    np.testing.assert_array_equal(r, [0.0, 0.5, 1.0])
    np.testing.assert_array_equal(m, [-1.0, 0.0, 1.0])
    # all cycles on one mean: the zero width is widened to 1 around it
    r, m = cycle_matrix_edges(3.0, 2.0, 2.0, bins=2)
    np.testing.assert_array_equal(r, [0.0, 1.5, 3.0])
    np.testing.assert_array_equal(m, [1.5, 2.0, 2.5])
    np.testing.assert_array_equal(cycle_matrix_edges(-1.0, 0.0, 4.0, bins=1)[0], [0.0, 1.0])


def test_damage_equivalent_range_by_hand():
    # S_eq = (sum n_i S_i^k / n_eq)^(1/k) (Miner 1945 on a Basquin line, range form):
    # 2 cycles of 10 and a half cycle of 20 at k = 3: (2*1000 + 0.5*8000) / 6 = 1000 -> 10
    c = Cycles(np.array([10.0, 10.0, 20.0]), np.zeros(3), np.array([1.0, 1.0, 0.5]),
               np.arange(3), np.arange(1, 4))
    assert damage_equivalent_range(c, 3.0, 6.0) == pytest.approx(10.0, rel=1e-15)
    assert damage_equivalent_range(c, 3.0, 1.0) == pytest.approx(6000.0 ** (1 / 3), rel=1e-15)
    for bad in (0.0, -1.0):
        with pytest.raises(InputError) as e:
            damage_equivalent_range(c, 3.0, bad)
        assert e.value.key == "n_eq" and e.value.got == bad


@pytest.mark.parametrize("name", ["range_ref", "cycles_ref", "exponent"])
@pytest.mark.parametrize("bad", [0.0, -2.0, math.inf, math.nan])
def test_basquin_line_refuses_a_non_positive_reference(name, bad):
    kw = {"range_ref": 10.0, "cycles_ref": 1e6, "exponent": 5.0, name: bad}
    with pytest.raises(InputError) as e:
        BasquinCurve(**kw)
    assert e.value.key == f"sn.{name}" and e.value.expected == "a positive number"
    assert e.value.got is bad or (math.isnan(bad) and math.isnan(e.value.got))


def test_basquin_cutoff_must_be_finite_and_not_negative():
    assert BasquinCurve(10.0, 1e6, 5.0, 0.0).cutoff_range == 0.0
    for bad in (-0.1, math.inf):
        with pytest.raises(InputError) as e:
            BasquinCurve(10.0, 1e6, 5.0, bad)
        assert e.value.key == "sn.cutoff_range" and e.value.got == bad


@pytest.mark.parametrize("x", [0.0, 5e-9, -5e-9, 2e-8, 0.3, -4.0, 12.0])
def test_exact_step_weight_is_expm1_over_rate(x):
    # weight of a constant input over a step h in x' = s x + u: (e^{s h} - 1)/s, tending to h
    # as s -> 0 (integral of e^{s t} from 0 to h); reference numpy.expm1
    h = 0.02
    s = np.array([x / h])
    got = _phi(s, np.expm1(s * h), h)[0]
    want = h if x == 0.0 else float(np.expm1(x) / s[0])
    assert got == pytest.approx(want, rel=1e-13)

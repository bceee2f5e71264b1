"""Cheaper routes of the wire code against the numpy and rfsafe routes they replace, bit for bit (issue 18).

Each replacement only saves time (an import, array operations, Python overhead); it must give the same
bits as the route it replaces, which is the reference here (kept in this file or called from numpy).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rfsafe.antenna.wire.geometry import unique_ints, unique_rows
from rfsafe.antenna.wire.kernel import _leggauss, gauss_legendre_01
from rfsafe.antenna.wire.legendre_table import HALF_RULES


def _same_bits(a, b) -> bool:
    a, b = np.asarray(a), np.asarray(b)
    return a.dtype == b.dtype and a.shape == b.shape and a.tobytes() == b.tobytes()


@pytest.mark.parametrize("n", sorted(HALF_RULES))
def test_stored_gauss_legendre_rules_are_numpys_bit_for_bit(n):
    # the reference: numpy's own leggauss (Golub-Welsch eigenvalues, one Newton step, symmetrised)
    x, w = np.polynomial.legendre.leggauss(n)
    xs, ws = _leggauss(n)
    assert _same_bits(xs, x) and _same_bits(ws, w)


def test_rules_beyond_the_table_come_from_numpy():
    n = max(HALF_RULES) + 3
    x, w = np.polynomial.legendre.leggauss(n)
    xs, ws = _leggauss(n)
    assert _same_bits(xs, x) and _same_bits(ws, w)
    nodes, weights = gauss_legendre_01(n)
    assert _same_bits(nodes, 0.5 * (x + 1.0)) and _same_bits(weights, 0.5 * w)


def test_the_table_covers_the_rules_of_the_fill_and_of_small_pattern_grids():
    from rfsafe.antenna.wire import solver

    # fill rules (far, wide, near), the power check's base rule, the ground's 8 points, pattern grids up to kD = 24
    assert {solver.N_FAR, solver.N_WIDE, solver.N_NEAR, solver.N_POWER, 8} | set(range(24, 49)) <= set(HALF_RULES)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.integers(-2 ** 40, 2 ** 40), max_size=60), st.sampled_from(["int64", "int32", "intp", "uint8"]))
def test_unique_ints_is_np_unique(values, dtype):
    a = np.array([v % 256 for v in values] if dtype == "uint8" else
                 [v % 2 ** 31 for v in values] if dtype == "int32" else values, dtype=dtype)
    assert _same_bits(unique_ints(a), np.unique(a))


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(*[st.sampled_from([0.0, -0.0, 1.0, -2.5, 1e-12, 3.0, float("nan"), float("inf")])] * 3),
                max_size=40),
       st.sampled_from([1.0, 0.3, 1e-9]))
def test_unique_rows_is_np_unique_axis_0(rows, scale):
    # repeated rows, negative zeros, NaN and infinities (these three handed to np.unique itself)
    a = np.array(rows, dtype=float).reshape(-1, 3) * scale
    assert _same_bits(unique_rows(a), np.unique(a, axis=0))


def test_unique_rows_of_wire_nodes():
    rng = np.random.default_rng(7)
    nodes = np.round(rng.normal(size=(50, 3)) * 10, 3)
    a = np.concatenate([nodes, nodes[::3], nodes[5:9]])
    assert _same_bits(unique_rows(a), np.unique(a, axis=0))


def _radiation_integrals_one_by_one(alpha, d, k):
    """The four F terms of kernel.radiation_integrals computed one at a time (its earlier form, the reference)."""
    s = np.sin(k * d)

    def f(x):
        return d * np.exp(0.5j * x * d) * np.sinc(x * d / (2.0 * np.pi))

    j2 = (f(alpha + k) - f(alpha - k)) / (2j * s)
    j1 = np.exp(1j * alpha * d) * (f(-alpha + k) - f(-alpha - k)) / (2j * s)
    return j1, j2


@pytest.mark.parametrize("shape", ["flat", "matrix", "scalar"])
def test_radiation_integrals_stacked_are_the_terms_one_by_one(shape):
    from rfsafe.antenna.wire.kernel import radiation_integrals

    rng = np.random.default_rng(11)
    k = 2 * np.pi / 7.3
    for _ in range(50):
        if shape == "flat":      # the near-axis entries of the segment sum: one alpha per segment
            n = int(rng.integers(1, 30))
            alpha = k * rng.choice([1.0, -1.0], n) * (1 - rng.uniform(0, 1e-3, n) * rng.integers(0, 2, n))
            d = rng.uniform(0.05, 0.7, n)
        elif shape == "matrix":  # directions x segments of one run (its length broadcast)
            alpha = k * rng.uniform(-1, 1, (int(rng.integers(1, 9)), 5))
            alpha[0, :2] = k, -k
            d = np.full(5, rng.uniform(0.05, 0.7))
        else:
            alpha, d = k * float(rng.uniform(-1, 1)), float(rng.uniform(0.05, 0.7))
        got = radiation_integrals(alpha, d, k)
        ref = _radiation_integrals_one_by_one(alpha, d, k)
        assert all(_same_bits(g, r) for g, r in zip(got, ref))

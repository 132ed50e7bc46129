"""Compiled root checks and fit bookkeeping of the fast path against plain references.

References: numpy's polynomial roots (``numpy.roots``, companion-matrix eigenvalues) for the
admissibility of AR and MA polynomials; the plain-Python kernels (``*_py``) for the compiled
ones; a fit without a prepared (standardised) series for one with it. Coefficients are
seeded random draws.
"""

from __future__ import annotations

import numpy as np
import pytest

from forecasting_core import _fastarma as fa
from forecasting_core import _fastkernels as fk


def _min_root_modulus(coefs: np.ndarray, sign: float) -> float:
    """Smallest |z| with 1 - sum (sign c_i) z^i = 0, by numpy.roots (inf without roots)."""
    c = np.trim_zeros(sign * np.asarray(coefs, dtype=float), "b")
    if c.size == 0:
        return np.inf
    return float(np.min(np.abs(np.roots(np.r_[-c[::-1], 1.0]))))


@pytest.mark.parametrize("m", [1, 4])
def test_admissible_agrees_with_the_roots_numpy_finds(m):
    rng = np.random.default_rng(21)
    limit = 1.001
    checked = 0
    for _ in range(400):
        ar = fa.constrain(rng.normal(scale=1.5, size=rng.integers(0, 4))) * rng.uniform(0.9, 1.1)
        ma = -fa.constrain(rng.normal(scale=1.5, size=rng.integers(0, 3)))
        sar = fa.constrain(rng.normal(size=rng.integers(0, 2))) if m > 1 else np.zeros(0)
        sma = -fa.constrain(rng.normal(size=rng.integers(0, 2))) if m > 1 else np.zeros(0)
        # seasonal roots of 1 - A B^m: |B| = |w|^(1/m), w a root in B^m
        moduli = [
            _min_root_modulus(ar, 1.0),
            _min_root_modulus(ma, -1.0),
            _min_root_modulus(sar, 1.0) ** (1.0 / m),
            _min_root_modulus(sma, -1.0) ** (1.0 / m),
        ]
        nearest = min(moduli)
        if abs(nearest - limit) < 1e-9:
            continue  # too close to call either way
        assert fa.admissible(ar, ma, sar, sma, m, limit) == (nearest > limit)
        assert fa.admissible(tuple(ar), tuple(ma), tuple(sar), tuple(sma), m, limit) == (nearest > limit)
        checked += 1
    assert checked > 350


def test_roots_outside_agrees_with_numpy_roots_at_several_limits():
    rng = np.random.default_rng(4)
    for _ in range(300):
        c = rng.normal(scale=0.6, size=rng.integers(1, 5))
        for limit in (1.0, 1.001, 1.2):
            nearest = _min_root_modulus(c, 1.0)
            if abs(nearest - limit) > 1e-9:
                assert fa.roots_outside(c, limit) == (nearest > limit)


def test_plain_kernels_give_the_compiled_numbers():
    rng = np.random.default_rng(8)
    ws = rng.normal(size=48)
    ws[5] = np.nan
    x = rng.normal(scale=0.5, size=2 + 1 + 1 + 1 + 1)
    got = fk._finish(x, ws, 2, 1, 1, 1, 4, True)
    want = fk._finish_py(x, ws, 2, 1, 1, 1, 4, True)
    for a, b in zip(got[:4], want[:4], strict=True):
        np.testing.assert_allclose(a, b, rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(got[4:7], want[4:7], rtol=1e-12)
    assert got[7] == want[7] == 47
    c, pw = np.array([0.5, -0.3]), 1.001 ** np.arange(1, 3)
    assert fk._roots_ok(c, pw, -1.0) == fk._roots_ok_py(c, pw, -1.0)


@pytest.mark.parametrize(("p", "q", "mean", "kind"), [(1, 1, True, "exact"), (2, 0, False, "css"), (0, 2, True, "css")])
def test_a_prepared_series_gives_the_same_fit(p, q, mean, kind):
    rng = np.random.default_rng(p + 3 * q)
    w = 5.0 + np.cumsum(rng.normal(size=50)) * 0.1
    plain = fa.fit_arma(w, p, q, mean, kind=kind)
    ready = fa.fit_arma(w, p, q, mean, kind=kind, prepared=fa.standardise(w, mean))
    assert (ready.loglik, ready.sigma2, ready.mu, ready.converged) == (
        plain.loglik, plain.sigma2, plain.mu, plain.converged,
    )  # fmt: skip
    np.testing.assert_array_equal(ready.x, plain.x)

"""Transforms: Box-Cox lambda, exact quantile back-transform, bias-adjusted mean, plain errors."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import scipy.stats as st
from scipy.integrate import quad

from forecasting_core import (
    InputError,
    TransformSpec,
    back_transform,
    boxcox_mle_lambda,
    choose_transform,
    guerrero_lambda,
    mean_back_transform,
    transform_series,
)

SPECS = [
    TransformSpec("none"),
    TransformSpec("log"),
    TransformSpec("boxcox", -0.5),
    TransformSpec("boxcox", 0.0),
    TransformSpec("boxcox", 0.3),
    TransformSpec("boxcox", 1.0),
    TransformSpec("boxcox", 2.0),
]


def annual(values, start: int = 1978, name: str = "hake_t") -> pd.Series:
    index = pd.period_range(str(start), periods=len(values), freq="Y")
    return pd.Series(np.asarray(values, dtype=float), index=index, name=name)


@pytest.mark.parametrize(
    ("seed", "sampler"),
    [
        (11, lambda r: r.lognormal(3.0, 0.4, 60)),
        (12, lambda r: r.gamma(4.0, 250.0, 48)),
        (13, lambda r: r.weibull(2.0, 200) * 900 + 5),
        (14, lambda r: (r.normal(20.0, 2.0, 80)) ** 2),
    ],
)
def test_mle_lambda_agrees_with_scipy_boxcox(seed, sampler):
    # Reference: scipy.stats.boxcox maximises the same Box & Cox (1964) profile likelihood.
    x = sampler(np.random.default_rng(seed))
    _, scipy_lambda = st.boxcox(x)
    assert -1 < scipy_lambda < 2  # optimum inside our bounds, so the two must agree
    assert boxcox_mle_lambda(x) == pytest.approx(scipy_lambda, abs=1e-3)


def test_mle_lambda_ignores_missing_values():
    x = np.random.default_rng(21).lognormal(2.0, 0.5, 50)
    with_gaps = x.copy()
    with_gaps[[3, 17]] = np.nan
    # Reference: scipy.stats.boxcox on the observed values only.
    assert boxcox_mle_lambda(with_gaps) == pytest.approx(
        st.boxcox(x[~np.isnan(with_gaps)])[1], abs=1e-3
    )


@pytest.mark.parametrize("lam", [-0.5, 0.0, 0.5, 1.0, 1.5])
def test_guerrero_lambda_recovers_the_power_that_makes_spread_constant(lam):
    # Guerrero (1993): lambda minimises the coefficient of variation of s_h / m_h**(1 - lambda).
    # Pairs m +- k * m**(1 - lam) have s_h proportional to m_h**(1 - lam): the CV is 0 at lam.
    means = np.linspace(50.0, 400.0, 20)
    half = 0.05 * means ** (1 - lam) * 50**lam
    pairs = np.column_stack([means - half, means + half]).ravel()
    assert guerrero_lambda(annual(pairs), period=2) == pytest.approx(lam, abs=1e-3)


def test_lambdas_stay_within_minus_one_and_two():
    # Spread that falls steeply with level would ask for lambda far above 2.
    means = np.linspace(10.0, 1000.0, 12)
    half = 5.0 * (means / 10.0) ** -3
    pairs = np.column_stack([means - half, means + half]).ravel()
    assert guerrero_lambda(pairs, period=2) == pytest.approx(2.0)
    skewed = np.exp(np.exp(np.random.default_rng(3).normal(0, 1.2, 200)))
    assert -1.0 <= boxcox_mle_lambda(skewed) <= 2.0


@pytest.mark.parametrize("spec", SPECS, ids=lambda s: f"{s.name}{'' if s.lam is None else s.lam}")
def test_back_transform_undoes_transform(spec):
    x = np.array([0.5, 3.0, 120.0, np.nan, 4500.0])
    z = transform_series(x, spec)
    np.testing.assert_allclose(back_transform(z, spec), x, rtol=1e-12)  # NaN passes through


def test_boxcox_with_lambda_near_zero_is_the_log_to_rounding():
    # Box-Cox tends to the log as lambda -> 0 (Box & Cox 1964); the inverse stays accurate.
    x = np.array([0.2, 1.0, 35.0, 8000.0])
    spec = TransformSpec("boxcox", 1e-9)
    np.testing.assert_allclose(transform_series(x, spec), np.log(x), rtol=1e-7, atol=1e-7)
    np.testing.assert_allclose(back_transform(transform_series(x, spec), spec), x, rtol=1e-12)


@pytest.mark.parametrize(
    ("lam", "z", "expected"), [(0.5, -3.0, 0.0), (0.5, -2.0, 0.0), (-0.5, 2.0, np.inf)]
)
def test_boxcox_back_transform_beyond_the_pole_is_zero_or_infinite(lam, z, expected):
    # (lam z + 1)^(1/lam) has no value for lam z + 1 <= 0: the band limit is 0 (lam > 0) or
    # unbounded (lam < 0).
    assert back_transform(z, TransformSpec("boxcox", lam)) == expected


@pytest.mark.parametrize("lam", [-0.5, 0.3, 1.0, 2.0])
def test_boxcox_matches_scipy_definition(lam):
    x = np.random.default_rng(5).gamma(3.0, 100.0, 30)
    # Reference: scipy.stats.boxcox with a given lmbda, (x**lam - 1) / lam (Box & Cox 1964).
    np.testing.assert_allclose(
        transform_series(x, TransformSpec("boxcox", lam)), st.boxcox(x, lmbda=lam), rtol=1e-12
    )


def test_log_back_transform_maps_normal_quantiles_to_lognormal_quantiles():
    mu, sigma = 7.2, 0.35
    q = np.array([0.025, 0.1, 0.25, 0.5, 0.75, 0.9, 0.975])
    z = st.norm.ppf(q, loc=mu, scale=sigma)
    # Reference: scipy.stats.lognorm quantiles (s = sigma, scale = exp(mu)).
    np.testing.assert_allclose(
        back_transform(z, TransformSpec("log")),
        st.lognorm.ppf(q, s=sigma, scale=np.exp(mu)),
        rtol=1e-12,
    )


@pytest.mark.parametrize(("mu", "var"), [(0.0, 1.0), (7.5, 0.04), (-2.0, 0.5), (3.3, 0.0)])
def test_log_mean_is_the_lognormal_mean_exactly(mu, var):
    # Lognormal mean exp(mu + sigma^2 / 2) (standard result; also scipy.stats.lognorm.mean).
    got = mean_back_transform(mu, var, TransformSpec("log"))
    assert got == np.exp(mu + var / 2)
    assert got == pytest.approx(
        st.lognorm.mean(s=np.sqrt(var), scale=np.exp(mu)) if var else np.exp(mu)
    )


def test_log_mean_works_on_arrays_and_series():
    mu = annual([7.0, 7.1, 7.2], start=2026)
    var = np.array([0.01, 0.02, 0.04])
    got = mean_back_transform(mu, var, TransformSpec("log"))
    assert isinstance(got, pd.Series) and got.index.equals(mu.index)
    np.testing.assert_array_equal(got.to_numpy(), np.exp(mu.to_numpy() + var / 2))


@pytest.mark.parametrize(
    ("lam", "mu", "var"), [(0.5, 40.0, 4.0), (0.25, 8.0, 0.3), (1.5, 900.0, 2000.0)]
)
def test_boxcox_mean_is_close_to_the_exact_integral(lam, mu, var):
    # Exact mean E[(lam Z + 1)^(1/lam)], Z ~ N(mu, var), by numerical integration (scipy.integrate.quad);
    # the second-order approximation is accurate to O(var^2) when var is small relative to (lam mu + 1)^2.
    sd = np.sqrt(var)

    def integrand(z):
        base = max(lam * z + 1.0, 0.0)
        return base ** (1.0 / lam) * st.norm.pdf(z, mu, sd)

    exact, _ = quad(integrand, mu - 12 * sd, mu + 12 * sd, limit=200)
    approx = mean_back_transform(mu, var, TransformSpec("boxcox", lam))
    assert approx == pytest.approx(exact, rel=1e-3)
    median = back_transform(mu, TransformSpec("boxcox", lam))
    assert (approx > median) == (
        lam < 1
    )  # concave inverse (lam > 1) puts the mean below the median


def test_boxcox_mean_is_exact_for_lambda_one():
    # lam = 1 is a shift, y = z + 1: the mean is mu + 1 whatever the variance (algebra).
    assert mean_back_transform(4.0, 9.0, TransformSpec("boxcox", 1.0)) == pytest.approx(
        5.0, abs=1e-12
    )


@pytest.mark.parametrize(
    ("values", "spec", "message"),
    [
        (
            [5.0, 3.0, 0.0, 2.0],
            TransformSpec("log"),
            r"log transform needs values above 0\. Got 0\.0 in 1980 instead\.",
        ),
        (
            [5.0, -3.5, 1.0, 2.0],
            TransformSpec("boxcox", 0.5),
            r"Box-Cox transform needs values above 0\. Got -3\.5 in 1979 instead\.",
        ),
    ],
)
def test_non_positive_value_names_the_first_offending_year(values, spec, message):
    with pytest.raises(InputError, match=message):
        transform_series(annual(values), spec)


def test_log_of_zero_in_monthly_data_names_the_month():
    y = pd.Series([3.0, 0.0, 1.0], index=pd.period_range("1993-11", periods=3, freq="M"))
    with pytest.raises(InputError, match=r"Got 0\.0 in 1993-12 instead"):
        choose_transform(y, "log")


def test_array_input_names_the_one_based_position():
    with pytest.raises(InputError, match=r"Got -1\.0 at position 3 instead"):
        transform_series(np.array([1.0, np.nan, -1.0]), TransformSpec("log"))


def test_missing_values_pass_through_and_index_is_kept():
    y = annual([10.0, np.nan, 1000.0])
    z = transform_series(y, TransformSpec("log"))
    assert z.index.equals(y.index) and z.name == "hake_t"
    assert np.isnan(z.iloc[1]) and z.iloc[2] == pytest.approx(np.log(1000.0))


@pytest.mark.parametrize(
    ("kind", "expected"),
    [
        ("multiplicative", "log"),  # spread proportional to level: lambda 0
        ("additive", "none"),  # spread independent of level: lambda 1
    ],
)
def test_auto_takes_the_log_only_when_spread_grows_with_level(kind, expected):
    means = np.linspace(100.0, 2000.0, 24)
    half = 0.1 * means if kind == "multiplicative" else np.full_like(means, 15.0)
    spec = choose_transform(annual(np.column_stack([means - half, means + half]).ravel()), "auto")
    assert spec.name == expected
    assert "Guerrero lambda" in spec.reason


def test_auto_refuses_the_log_for_a_series_with_zero_and_says_where():
    y = annual([120.0, 0.0, 95.0] * 8)
    spec = choose_transform(y, "auto")
    assert spec.name == "none"
    assert "1979" in spec.reason and "at or below 0" in spec.reason
    # One clause after the choice, not "because X, so Y" (an ungrammatical pair of linkers).
    assert spec.reason == (
        "automatic: no transform, the series has a value at or below 0 (0.0 in 1979), "
        "so a log is impossible"
    )


def test_boxcox_choice_carries_guerreros_lambda():
    y = annual(np.random.default_rng(8).lognormal(6.0, 0.3, 40))
    spec = choose_transform(y, "boxcox")
    assert spec.name == "boxcox" and spec.lam == pytest.approx(guerrero_lambda(y, 2))


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (
            lambda: choose_transform(annual([1.0] * 20), "sqrt"),
            r"transform must be one of 'none', 'log', 'boxcox', 'auto'\. Got 'sqrt' instead\.",
        ),
        (
            lambda: guerrero_lambda(annual(np.arange(1.0, 30.0)), period=1),
            r"period must be an integer of at least 2\. Got 1 instead\.",
        ),
        (
            lambda: guerrero_lambda(annual([1.0, 2.0, 3.0]), period=2),
            r"at least 2 subseries .* Got 1 instead\.",
        ),
        (
            lambda: transform_series(np.ones(3), TransformSpec("boxcox", 3.0)),
            r"Box-Cox lambda must be a number from -1 to 2\. Got 3\.0 instead\.",
        ),
        (lambda: mean_back_transform(1.0, -0.1, TransformSpec("log")), r"var must be 0 or more"),
    ],
)
def test_bad_arguments_get_plain_messages(call, message):
    with pytest.raises(InputError, match=message):
        call()

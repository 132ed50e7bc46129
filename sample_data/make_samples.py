"""Generate Haulcast's demo data: the invented Vellmouth co-operative fishery.

Vellmouth is a fictional harbour; the co-operative, its stocks and every number below are
invented. Each series comes from a stated stochastic process so that tests know the truth.
Rerunning this script rewrites the CSV files byte for byte (fixed seeds, fixed number
formats, ``\\n`` line endings, UTF-8)::

    python sample_data/make_samples.py

Notation: ``B`` is the backshift operator, ``e_t`` independent normal innovations with
standard deviation ``sigma``, ``log`` the natural logarithm. Moving-average signs follow
``x_t = e_t + theta * e_{t-1}``.

Files written (all comma separated, header in row 1)
----------------------------------------------------
vellmouth_landings.csv  (wide; ``year`` 1978-2025; tonnes, 1 decimal)
    hake_t     log-scale ARIMA(1,1,0) with drift:
               w_t = log y_t - log y_{t-1};  w_t - 0.02 = 0.5 (w_{t-1} - 0.02) + e_t,
               sigma 0.10, log y_1978 = log 4200.  True d = 1.
    plaice_t   log-scale AR(1) around a fixed mean (d = 0):
               log y_t - log 1500 = 0.6 (log y_{t-1} - log 1500) + e_t, sigma 0.15.
    herring_t  regime shift: log y_t = m_t + u_t, m_t = log 9000 up to 1997 and
               log 9000 - 0.3 from 1998 on (a 26% drop in level); u_t = 0.3 u_{t-1} + e_t,
               sigma 0.15.  Stationary within each regime (d = 0 around a shifting mean).
               In this realisation KPSS rejects a stable level (it reads the shift as
               wandering) while ADF rejects a unit root: the tests disagree, as they do in
               about 45% of realisations of this process at this length (200 seeds tried).
    whiting_t  log-scale ARIMA(0,1,1) without drift:
               log y_t - log y_{t-1} = e_t + 0.3 e_{t-1}, sigma 0.12, log y_1978 = log 2600.
               True d = 1.
vellmouth_landings_2020.csv
    The same file as it stood in 2021: years 1978-2020, values identical to the full file.
vellmouth_survey_cpue.csv  (wide; ``year`` 1985-2025; kg per tow, 2 decimals; blank = no survey)
    hake_kg_per_tow    log AR(1): log y_t - log 38 = 0.5 (log y_{t-1} - log 38) + e_t, sigma 0.20.
                       No survey in 1991, 2003, 2004, 2020.  True d = 0.
    plaice_kg_per_tow  log AR(1): log y_t - log 12 = 0.4 (log y_{t-1} - log 12) + e_t, sigma 0.25.
                       No survey in 1991, 2012, 2020.  True d = 0.
vellmouth_squid_monthly.csv  (long; ``series,month,value,unit``; 2011-01 to 2025-12; tonnes, 1 decimal)
    squid      log-scale seasonal ARIMA(1,0,0)(0,1,1)[12]:
               (1 - 0.5 B)(1 - B^12) log y_t = (1 - 0.5 B^12) e_t, sigma 0.10, started from the
               seasonal pattern log 120 + 0.9 cos(2 pi (month - 9) / 12) (peak in September).
               True d = 0, D = 1.
vellmouth_sea_temperature.csv  (wide; ``year`` 1978-2025; deg C anomaly, 2 decimals)
    sea_temp_anomaly_degC  linear warming plus AR(1) noise:
               y_t = -0.45 + 0.02 (year - 1978) + u_t, u_t = 0.4 u_{t-1} + e_t, sigma 0.12.
               Trend-stationary; the level-KPSS sequence removes the trend with one
               difference, so d = 1 is the expected choice.  Negative values are anomalies,
               not errors.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from scipy.signal import lfilter

HERE = Path(__file__).resolve().parent
PLACE = "vellmouth"
#: Root seed; each series draws from its own stream ``default_rng([SEED, k])``.
SEED = 19781
BURN_IN = 200

YEARS = np.arange(1978, 2026)
VINTAGE_END = 2020
SURVEY_YEARS = np.arange(1985, 2026)
SQUID_MONTHS = [f"{y}-{m:02d}" for y in range(2011, 2026) for m in range(1, 13)]


def _rng(stream: int) -> np.random.Generator:
    return np.random.default_rng([SEED, stream])


def _ar1(n: int, phi: float, sigma: float, rng: np.random.Generator) -> np.ndarray:
    """Stationary AR(1) ``u_t = phi u_{t-1} + e_t`` after a burn-in."""
    e = rng.normal(0.0, sigma, n + BURN_IN)
    return lfilter([1.0], [1.0, -phi], e)[BURN_IN:]


def hake(rng: np.random.Generator) -> np.ndarray:
    n = len(YEARS)
    w = 0.02 + _ar1(n - 1, 0.5, 0.10, rng)
    logy = np.log(4200.0) + np.concatenate([[0.0], np.cumsum(w)])
    return np.exp(logy)


def plaice(rng: np.random.Generator) -> np.ndarray:
    return np.exp(np.log(1500.0) + _ar1(len(YEARS), 0.6, 0.15, rng))


def herring(rng: np.random.Generator) -> np.ndarray:
    level = np.where(YEARS < 1998, np.log(9000.0), np.log(9000.0) - 0.3)
    return np.exp(level + _ar1(len(YEARS), 0.3, 0.15, rng))


def whiting(rng: np.random.Generator) -> np.ndarray:
    n = len(YEARS)
    e = rng.normal(0.0, 0.12, n)
    w = lfilter([1.0, 0.3], [1.0], e)[1:]
    logy = np.log(2600.0) + np.concatenate([[0.0], np.cumsum(w)])
    return np.exp(logy)


def survey(
    rng: np.random.Generator, mean: float, phi: float, sigma: float, gaps: list[int]
) -> np.ndarray:
    y = np.exp(np.log(mean) + _ar1(len(SURVEY_YEARS), phi, sigma, rng))
    y[np.isin(SURVEY_YEARS, gaps)] = np.nan
    return y


def squid(rng: np.random.Generator) -> np.ndarray:
    n = len(SQUID_MONTHS)
    e = rng.normal(0.0, 0.10, n + BURN_IN)
    b = np.zeros(13)
    b[0], b[12] = 1.0, -0.5
    w = lfilter(b, [1.0, -0.5], e)[BURN_IN:]  # w_t = (1 - B^12) log y_t
    months = np.arange(1, 13)
    pattern = np.log(120.0) + 0.9 * np.cos(2 * np.pi * (months - 9) / 12)
    logy = np.empty(n)
    for t in range(n):
        previous = pattern[t] if t < 12 else logy[t - 12]
        logy[t] = previous + w[t]
    return np.exp(logy)


def sea_temperature(rng: np.random.Generator) -> np.ndarray:
    return -0.45 + 0.02 * (YEARS - 1978) + _ar1(len(YEARS), 0.4, 0.12, rng)


def _cell(value: float, decimals: int) -> str:
    return "" if np.isnan(value) else f"{value:.{decimals}f}"


def write_wide(
    path: Path, years: np.ndarray, columns: dict[str, np.ndarray], decimals: int
) -> None:
    lines = [",".join(["year", *columns])]
    for i, year in enumerate(years):
        lines.append(",".join([str(int(year)), *(_cell(v[i], decimals) for v in columns.values())]))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8", newline="\n")


def write_long(
    path: Path, series: str, months: list[str], values: np.ndarray, unit: str, decimals: int
) -> None:
    lines = ["series,month,value,unit"]
    lines.extend(
        f"{series},{m},{_cell(v, decimals)},{unit}" for m, v in zip(months, values, strict=True)
    )
    path.write_text("\n".join(lines) + "\n", encoding="utf-8", newline="\n")


def main(out: Path = HERE) -> None:
    """Write every sample file into ``out`` (default: this folder)."""
    landings = {
        "hake_t": hake(_rng(1)),
        "plaice_t": plaice(_rng(2)),
        "herring_t": herring(_rng(3)),
        "whiting_t": whiting(_rng(4)),
    }
    # Round once so the 2020 vintage is identical, value for value, to the full file.
    landings = {k: np.round(v, 1) for k, v in landings.items()}
    write_wide(out / f"{PLACE}_landings.csv", YEARS, landings, 1)
    keep = YEARS <= VINTAGE_END
    write_wide(
        out / f"{PLACE}_landings_{VINTAGE_END}.csv",
        YEARS[keep],
        {k: v[keep] for k, v in landings.items()},
        1,
    )
    cpue = {
        "hake_kg_per_tow": survey(_rng(5), 38.0, 0.5, 0.20, [1991, 2003, 2004, 2020]),
        "plaice_kg_per_tow": survey(_rng(6), 12.0, 0.4, 0.25, [1991, 2012, 2020]),
    }
    write_wide(out / f"{PLACE}_survey_cpue.csv", SURVEY_YEARS, cpue, 2)
    write_long(out / f"{PLACE}_squid_monthly.csv", "squid", SQUID_MONTHS, squid(_rng(7)), "t", 1)
    write_wide(
        out / f"{PLACE}_sea_temperature.csv",
        YEARS,
        {"sea_temp_anomaly_degC": sea_temperature(_rng(8))},
        2,
    )


if __name__ == "__main__":
    main()

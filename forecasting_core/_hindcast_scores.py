"""Skill scores, paired comparisons and the verdict of a hindcast (split from ``_hindcast``).

The hindcast keeps one model's forecasts as a *block*: a dict of equal-length columns
(``origin`` and ``time`` labels, ``step``, ``actual``, ``mean``, ``median``, ``lo80``,
``hi80``, ``lo95``, ``hi95`` and the MASE ``scale`` of the origin) in origin and step order,
numpy arrays throughout, so that scoring never goes through pandas. The DataFrame of
:attr:`Hindcast.errors` is built once from the blocks (:func:`errors_frame`); the functions
taking a frame (:func:`_score`, :func:`_paired_scores`) are the same scores read from one.
The conventions (MASE, interval score, coverage, comparisons on common forecasts) are stated
in ``_hindcast``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd

from forecasting_core._results import SkillScore

__all__ = ["block_of", "errors_frame", "interval_score", "paired_blocks", "score_block", "verdict"]

#: Band levels scored by the hindcast (percent).
LEVELS = (80, 95)
ERROR_COLUMNS = [
    "model", "origin", "step", "time", "actual", "mean", "median", "lo80", "hi80", "lo95", "hi95",
]  # fmt: skip
#: Columns of a block (every error column but the model's label, and the MASE scale).
BLOCK_COLUMNS = (*ERROR_COLUMNS[1:], "scale")
_FLOAT_COLUMNS = ("actual", "mean", "median", "lo80", "hi80", "lo95", "hi95", "scale")

Block = Mapping[str, np.ndarray]


def interval_score(lo: np.ndarray, hi: np.ndarray, x: np.ndarray, alpha: float) -> np.ndarray:
    """Interval score of central (1 - alpha) bands (Gneiting & Raftery 2007, section 6.2).

    Parameters
    ----------
    lo, hi : numpy.ndarray
        Lower and upper band ends (original scale).
    x : numpy.ndarray
        Outcomes.
    alpha : float
        0.2 for an 80% band, 0.05 for a 95% band.

    Returns
    -------
    numpy.ndarray
        ``(hi - lo) + 2/alpha (lo - x) 1{x < lo} + 2/alpha (x - hi) 1{x > hi}``; lower is better.
    """
    lo, hi, x = (np.asarray(a, dtype=float) for a in (lo, hi, x))
    return (
        (hi - lo)
        + (2.0 / alpha) * np.where(x < lo, lo - x, 0.0)
        + (2.0 / alpha) * np.where(x > hi, x - hi, 0.0)
    )


def empty_block() -> dict[str, np.ndarray]:
    """A block without forecasts."""
    out = {c: np.empty(0) for c in _FLOAT_COLUMNS}
    out.update(origin=np.empty(0, dtype=object), time=np.empty(0, dtype=object))
    out["step"] = np.empty(0, dtype=np.int64)
    return out


def block_of(rows: pd.DataFrame) -> dict[str, np.ndarray]:
    """The block of some rows of an errors frame (with a ``scale`` column)."""
    out = {c: rows[c].to_numpy(float) for c in _FLOAT_COLUMNS}
    out["origin"] = rows["origin"].to_numpy(object)
    out["time"] = rows["time"].to_numpy(object) if "time" in rows else np.empty(len(rows), object)
    out["step"] = rows["step"].to_numpy(np.int64)
    return out


def _take(block: Block, keep: np.ndarray) -> dict[str, np.ndarray]:
    return {k: v[keep] for k, v in block.items()}


def _n_origins(block: Block) -> int:
    return len(set(block["origin"].tolist()))


def score_block(label: str, kind: str, block: Block, n_origins: int) -> SkillScore:
    """Skill of one model over the forecasts of ``block`` (MASE, RMSE, coverage, interval scores)."""
    x = block["actual"]
    if x.size == 0:
        nan = math.nan
        return SkillScore(label, kind, 0, 0, nan, nan, nan, nan, nan, nan, nan)
    abs_err = np.abs(x - block["median"])
    sq_err = (x - block["mean"]) ** 2
    scale = block["scale"]
    usable = np.isfinite(scale) & (scale > 0)
    mase = float(np.mean(abs_err[usable] / scale[usable])) if usable.any() else math.nan
    cover = {}
    iscore = {}
    for level in LEVELS:
        lo = block[f"lo{level}"]
        hi = block[f"hi{level}"]
        cover[level] = float(100.0 * np.mean((x >= lo) & (x <= hi)))
        iscore[level] = float(np.mean(interval_score(lo, hi, x, 1 - level / 100.0)))
    return SkillScore(
        model=label,
        kind=kind,
        origins=n_origins,
        forecasts=int(x.size),
        mae=float(abs_err.mean()),
        rmse=float(math.sqrt(sq_err.mean())),
        mase=mase,
        coverage80=cover[80],
        coverage95=cover[95],
        interval_score80=iscore[80],
        interval_score95=iscore[95],
    )


def _score(label: str, kind: str, rows: pd.DataFrame, n_origins: int) -> SkillScore:
    """:func:`score_block` of some rows of an errors frame."""
    return score_block(label, kind, block_of(rows), n_origins)


def mase_of(block: Block) -> float:
    scale = block["scale"]
    err = np.abs(block["actual"] - block["median"])
    ok = np.isfinite(scale) & (scale > 0)
    return float(np.mean(err[ok] / scale[ok])) if ok.any() else math.nan


def paired_blocks(
    blocks: Mapping[str, Block], models: Sequence[tuple[str, str]]
) -> tuple[tuple[SkillScore, SkillScore], ...]:
    """Every two models scored on the forecasts both made, the earlier of ``models`` first.

    ``models`` holds (label, kind) pairs, ``blocks`` each label's forecasts. When two models
    forecast exactly the same (origin, step) pairs, as they do unless a refit failed, their
    paired scores are their own scores, computed once per model (the same forecasts in the
    same order: identical numbers).
    """
    groups = {}
    for label, kind in models:
        b = blocks[label]
        keys = list(zip(b["origin"].tolist(), b["step"].tolist(), strict=True))
        groups[label] = (b, keys, frozenset(keys), kind)
    whole: dict[str, SkillScore] = {}

    def own(label: str) -> SkillScore:
        if label not in whole:
            b, _keys, _set, kind = groups[label]
            whole[label] = score_block(label, kind, b, _n_origins(b))
        return whole[label]

    pairs = []
    for i, (a, _kind) in enumerate(models):
        b_a, keys_a, set_a, kind_a = groups[a]
        for b, _kind_b in models[i + 1 :]:
            b_b, keys_b, set_b, kind_b = groups[b]
            if set_a == set_b and len(keys_a) == len(set_a) and len(keys_b) == len(set_b):
                pairs.append((own(a), own(b)))
                continue
            common = set_a & set_b
            mine = _take(b_a, np.array([k in common for k in keys_a], dtype=bool))
            theirs = _take(b_b, np.array([k in common for k in keys_b], dtype=bool))
            k = _n_origins(mine)
            pairs.append((score_block(a, kind_a, mine, k), score_block(b, kind_b, theirs, k)))
    return tuple(pairs)


def _paired_scores(
    table: pd.DataFrame, models: Sequence[tuple[str, str]]
) -> tuple[tuple[SkillScore, SkillScore], ...]:
    """:func:`paired_blocks` of an errors frame (with a ``scale`` column)."""
    blocks = {label: block_of(table[table["model"] == label]) for label, _ in models}
    return paired_blocks(blocks, models)


def errors_frame(blocks: Mapping[str, Block]) -> pd.DataFrame:
    """:attr:`Hindcast.errors`: one row per model, origin and step, the models in order."""
    sizes = [len(b["step"]) for b in blocks.values()]
    if not sum(sizes):
        return pd.DataFrame([], columns=[*ERROR_COLUMNS, "scale"])[ERROR_COLUMNS].reset_index(drop=True)
    # text columns typed at once as pandas' default string dtype (what it infers from str)
    labels = np.array([label for label, size in zip(blocks, sizes, strict=True) for _ in range(size)], dtype=object)
    columns: dict[str, Any] = {"model": pd.array(labels, dtype="str")}
    for c in ERROR_COLUMNS[1:]:
        joined = np.concatenate([b[c] for b in blocks.values()])
        columns[c] = pd.array(joined.astype(object), dtype="str") if c in ("origin", "time") else joined
    return pd.DataFrame(columns, columns=ERROR_COLUMNS)


def _same_forecasts(mine: Block, naive: Block) -> bool:
    """Whether two models forecast the same medians at every (origin, step) both forecast."""
    theirs = {
        k: v
        for k, v in zip(
            zip(naive["origin"].tolist(), naive["step"].tolist(), strict=True),
            naive["median"].tolist(),
            strict=True,
        )
    }
    pairs = [
        (v, theirs[k])
        for k, v in zip(
            zip(mine["origin"].tolist(), mine["step"].tolist(), strict=True),
            mine["median"].tolist(),
            strict=True,
        )
        if k in theirs
    ]
    if not pairs:
        return False
    a, b = np.array(pairs, dtype=float).T
    return bool(np.allclose(a, b, rtol=1e-9, atol=0.0))


#: A benchmark did better than the model when its MASE is lower by at least this fraction of
#: the model's, so that the difference shows as at least 1% (half rounds up). The Bench, the
#: Board, the verdict and the batch warnings all use this one rule (:func:`better_by`).
BETTER_BY = 0.005


def better_by(model_mase: float, benchmark_mase: float) -> int | None:
    """How much smaller (percent, rounded half up) the benchmark's MASE is than the model's.

    ``None`` when the benchmark did not do better by the rule of :data:`BETTER_BY` (or either
    MASE is not finite, or the model's is 0). Both MASEs must come from the forecasts both
    made (the pair the Bench and the Board show).
    """
    a, b = model_mase, benchmark_mase
    if not (math.isfinite(a) and math.isfinite(b)) or a <= 0:
        return None
    share = 1.0 - b / a
    if share < BETTER_BY - 1e-12:
        return None
    return max(1, int(math.floor(100.0 * share + 0.5)))


def mase_pair(first: float, second: float) -> str:
    """``"0.95 vs 0.99"``; with three decimals when two would show the same number
    (``"0.986 vs 0.994"``), so a difference named as better is visible."""
    digits = 2 if f"{first:.2f}" != f"{second:.2f}" else 3
    return f"{first:.{digits}f} vs {second:.{digits}f}"


def _better_benchmarks_clause(
    chosen: str, naive: str, paired: Sequence[tuple[SkillScore, SkillScore]], *, beat: bool = True
) -> str:
    """The benchmarks beside the last value that did better than ``chosen`` (:func:`better_by`)
    on the forecasts both made; '' if none.

    After a model that beat (or matched) the last value: " But on the same past forecasts the
    X benchmark (errors N% smaller, MASE b vs a) did better than <chosen>." After one that did
    not (``beat=False``): " The X benchmark also did better (errors N% smaller, MASE b vs a)."
    """
    better = []
    for a, b in paired:
        if a.model != chosen or b.kind != "benchmark" or b.model == naive:
            continue
        pct = better_by(a.mase, b.mase)
        if pct is not None:
            better.append((b.model, f"errors {pct}% smaller, MASE {mase_pair(b.mase, a.mase)}"))
    if not better:
        return ""
    if not beat:
        if len(better) == 1:
            name, size = better[0]
            return f" The {name} benchmark also did better ({size})."
        parts = [f"the {name} benchmark ({size})" for name, size in better]
        names = ", ".join(parts[:-1]) + " and " + parts[-1]
        return f" {names[0].upper()}{names[1:]} also did better."
    parts = [f"the {name} benchmark ({size})" for name, size in better]
    names = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]
    verb = "did" if len(parts) == 1 else "each did"
    return f" But on the same past forecasts {names} {verb} better than {chosen}."


def verdict(
    chosen: str,
    naive: str,
    blocks: Mapping[str, Block],
    n_origins: int,
    skipped: list[str],
    paired: Sequence[tuple[SkillScore, SkillScore]] = (),
) -> str:
    """One sentence: whether and by how much ``chosen`` beat the last value on MASE."""
    mine = blocks[chosen]
    if not mine["step"].size:
        return (
            f"{chosen} could not be scored: no refit gave a forecast at any of the "
            f"{n_origins} origins."
        )
    if chosen == naive:
        return (
            f"The chosen model is the last value itself (MASE {mase_of(mine):.2f} over "
            f"{_n_origins(mine)} origins)."
        )
    # the same pair of scores the benchmark table shows beside the model
    pair = next((p for p in paired if (p[0].model, p[1].model) == (chosen, naive)), None)
    if pair is None:
        pair = paired_blocks(blocks, [(chosen, "arima"), (naive, "benchmark")])[0]
    a, b = pair[0].mase, pair[1].mase
    k = pair[0].origins
    where = f"over {k} origin{'s' if k != 1 else ''}"
    if not (math.isfinite(a) and math.isfinite(b)) or b == 0:
        text = f"{chosen} could not be compared with the last value on MASE {where}."
    elif _same_forecasts(mine, blocks[naive]):
        text = (
            f"{chosen} makes the same forecasts as the last value here (MASE {a:.2f} {where}): "
            "it adds nothing to that benchmark's forecast."
        )
    elif a < b:
        pct = 100.0 * (1.0 - a / b)
        by = f"by {pct:.0f}%" if pct >= 0.5 else "by less than 1%"
        text = f"{chosen} beat the last value {by} on MASE {where} ({a:.2f} vs {b:.2f})."
    else:
        pct = 100.0 * (a / b - 1.0)
        worse = f"{pct:.0f}% worse" if pct >= 0.5 else "equal within 1%"
        text = (
            f"{chosen} did not beat the last value on MASE {where} ({a:.2f} vs {b:.2f}, {worse})."
        )
    beat = "did not beat" not in text
    text += _better_benchmarks_clause(chosen, naive, paired, beat=beat)
    mine_skips = [s for s in skipped if s.startswith(chosen + " ")]
    if mine_skips:
        text += (
            f" Its refit failed at {len(mine_skips)} of {n_origins} origins, which were left "
            "out of this comparison."
        )
    return text

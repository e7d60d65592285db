"""Statistics of a set of variants: percentiles, probability of meeting the targets with
its sampling uncertainty, the non-dominated set and rank-correlation sensitivities."""

from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["non_dominated", "percentiles", "probabilities", "sensitivities"]

KEY_METRICS = ("treatment_mass_kg", "max_interior_dba", "max_sil4_db", "min_margin_dba",
               "min_margin_sil4_db")


def percentiles(metrics: pd.DataFrame, monte_carlo: bool) -> pd.DataFrame:
    """One row per metric: P5, P50, P95, mean and standard deviation (Monte Carlo), or
    the range over the grid (min, max).

    Percentiles are numpy's linear interpolation between order statistics (Hyndman & Fan
    1996, definition 7).
    """
    rows = []
    for name in metrics.columns:
        v = metrics[name].to_numpy(dtype=float)
        v = v[np.isfinite(v)]
        row = {"metric": name, "n": v.size}
        if v.size:
            row.update(min=v.min(), max=v.max())
            if monte_carlo:
                p5, p50, p95 = np.percentile(v, [5, 50, 95])
                row.update(p5=p5, p50=p50, p95=p95, mean=v.mean(),
                           std=v.std(ddof=1) if v.size > 1 else np.nan)
        rows.append(row)
    cols = ["metric", "n", "p5", "p50", "p95", "mean", "std", "min", "max"] if monte_carlo \
        else ["metric", "n", "min", "max"]
    return pd.DataFrame(rows).reindex(columns=cols)


def wilson_interval(k: int, n: int, confidence: float = 0.95) -> tuple[float, float]:
    """Wilson score interval of a binomial proportion (Wilson, JASA 22 (1927) 209-212),
    computed by :meth:`scipy.stats.BinomTestResult.proportion_ci`."""
    from scipy import stats

    ci = stats.binomtest(int(k), int(n)).proportion_ci(confidence, method="wilson")
    return float(ci.low), float(ci.high)


def probabilities(metrics: pd.DataFrame, conditions, confidence: float = 0.95) -> pd.DataFrame:
    """Probability of meeting each target in each condition, and all of them at once.

    A target is met where its margin is >= 0 (an undefined margin does not meet it). The
    interval is the Wilson score interval at ``confidence`` for the sampling uncertainty
    of the estimate (the number of samples, not the model's own uncertainty).
    """
    rows = []
    n = len(metrics)
    targets = [("dba", "margin_dba"), ("sil4", "margin_sil4_db"), ("limit", "margin_limit_db")]
    for target, margin in targets:
        for c in conditions:
            col = f"{margin}[{c}]"
            if col in metrics:
                ok = np.nan_to_num(metrics[col].to_numpy(dtype=float), nan=-1.0) >= 0
                rows.append((target, c, int(ok.sum())))
    if "meets_targets" in metrics:
        rows.append(("all", "all", int(np.sum(metrics["meets_targets"].to_numpy() == 1))))
    out = []
    for target, c, k in rows:
        lo, hi = wilson_interval(k, n, confidence) if n else (np.nan, np.nan)
        out.append({"target": target, "condition": c, "meeting": k, "n": n,
                    "probability": k / n if n else np.nan, "ci_low": lo, "ci_high": hi})
    return pd.DataFrame(out, columns=["target", "condition", "meeting", "n", "probability",
                                      "ci_low", "ci_high"])


def non_dominated(mass, level) -> np.ndarray:
    """Indices of the variants no other variant beats on both (lower is better), by mass.

    A variant is dominated when another is no heavier and no louder and better on at
    least one of the two (Pareto). Equal points are all kept. Sort by mass, then keep a
    point when it is quieter than every strictly lighter point and the quietest of its
    own mass: O(n log n).
    """
    mass, level = np.asarray(mass, dtype=float), np.asarray(level, dtype=float)
    ok = np.flatnonzero(np.isfinite(mass) & np.isfinite(level))
    order = ok[np.lexsort((level[ok], mass[ok]))]
    keep, best_lighter = [], np.inf
    i = 0
    while i < order.size:  # over groups of equal mass
        j = i
        while j < order.size and mass[order[j]] == mass[order[i]]:
            j += 1
        group = order[i:j]
        lowest = level[group].min()
        if lowest < best_lighter:
            keep.extend(int(k) for k in group if level[k] == lowest)
            best_lighter = lowest
        i = j
    return np.array(keep, dtype=int)


def sensitivities(params: pd.DataFrame, metrics: pd.DataFrame,
                  names=KEY_METRICS) -> pd.DataFrame:
    """Spearman rank correlation of each parameter with each key metric.

    ``rho`` in [-1, 1] measures how monotonically a metric follows a parameter over the
    variants (Spearman 1904; :func:`scipy.stats.spearmanr`), with its p-value against no
    correlation. It needs no special sampling design, so it comes from the same Monte
    Carlo or grid variants as the other statistics. NaN where a column is constant.
    """
    from scipy import stats

    rows = []
    for m in names:
        if m not in metrics:
            continue
        y = metrics[m].to_numpy(dtype=float)
        for p in params.columns:
            x = params[p].to_numpy(dtype=float)
            good = np.isfinite(x) & np.isfinite(y)
            rho = pv = np.nan
            if good.sum() > 2 and np.ptp(x[good]) > 0 and np.ptp(y[good]) > 0:
                res = stats.spearmanr(x[good], y[good])
                rho, pv = float(res.statistic), float(res.pvalue)
            rows.append({"metric": m, "parameter": p, "spearman_rho": rho, "p_value": pv})
    return pd.DataFrame(rows, columns=["metric", "parameter", "spearman_rho", "p_value"])

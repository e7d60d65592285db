"""Trade-study reports: the sweep's and the optimiser's PDF and workbook.

They follow the study report's conventions (:mod:`noisebudget.report.model`): a column's
unit and number style come from the end of its name (a metric of one condition or zone,
``interior_dba[cruise]``, is the column of ``interior_dba`` with the condition in its
header), varied values are shown in the units of the layer tables (mm, g, kg/m²), every
workbook sheet opens with the title block and its input hash, the caution is the one of
:data:`noisebudget.report.CAUTIONS`, legends sit outside the data and axes say what they
show in words. Figures: treatment mass against the loudest condition's level with the
non-dominated variants, the spread of the interior spectra and of the varied zones' TL,
rank-correlation sensitivities, and the optimiser's candidates and convergence. Nothing
here computes acoustics; percentiles for drawing are the only arithmetic.
"""

from __future__ import annotations

import io
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd

from ..writing import atomic_write_bytes
from . import CAUTIONS
from .model import SIG3, Column, Table, column, fmt, title_block

__all__ = ["REPORT_KINDS", "optimize_targets", "parameter_unit", "sweep_targets",
           "write_optimize_reports", "write_sweep_reports"]

REPORT_KINDS = ("pdf", "xlsx")
SPREAD_NOTE = ("The spread shown is that of the varied inputs carried through the models, "
               "not the models' own error: tests of representative panels decide.")
KEY_METRICS = ("treatment_mass_kg", "mass_kg", "max_interior_dba", "max_sil4_db",
               "min_margin_dba", "min_margin_sil4_db", "min_margin_limit_db")
# headers that say more in a trade report than the study report's words
HEADERS = {"treatment_mass_kg": "treatment mass per aircraft (kg)",
           "mass_kg": "total mass per aircraft (kg)"}
_CONSTRAINTS = {"target_dba": "interior level target",
                "target_sil4_db": "SIL4 target",
                "target_limit_db": "interior limit spectrum",
                "mass_budget_kg": "treatment mass budget"}


def sweep_targets(stem: str, kinds=REPORT_KINDS) -> list[str]:
    """File names of the sweep reports of the given kinds."""
    return [f"{stem}-sweep.{k}" for k in REPORT_KINDS if k in kinds]


def optimize_targets(stem: str, kinds=REPORT_KINDS) -> list[str]:
    """File names of the optimiser reports of the given kinds."""
    return [f"{stem}-optimize.{k}" for k in REPORT_KINDS if k in kinds]


# ---------------------------------------------------------------------------- the model

def parameter_unit(p) -> tuple[str, float, str]:
    """``(unit, factor from SI, style)`` a varied value is shown in (mm, g, kg/m², ...)."""
    from .model import _parameter_unit

    if p.kind == "surface_density":
        return "kg/m²", 1.0, "0.00"
    if p.kind == "length":
        return "mm", 1e3, "0.0"
    if p.kind == "mass":
        return "g", 1e3, SIG3
    if p.kind == "number":
        return "", 1.0, SIG3
    unit, factor, style = _parameter_unit(p.key)
    return (unit, factor, style) if unit != "-" else (p.unit, 1.0, SIG3)


def _words(p) -> str:
    """A parameter in words: its name, or its address (``sidewall layer 5, cell 1:
    tension``)."""
    if p.zone is not None and p.label == _default_label(p):
        cell = f", cell {p.cell}" if p.cell else ""
        return f"{p.zone} layer {p.layer}{cell}: {p.key.replace('_', ' ')}"
    if p.zone is None and p.label == p.key:
        return "installation mass"
    return p.label


def _default_label(p) -> str:
    return f"{p.zone}.layer{p.layer}" + (f".cell{p.cell}" if p.cell else "") + f".{p.key}"


def _param_column(p) -> Column:
    unit, _, style = parameter_unit(p)
    return Column(p.column, f"{_words(p)} ({unit})" if unit else _words(p), style, unit)


def _shown(p, value):
    return None if value is None or value != value else float(value) * parameter_unit(p)[1]


def key_columns(df: pd.DataFrame, spec, every: bool = False) -> list[str]:
    """The columns of a table of variants a reader looks at first: variant (and
    generation), the varied values, masses, the loudest condition's levels, the worst
    margins, whether every target is met; with ``every``, all the others after them."""
    first = ["variant", "generation", *[p.column for p in spec.parameters], *KEY_METRICS,
             "meets_targets"]
    keys = [k for k in first if k in df.columns]
    return keys + [k for k in df.columns if k not in keys] if every else keys


def _frame_table(df: pd.DataFrame, spec, keys=None) -> Table:
    """A result table with the varied values in display units and every other column
    labelled from its name."""
    params = {p.column: p for p in spec.parameters}
    keys = [k for k in (keys or df.columns) if k in df.columns]
    cols = [_param_column(params[k]) if k in params else column(k, HEADERS.get(k))
            for k in keys]
    if "variant" in keys:
        cols[keys.index("variant")] = Column("variant", "variant", "0")
    if "generation" in keys:
        cols[keys.index("generation")] = Column("generation", "generation", "0")
    rows = []
    for row in df[keys].itertuples(index=False):
        rows.append([_shown(params[k], v) if k in params else _plain(v)
                     for k, v in zip(keys, row, strict=True)])
    return Table(cols, rows)


def _plain(v):
    from .model import _plain as plain

    return plain(v)


def _title(result, what: str) -> dict:
    """The study's title block for a trade report: the varied package instead of the
    baseline, and what the report is."""
    tb = title_block(SimpleNamespace(inputs=result.model.inputs, files=result.files))
    tb["title"] = f"{tb['title']}: {what}"
    tb["baseline"], tb["baseline_label"] = result.spec.package, "varied package"
    return tb


def parameters_table(result) -> Table:
    """Each ``[[vary]]`` entry: what it varies and how, in display units."""
    rows = []
    stacks = result.model.package.stacks
    for p in result.spec.parameters:
        unit, factor, style = parameter_unit(p)
        u = f" {unit}" if unit else ""
        if p.zone is None:
            where = f"{p.package}: installation mass of the zones it gives itself"
        else:
            label = stacks[p.zone].labels[p.layer - 1]
            cell = f", cell {p.cell}" if p.cell else ""
            where = f"{p.package}: {p.zone}, layer {p.layer} ({label}){cell}: {p.key}"
        if p.distribution is not None:
            d = p.distribution

            def f(v):
                return fmt(v * factor, style)  # noqa: B023 - used at once

            spread = {"normal": f"normal, mean {f(d.mean or 0)}, standard deviation "
                                f"{f(d.std or 0)}, drawn within {f(d.low)} .. {f(d.high)}",
                      "uniform": f"uniform from {f(d.low)} to {f(d.high)}",
                      "triangular": f"triangular from {f(d.low)} to {f(d.high)}, most "
                                    f"likely {f(d.mode or 0)}"}[d.kind] + u
        else:
            vals = [fmt(v * factor, style) for v in p.values]
            shown = ", ".join(vals[:8]) + (", ..." if len(vals) > 8 else "")
            spread = f"{len(vals)} value{'s' * (len(vals) != 1)}: {shown}{u}"
        rows.append([p.where, _words(p), where, spread])
    cols = [Column("entry", "entry"), Column("parameter", "parameter"),
            Column("varies", "varies"), Column("values", "values")]
    return Table(cols, rows)


def _metric_words(key: str) -> tuple[str, str, str]:
    c = column(key, HEADERS.get(key))
    words = c.header[:-len(c.unit) - 3] if c.unit else c.header
    return words, c.unit, c.style


def statistics_table(result) -> Table:
    """Key metrics over the variants: P5 / median / P95, mean and standard deviation
    (Monte Carlo) or the range (grid), with the package as written beside them."""
    mc = result.spec.mode == "monte-carlo"
    st = result.statistics.set_index("metric")
    keys = [k for k in KEY_METRICS if k in st.index]
    for c in result.model.conditions:
        keys += [k for k in (f"interior_dba[{c}]", f"sil4_db[{c}]") if k in st.index]
    keys += [k for k in ("rw[composite]", "stc[composite]") if k in st.index]
    stats = ["p5", "p50", "p95", "mean", "std"] if mc else ["min", "max"]
    heads = {"p5": "P5", "p50": "median", "p95": "P95", "mean": "mean",
             "std": "standard deviation", "min": "lowest", "max": "highest"}
    cols = [Column("metric", "metric"), Column("unit", "unit"),
            Column("as_written", "package as written", "row")]
    cols += [Column(s, heads[s], "row") for s in stats]
    ref = result.reference.iloc[0]
    rows, styles = [], []
    for k in keys:
        words, unit, style = _metric_words(k)
        rows.append([words, unit, _plain(ref.get(k)),
                     *[_plain(st.loc[k, s]) for s in stats]])
        styles.append("0.0" if style == "0" and mc else style)  # a mean of ratings
    return Table(cols, rows, styles)


def probabilities_table(result) -> Table:
    """Each target and condition: variants meeting it, the probability and its 95 %
    Wilson interval, in percent."""
    targets = result.model.inputs.targets
    words = {"dba": f"interior level at most {fmt(targets.get('dba'))} dBA",
             "sil4": f"SIL4 at most {fmt(targets.get('sil4'))} dB",
             "limit": "interior levels within the limit spectrum",
             "all": "every target"}
    rows = []
    for r in result.probabilities.itertuples(index=False):
        rows.append([words.get(r.target, r.target),
                     "every condition" if r.condition == "all" else r.condition,
                     int(r.meeting), int(r.n), 100 * r.probability, 100 * r.ci_low,
                     100 * r.ci_high])
    cols = [Column("target", "target"), Column("condition", "condition"),
            Column("meeting", "variants meeting it", "0"), Column("n", "of", "0"),
            Column("probability_pct", "probability (%)", "0.0", "%"),
            Column("ci_low_pct", "95 % interval from (%)", "0.0", "%"),
            Column("ci_high_pct", "to (%)", "0.0", "%")]
    return Table(cols, rows)


def sensitivities_table(result) -> Table:
    """Spearman's rank correlation of each varied parameter with each key metric."""
    params = {p.column: p for p in result.spec.parameters}
    rows = []
    for r in result.sensitivities.itertuples(index=False):
        rows.append([_metric_words(r.metric)[0], _words(params[r.parameter]),
                     _plain(r.spearman_rho), _plain(r.p_value)])
    cols = [Column("metric", "metric"), Column("parameter", "parameter"),
            Column("spearman_rho", "rank correlation (Spearman)", "0.00"),
            Column("p_value", "p-value (no correlation)", SIG3)]
    return Table(cols, rows)


def slack_table(result) -> Table:
    """Each constraint at the optimum: value, limit and slack in its unit."""
    rows = [[_CONSTRAINTS.get(r.constraint, r.constraint),
             "-" if r.constraint == "mass_budget_kg" else r.condition, r.unit,
             _plain(r.value), _plain(r.limit), _plain(r.slack)]
            for r in result.slack.itertuples(index=False)]
    cols = [Column("constraint", "constraint"), Column("condition", "condition"),
            Column("unit", "unit"), Column("value", "value at the optimum", "0.0"),
            Column("limit", "limit", "0.0"), Column("slack", "slack (limit minus value)",
                                                   "0.0")]
    return Table(cols, rows)


def optimum_table(result) -> Table:
    """The varied values and the key metrics at the optimum and in the package as
    written, one quantity per row."""
    opt, ref = result.optimum.iloc[0], result.reference.iloc[0]
    rows, styles = [], []
    for p in result.spec.parameters:
        unit, _, style = parameter_unit(p)
        lo, hi = p.bounds
        rows.append([_words(p), unit, _shown(p, ref[p.column]), _shown(p, opt[p.column]),
                     f"{fmt(_shown(p, lo), style)} .. {fmt(_shown(p, hi), style)}"])
        styles.append(style)
    for k in [*KEY_METRICS, *(f"interior_dba[{c}]" for c in result.model.conditions)]:
        if k in result.optimum:
            words, unit, style = _metric_words(k)
            rows.append([words, unit, _plain(ref[k]), _plain(opt[k]), ""])
            styles.append(style)
    cols = [Column("quantity", "quantity"), Column("unit", "unit"),
            Column("as_written", "package as written", "row"),
            Column("optimum", "optimum", "row"), Column("searched", "range searched")]
    return Table(cols, rows, styles)


# ---------------------------------------------------------------------------- figures

def front_figure(points: pd.DataFrame, front: pd.DataFrame | None, reference, target_dba,
                 optimum=None, what: str = "variant", budget: float | None = None) -> str:
    """Treatment mass against the loudest condition's interior level: every variant
    (coloured by whether it meets every target, or with a mass ``budget`` whether it
    stays within it), the non-dominated ones joined, the package as written, the optimum,
    the target and the budget."""
    from .figures import WIDTH, _legend_below, _plt, _svg

    plt = _plt()
    fig, ax = plt.subplots(figsize=(WIDTH, 3.1), layout="constrained")
    x = points["treatment_mass_kg"].to_numpy(float)
    y = points["max_interior_dba"].to_numpy(float)
    if budget is not None:
        met, words = x <= budget, ("over the mass budget", "within the mass budget")
    elif "meets_targets" in points:
        met, words = points["meets_targets"].to_numpy(bool), ("missing a target",
                                                              "meeting every target")
    else:
        met, words = np.ones(len(x), bool), ("", "")
    size = 9 if len(points) < 400 else 4
    handles = {}
    if (~met).any():
        handles[f"{what} {words[0]}"] = ax.scatter(x[~met], y[~met], s=size, c="#9a9a9a",
                                                   lw=0)
    if met.any():
        handles[f"{what} {words[1]}".strip()] = ax.scatter(x[met], y[met], s=size,
                                                           c="#1f77b4", lw=0)
    if budget is not None:
        handles[f"mass budget {fmt(budget)} kg"] = ax.axvline(budget, color="#555", ls=":",
                                                              lw=1.2)
    if front is not None and len(front):
        (handles["non-dominated variants"],) = ax.plot(
            front["treatment_mass_kg"], front["max_interior_dba"], "-", color="#2ca02c",
            lw=1.2)
    if reference is not None:
        handles["package as written"] = ax.scatter(
            [reference["treatment_mass_kg"]], [reference["max_interior_dba"]], marker="s",
            s=55, facecolors="none", edgecolors="k", lw=1.2, zorder=5)
    if optimum is not None:
        handles["optimum"] = ax.scatter([optimum["treatment_mass_kg"]],
                                        [optimum["max_interior_dba"]], marker="*", s=160,
                                        c="#ffbf00", edgecolors="k", lw=0.6, zorder=6)
    if target_dba is not None:
        handles.update(_target_line(ax, y, target_dba))
    ax.margins(0.06)
    ax.set_xlabel("treatment mass per aircraft (kg)")
    ax.set_ylabel("interior level, loudest condition (dBA)")
    _legend_below(fig, list(handles.values()), list(handles), ncol=3)
    return _svg(fig)


def _target_line(ax, y, target) -> dict:
    """The target as a dashed line where it lies near the points; far from them, a
    legend entry that says where it is, so the points keep the height of the plot."""
    from matplotlib.lines import Line2D

    y = y[np.isfinite(y)]
    lo, hi = (float(y.min()), float(y.max())) if y.size else (target, target)
    span = max(hi - lo, 1.0)
    if lo - span <= target <= hi + span:
        return {f"target {fmt(target)} dBA": ax.axhline(target, color="#a33", ls="--",
                                                        lw=1)}
    where = "below" if target < lo else "above"
    proxy = Line2D([], [], color="#a33", ls="--", lw=1)
    return {f"target {fmt(target)} dBA, {where} the levels shown": proxy}


def spread_figure(band_hz, values, names, ylabel, monte_carlo: bool, reference) -> str:
    """The spread of a banded quantity over the variants, one panel per curve name:
    P5 to P95 (Monte Carlo) or lowest to highest (grid) shaded, the median, and the
    package as written dashed. ``values`` is (nv, ncurve, nb), ``reference``
    (ncurve, nb)."""
    from .figures import _frequency_axis, _legend_below, _panels, _svg, _ylabel

    fig, axes = _panels(len(names), ncols=2, height=2.2)
    band_hz = np.asarray(band_hz, dtype=float)
    keep_all = np.isfinite(values).all(axis=0)
    lo_f = band_hz[keep_all.any(axis=0)].min()
    hi_f = band_hz[keep_all.any(axis=0)].max()
    handles = {}
    spread = "P5 to P95 of the variants" if monte_carlo else "lowest to highest variant"
    for k, (ax, name) in enumerate(zip(axes, names, strict=True)):
        keep = keep_all[k]
        b, v = band_hz[keep], values[:, k, keep]
        if monte_carlo:
            lo, mid, hi = np.percentile(v, [5, 50, 95], axis=0)
        else:
            lo, mid, hi = v.min(axis=0), np.median(v, axis=0), v.max(axis=0)
        handles[spread] = ax.fill_between(b, lo, hi, color="#1f77b4", alpha=0.28, lw=0)
        (handles["median of the variants"],) = ax.plot(b, mid, color="#1f77b4", lw=1.1)
        (handles["package as written"],) = ax.plot(b, reference[k, keep], "k--", lw=0.9)
        _frequency_axis(ax, lo_f, hi_f, every=1 if len(axes) < 3 else 2)
        ax.set_title(name)
    _ylabel(axes, ylabel)
    _legend_below(fig, list(handles.values()), list(handles), ncol=3)
    return _svg(fig)


def sensitivity_figure(sens: pd.DataFrame, metrics, params) -> str | None:
    """Spearman's rank correlation of each parameter with each metric, one panel per
    metric, the largest magnitude on top."""
    from .figures import WIDTH, _legend_below, _plt, _svg

    d = sens[np.isfinite(sens["spearman_rho"])]
    metrics = [m for m in metrics if (d["metric"] == m).any()]
    if not metrics:
        return None
    plt = _plt()
    n_par = len(params)
    fig, axes = plt.subplots(len(metrics), 1, figsize=(WIDTH, len(metrics) * (0.3 * n_par
                                                                               + 0.75) + 0.4),
                             squeeze=False, layout="constrained")
    handles = {}
    for ax, m in zip(axes[:, 0], metrics, strict=True):
        dm = d[d["metric"] == m].set_index("parameter")
        order = sorted(params, key=lambda p: abs(dm["spearman_rho"].get(p.column, 0.0)))
        rho = [float(dm["spearman_rho"].get(p.column, np.nan)) for p in order]
        y = np.arange(len(order))
        for sign, colour, label in ((1, "#d62728", "the metric rises with the parameter"),
                                    (-1, "#1f77b4", "the metric falls as it rises")):
            sel = [i for i, r in enumerate(rho) if np.isfinite(r) and np.sign(r) == sign]
            if sel:
                handles[label] = ax.barh(y[sel], [rho[i] for i in sel], color=colour,
                                         height=0.6)
        ax.set_yticks(y)
        ax.set_yticklabels([_words(p) for p in order])
        ax.set_xlim(-1, 1)
        ax.axvline(0, color="k", lw=0.7)
        ax.grid(axis="y", visible=False)
        ax.set_title(_metric_words(m)[0] + (f" ({_metric_words(m)[1]})"
                                            if _metric_words(m)[1] else ""))
    axes[-1, 0].set_xlabel("rank correlation with the metric (Spearman; -1 to 1)")
    _legend_below(fig, list(handles.values()), list(handles), ncol=2)
    return _svg(fig)


def convergence_figure(evaluations: pd.DataFrame, objective: str,
                       budget: float | None = None) -> str:
    """The best feasible objective after each generation of the search (meeting every
    target, or within the mass ``budget``)."""
    from .figures import WIDTH, _plt, _svg

    plt = _plt()
    fig, ax = plt.subplots(figsize=(WIDTH, 2.2), layout="constrained")
    lightest = objective == "treatment_mass_kg"
    if lightest:
        ok = evaluations["meets_targets"].to_numpy(bool) if "meets_targets" in \
            evaluations else np.zeros(len(evaluations), bool)
        label = "lightest treatment meeting\nevery target (kg)"
    else:
        ok = evaluations["treatment_mass_kg"].to_numpy(float) <= budget
        label = "lowest level of the loudest\ncondition within the budget (dBA)"
    values = evaluations[objective].to_numpy(float)
    if not ok.any():  # nothing feasible: how near the search came, the least shortfall
        if lightest:
            margins = [c for c in evaluations.columns if c.startswith(
                ("margin_dba[", "margin_sil4_db[", "margin_limit_db["))]
            values = np.nansum(np.maximum(-evaluations[margins].to_numpy(float), 0.0),
                               axis=1)
            label = "least total shortfall\nfrom the targets (dB)"
        else:
            values = evaluations["treatment_mass_kg"].to_numpy(float) - budget
            label = "least excess over\nthe mass budget (kg)"
        ok = np.ones(len(evaluations), bool)
    gens = sorted(evaluations["generation"].unique())
    g = evaluations["generation"].to_numpy()
    best = [values[ok & (g <= k)].min() for k in gens]
    ax.plot(gens, best, "k.-", lw=1)
    ax.xaxis.get_major_locator().set_params(integer=True)
    ax.set_xlabel("generation of the search")
    ax.set_ylabel(label)
    return _svg(fig)


# ---------------------------------------------------------------------------- PDF

def _render(context: dict) -> bytes:
    import weasyprint

    from ..resources import data_path
    from .pdf import _environment, _fetcher

    html = _environment().get_template("trade.html").render(**context)
    base = data_path("templates").resolve().as_uri() + "/"
    return weasyprint.HTML(string=html, base_url=base, url_fetcher=_fetcher()).write_pdf()


def _common(result, what: str) -> dict:
    inp = result.model.inputs
    t = inp.targets
    wanted = ([f"an interior level of at most {fmt(t['dba'])} dBA"] if "dba" in t else []) \
        + ([f"a SIL4 of at most {fmt(t['sil4'])} dB"] if "sil4" in t else []) \
        + (["interior band levels within the limit spectrum"] if "limit" in t else [])
    targets = (f"Targets: {', '.join(wanted[:-1]) + ' and ' if len(wanted) > 1 else ''}"
               f"{wanted[-1]}, in every flight condition." if wanted else
               "The study sets no targets.")
    return {"title": _title(result, what), "cautions": CAUTIONS, "spread_note": SPREAD_NOTE,
            "parameters": parameters_table(result), "spec": result.spec,
            "incidence": inp.incidence, "targets": targets}


def sweep_context(result) -> dict:
    """Plain values and figures for the sweep pages of ``trade.html``."""
    mc = result.spec.mode == "monte-carlo"
    model = result.model
    v = result.variants
    varied = [z for z in model.zones if any(p.zone == z for p in result.spec.parameters)]
    zi = [model.zones.index(z) for z in varied]
    ref = result.reference.iloc[0]
    figs = {"front": front_figure(v, result.front, ref, model.inputs.targets.get("dba")),
            "interior": spread_figure(result.band_hz, result.spectra.interior_db,
                                      list(model.conditions),
                                      "interior level (dB re 20 µPa)", mc,
                                      result.reference_spectra.interior_db[0]),
            "tl": spread_figure(result.band_hz, result.spectra.tl_db[:, zi, :], varied,
                                "transmission loss (dB)", mc,
                                result.reference_spectra.tl_db[0][zi]) if zi else None,
            "sensitivity": sensitivity_figure(result.sensitivities,
                                              ("max_interior_dba", "treatment_mass_kg",
                                               "max_sil4_db"), result.spec.parameters)}
    front_keys = ["variant", *[p.column for p in result.spec.parameters],
                  "treatment_mass_kg", "max_interior_dba", "max_sil4_db", "meets_targets"]
    front = _frame_table(result.front.head(60), result.spec, front_keys)
    ctx = _common(result, "trade sweep")
    info = result.info
    if info.get("cluster"):
        where = f"on the Dask cluster {info['cluster']}"
    elif info.get("workers") == 1:
        where = "in one process"
    else:
        import os

        n = info.get("workers") or os.cpu_count() or 1
        where = f"on {n} local processes" + ("" if info.get("workers") else
                                              " (one per core)")
    ctx.update(sweep=True, mc=mc, n=len(v), seconds=result.seconds, where=where, figs=figs,
               stats=statistics_table(result),
               probabilities=probabilities_table(result) if mc else None,
               front=front, front_more=max(0, len(result.front) - 60),
               front_n=len(result.front), sensitivities=sensitivities_table(result))
    return ctx


def optimize_context(result) -> dict:
    """Plain values and figures for the optimiser pages of ``trade.html``."""
    ctx = _common(result, optimize_context_title(result))
    inp = result.model.inputs
    ev = result.evaluations
    ref, opt = result.reference.iloc[0], result.optimum.iloc[0]
    budget = result.mass_budget_kg
    figs = {"candidates": front_figure(ev, None, ref, inp.targets.get("dba"), opt,
                                       what="candidate", budget=budget),
            "convergence": convergence_figure(ev, result.objective, budget)}
    saved = float(ref["treatment_mass_kg"] - opt["treatment_mass_kg"])
    ctx.update(sweep=False, objective=result.objective, budget=result.mass_budget_kg,
               feasible=result.feasible, evaluations=result.evaluations_used,
               generations=result.generations, message=_stopped(result),
               seconds=result.seconds, optimum=optimum_table(result),
               slack=slack_table(result), figs=figs, saved=saved)
    return ctx


def _stopped(result) -> str:
    """Why the search stopped, in words."""
    text = result.message.rstrip(". ")
    if "Maximum number of iterations" in text:
        return f"it ran the most generations allowed ({result.generations})"
    if "terminated successfully" in text:
        return "the candidates of a generation agreed within the tolerance"
    if "does not satisfy the constraints" in text:
        return "it ran its generations without finding a candidate that meets every target"
    return text


def _write_pdf(context: dict, path: Path) -> None:
    from ..progress import steps

    with steps(1, "PDF") as bar:
        bar.start("page layout")
        atomic_write_bytes(path, _render(context))


# ---------------------------------------------------------------------------- workbook

WIDE = 16  # a sheet with more columns prints this many columns a page wide


def _workbook(sheets, tb: dict, path: Path, charts=None) -> None:
    """Sheets ``(name, Table)`` with the title block, then the sources and the caution;
    ``charts(wb, tables)`` adds the charts; written atomically."""
    from openpyxl import Workbook

    from .workbook import _properties, _sheet, _wrap_long

    wb = Workbook()
    wb.remove(wb.active)
    _properties(wb, tb)
    for name, table in sheets:
        ws = _sheet(wb, name, table, tb, widths={"varies": 50, "values": 50})
        if len(table.columns) > WIDE:  # a data sheet: readable pages, not one page wide
            ws.page_setup.fitToWidth = -(-len(table.columns) // WIDE)
    if charts is not None:
        charts(wb, dict(sheets))
    src = [[name, f"SHA-256 {digest}"] for name, digest in tb["files"]]
    src.append(["input hash", f"SHA-256 over the lines 'digest  file name' above, sorted: "
                              f"{tb['input_hash']}"])
    _sheet(wb, "Sources", Table([Column("entry", "file"), Column("source", "source")], src),
           tb, widths={"source": 60})
    _sheet(wb, "Cautions", Table([Column("caution", "caution")],
                                 [[c] for c in (*CAUTIONS, SPREAD_NOTE)]),
           tb, widths={"caution": 60})
    for name in ("Parameters", "Sources", "Cautions"):
        if name in wb.sheetnames:
            _wrap_long(wb[name])
    buf = io.BytesIO()
    wb.save(buf)
    atomic_write_bytes(path, buf.getvalue())


def _cells(ws, table: Table, key: str, rows=None):
    """The column of ``key`` in a sheet written by ``_sheet``: ``(column, first row, last
    row)``, or the rows ``rows`` (0-based rows of the table) only."""
    from .workbook import HEADER_ROW

    col = [c.key for c in table.columns].index(key) + 1
    lo, hi = (0, len(table.rows) - 1) if rows is None else rows
    return col, HEADER_ROW + 1 + lo, HEADER_ROW + 1 + hi


def _point_series(ws, table, x_key, y_key, title, colour, rows=None, line=False,
                  x_ws=None, y_ws=None, y_table=None, y_rows=None):
    from openpyxl.chart import Reference, Series

    from .workbook import _colour

    xc, xlo, xhi = _cells(ws, table, x_key, rows)
    yc, ylo, yhi = _cells(y_ws or ws, y_table or table, y_key, y_rows or rows)
    s = Series(Reference(y_ws or ws, min_col=yc, min_row=ylo, max_row=yhi),
               Reference(x_ws or ws, min_col=xc, min_row=xlo, max_row=xhi), title=title)
    s.marker.symbol = "circle"
    s.marker.size = 5 if line else 4
    _colour(s, colour, line=line)
    return s


def _mass_level_chart(title: str):
    """A workbook chart of treatment mass per aircraft against the loudest condition's
    level, its legend below the plot."""
    from openpyxl.chart import ScatterChart

    ch = ScatterChart()
    ch.title, ch.style, ch.scatterStyle = title, 13, "lineMarker"
    ch.x_axis.title = "treatment mass per aircraft (kg)"
    ch.y_axis.title = "interior level, loudest condition (dBA)"
    ch.x_axis.delete = False
    ch.y_axis.delete = False
    ch.legend.position = "b"
    ch.height, ch.width = 9, 17
    return ch


def _axis_range(ch, xs, ys) -> None:
    xs = [v for v in xs if isinstance(v, float)]
    ys = [v for v in ys if isinstance(v, float)]
    if xs and ys:
        pad = max(max(xs) - min(xs), 1.0) * 0.05
        ch.x_axis.scaling.min = float(np.floor(min(xs) - pad))
        ch.x_axis.scaling.max = float(np.ceil(max(xs) + pad))
        ch.y_axis.scaling.min = float(np.floor(min(ys)) - 1)
        ch.y_axis.scaling.max = float(np.ceil(max(ys)) + 1)


def _reference_point(wb, tables, sheet: str, column_key: str, title: str, colour: str):
    """A one-point series at a quantity table's treatment mass and loudest level (the
    rows of ``Statistics`` or ``Optimum``)."""
    from openpyxl.chart import Reference, Series

    from .workbook import HEADER_ROW, _colour

    t, ws = tables[sheet], wb[sheet]
    names = [r[0] for r in t.rows]
    col = [c.key for c in t.columns].index(column_key) + 1
    rx = HEADER_ROW + 1 + names.index(_metric_words("treatment_mass_kg")[0])
    ry = HEADER_ROW + 1 + names.index(_metric_words("max_interior_dba")[0])
    s = Series(Reference(ws, min_col=col, min_row=ry), Reference(ws, min_col=col, min_row=rx),
               title=title)
    s.marker.symbol = "square" if column_key == "as_written" else "diamond"
    s.marker.size = 9
    _colour(s, colour, line=False)
    return s


def _sweep_charts(wb, tables) -> None:
    from .workbook import _anchor

    front, every = tables["Non-dominated"], tables["Variants"]
    ws = wb["Non-dominated"]
    ch = _mass_level_chart("Treatment mass against the loudest condition's level")
    ch.series.append(_point_series(wb["Variants"], every, "treatment_mass_kg",
                                   "max_interior_dba", "every variant", "9a9a9a"))
    if front.rows:
        ch.series.append(_point_series(ws, front, "treatment_mass_kg", "max_interior_dba",
                                       "non-dominated variants", "2ca02c", line=True))
    ch.series.append(_reference_point(wb, tables, "Statistics", "as_written",
                                      "package as written", "000000"))
    _axis_range(ch, every.values("treatment_mass_kg"), every.values("max_interior_dba"))
    ws.add_chart(ch, _anchor(ws, front, 0))


def _optimize_charts(wb, tables) -> None:
    from .workbook import _anchor

    cand = tables["Candidates"]
    ws = wb["Optimum"]  # a narrow sheet: the chart sits beside its table
    ch = _mass_level_chart("Candidates of the search")
    ch.series.append(_point_series(wb["Candidates"], cand, "treatment_mass_kg",
                                   "max_interior_dba", "candidate", "1f77b4"))
    ch.series.append(_reference_point(wb, tables, "Optimum", "optimum", "optimum",
                                      "ffbf00"))
    ch.series.append(_reference_point(wb, tables, "Optimum", "as_written",
                                      "package as written", "000000"))
    _axis_range(ch, cand.values("treatment_mass_kg"), cand.values("max_interior_dba"))
    ws.add_chart(ch, _anchor(ws, tables["Optimum"], 0))


def write_sweep_reports(result, outdir: Path, stem: str, kinds=REPORT_KINDS) -> list[Path]:
    """Write ``<stem>-sweep.pdf`` and/or ``<stem>-sweep.xlsx`` atomically into
    ``outdir``; returns their paths."""
    written = []
    if "xlsx" in kinds:
        written.append(outdir / f"{stem}-sweep.xlsx")
        spec = result.spec
        sheets = [("Parameters", parameters_table(result)),
                  ("Statistics", statistics_table(result))]
        if result.probabilities is not None:
            sheets.append(("Probabilities", probabilities_table(result)))
        sheets += [("Non-dominated", _frame_table(result.front, spec,
                                                  key_columns(result.front, spec))),
                   ("Variants", _frame_table(result.variants, spec,
                                             key_columns(result.variants, spec, True))),
                   ("Sensitivities", sensitivities_table(result))]
        _workbook(sheets, _title(result, "trade sweep"), written[-1], _sweep_charts)
    if "pdf" in kinds:
        written.append(outdir / f"{stem}-sweep.pdf")
        _write_pdf(sweep_context(result), written[-1])
    return written


def write_optimize_reports(result, outdir: Path, stem: str,
                           kinds=REPORT_KINDS) -> list[Path]:
    """Write ``<stem>-optimize.pdf`` and/or ``<stem>-optimize.xlsx`` atomically into
    ``outdir``; returns their paths."""
    written = []
    if "xlsx" in kinds:
        written.append(outdir / f"{stem}-optimize.xlsx")
        ev = result.evaluations
        sheets = [("Parameters", parameters_table(result)),
                  ("Optimum", optimum_table(result)),
                  ("Constraints", slack_table(result)),
                  ("Candidates", _frame_table(ev, result.spec,
                                              key_columns(ev, result.spec, True)))]
        _workbook(sheets, _title(result, optimize_context_title(result)), written[-1],
                  _optimize_charts)
    if "pdf" in kinds:
        written.append(outdir / f"{stem}-optimize.pdf")
        _write_pdf(optimize_context(result), written[-1])
    return written


def optimize_context_title(result) -> str:
    """What the optimiser looked for, as the report's subtitle."""
    return ("lightest treatment" if result.objective == "treatment_mass_kg"
            else "quietest within a mass budget")


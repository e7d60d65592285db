"""Trade-study reports: the sweep's and the optimiser's PDF pages and workbook sheets.

Figures: mass against dBA with the non-dominated set, uncertainty bands on the interior
spectra and zone TL, a tornado of rank-correlation sensitivities, and the optimiser's
candidates and convergence. Numbers come from the trade results; nothing is computed
here but percentiles for drawing.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pandas as pd

from ..writing import atomic_write_bytes
from . import CAUTIONS

__all__ = ["optimize_targets", "sweep_targets", "write_optimize_reports",
           "write_sweep_reports"]

TRADE_CAUTION = ("Variants and probabilities are those of the model: the spread shown is "
                 "the spread of the varied inputs propagated through idealised physics, not "
                 "the model's own error, which certified tests bound.")


def sweep_targets(stem: str) -> list[str]:
    """File names of the sweep reports."""
    return [f"{stem}-sweep.pdf", f"{stem}-sweep.xlsx"]


def optimize_targets(stem: str) -> list[str]:
    """File names of the optimiser reports."""
    return [f"{stem}-optimize.pdf", f"{stem}-optimize.xlsx"]


# ---- figures ----------------------------------------------------------------------------

def front_figure(variants: pd.DataFrame, front: pd.DataFrame | None, target_dba=None,
                 optimum=None) -> str:
    """Treatment mass against the loudest condition's dBA, the front joined."""
    from .figures import _plt, _svg

    plt = _plt()
    fig, ax = plt.subplots(figsize=(7.2, 3.2))
    met = variants["meets_targets"].to_numpy(bool) if "meets_targets" in variants else None
    x, y = variants["treatment_mass_kg"], variants["max_interior_dba"]
    if met is not None and met.any():
        ax.scatter(x[~met], y[~met], s=6, c="0.6", label="misses a target")
        ax.scatter(x[met], y[met], s=6, c="tab:blue", label="meets the targets")
    else:
        ax.scatter(x, y, s=6, c="0.5", label="variants")
    if front is not None:
        ax.plot(front["treatment_mass_kg"], front["max_interior_dba"], "r.-", lw=1,
                label="non-dominated")
    if target_dba is not None:
        ax.axhline(target_dba, color="k", ls="--", lw=1, label="target dBA")
    if optimum is not None:
        ax.scatter(optimum["treatment_mass_kg"], optimum["max_interior_dba"], marker="*",
                   s=120, c="gold", edgecolors="k", zorder=5, label="optimum")
    ax.set_xlabel("treatment mass per aircraft (kg)")
    ax.set_ylabel("interior dBA, loudest condition")
    ax.legend(fontsize=6)
    return _svg(fig)


def band_figure(band_hz, values, names, ylabel, monte_carlo: bool) -> str:
    """P5-P95 (Monte Carlo) or min-max (grid) band and median per curve.

    ``values`` is (nv, ncurve, nb); one panel per curve name.
    """
    from .figures import _log_axis, _plt, _svg

    plt = _plt()
    n = len(names)
    fig, axes = plt.subplots(1, n, figsize=(7.2, 2.6), sharey=True, squeeze=False)
    for k, (ax, name) in enumerate(zip(axes[0], names, strict=True)):
        v = values[:, k, :]
        keep = np.isfinite(v).all(axis=0)
        b, v = np.asarray(band_hz)[keep], v[:, keep]
        if monte_carlo:
            lo, mid, hi = np.percentile(v, [5, 50, 95], axis=0)
            label = "P5-P95"
        else:
            lo, mid, hi = v.min(axis=0), np.median(v, axis=0), v.max(axis=0)
            label = "range of the grid"
        ax.fill_between(b, lo, hi, alpha=0.3, label=label)
        ax.plot(b, mid, lw=1, label="median")
        _log_axis(ax, list(b), sparse=n > 1)
        ax.set_title(name)
    axes[0][0].set_ylabel(ylabel)
    axes[0][-1].legend(fontsize=6)
    return _svg(fig)


def tornado_figure(sens: pd.DataFrame, metric: str) -> str | None:
    """Spearman rho of each parameter with ``metric``, largest magnitude on top."""
    from .figures import _plt, _svg

    d = sens[(sens["metric"] == metric) & np.isfinite(sens["spearman_rho"])]
    if d.empty:
        return None
    d = d.reindex(d["spearman_rho"].abs().sort_values().index)
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7.2, 0.6 + 0.3 * len(d)))
    colours = ["tab:red" if r > 0 else "tab:blue" for r in d["spearman_rho"]]
    ax.barh(d["parameter"], d["spearman_rho"], color=colours)
    ax.set_xlim(-1, 1)
    ax.axvline(0, color="k", lw=0.8)
    ax.set_xlabel(f"Spearman rank correlation with {metric}")
    return _svg(fig)


def convergence_figure(evaluations: pd.DataFrame, objective: str) -> str:
    """Best feasible objective after each generation."""
    from .figures import _plt, _svg

    plt = _plt()
    fig, ax = plt.subplots(figsize=(3.6, 2.6))
    ok = evaluations["meets_targets"].to_numpy(bool) if objective == "treatment_mass_kg" \
        else np.ones(len(evaluations), bool)
    what = "best feasible"
    if not ok.any():  # nothing meets the targets: show the search all the same
        ok, what = np.ones(len(evaluations), bool), "best (none feasible)"
    gens = sorted(evaluations["generation"].unique())
    best = [evaluations.loc[ok & (evaluations["generation"] <= g).to_numpy(), objective].min()
            for g in gens]
    ax.plot(gens, best, "k.-", lw=1)
    ax.xaxis.get_major_locator().set_params(integer=True)
    ax.set_xlabel("generation")
    ax.set_ylabel(f"{what} {objective}")
    return _svg(fig)


# ---- PDF --------------------------------------------------------------------------------

def _render(template: str, context: dict) -> bytes:
    import jinja2
    import weasyprint

    from ..resources import data_path
    from .pdf import _fetcher, svg_data_uri

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(data_path("templates"))),
                             autoescape=True, undefined=jinja2.StrictUndefined)
    env.filters["svg"] = svg_data_uri
    env.filters["g"] = lambda v: "-" if v is None or v != v else f"{v:.4g}"
    env.filters["f2"] = lambda v: "-" if v is None or v != v else f"{v:.2f}"
    env.filters["pct"] = lambda v: "-" if v is None or v != v else f"{100 * v:.1f} %"
    html = env.get_template(template).render(**context)
    base = data_path("templates").resolve().as_uri() + "/"
    return weasyprint.HTML(string=html, base_url=base, url_fetcher=_fetcher()).write_pdf()


def _common(result, kind: str) -> dict:
    from .. import __version__

    inp = result.model.inputs
    params = [{"label": p.label, "where": p.where, "address": _address(p), "unit": p.unit,
               "how": _how(p)} for p in result.spec.parameters]
    return {"title": f"{inp.title}: {kind}", "meta": inp.meta, "version": __version__,
            "package": result.spec.package, "params": params, "spec": result.spec,
            "files": sorted(result.files.items()), "cautions": (*CAUTIONS, TRADE_CAUTION),
            "targets": inp.targets, "incidence": inp.incidence}


def _address(p) -> str:
    if p.zone is None:
        return f"{p.package}: {p.key}"
    cell = f", cell {p.cell}" if p.cell else ""
    return f"{p.package}: {p.zone}, layer {p.layer}{cell}: {p.key}"


def _how(p) -> str:
    if p.distribution is not None:
        d = p.distribution
        if d.kind == "normal":
            return (f"normal, mean {d.mean:.4g}, std {d.std:.4g}, truncated to "
                    f"[{d.low:.4g}, {d.high:.4g}]")
        if d.kind == "triangular":
            return f"triangular {d.low:.4g} / {d.mode:.4g} / {d.high:.4g}"
        return f"uniform [{d.low:.4g}, {d.high:.4g}]"
    vals = ", ".join(f"{v:.4g}" for v in p.values[:8]) + (" ..." if len(p.values) > 8 else "")
    return f"{len(p.values)} values: {vals}"


def _records(df: pd.DataFrame, limit: int = 60) -> dict:
    return {"columns": list(df.columns), "rows": df.head(limit).to_numpy().tolist(),
            "more": max(0, len(df) - limit)}


def sweep_context(result) -> dict:
    """Plain values for the sweep template."""
    mc = result.spec.mode == "monte-carlo"
    v = result.variants
    ctx = _common(result, "trade sweep")
    varied = sorted({p.zone for p in result.spec.parameters if p.zone is not None},
                    key=result.model.zones.index)
    zi = [result.model.zones.index(z) for z in varied]
    key_stats = result.statistics[result.statistics["metric"].isin(
        ["treatment_mass_kg", "max_interior_dba", "max_sil4_db", "min_margin_dba",
         "min_margin_sil4_db", *[f"interior_dba[{c}]" for c in result.model.conditions]])]
    figs = {"front": front_figure(v, result.front, result.model.inputs.targets.get("dba")),
            "interior": band_figure(result.band_hz, result.spectra.interior_db,
                                    list(result.model.conditions), "interior (dB)", mc),
            "tl": band_figure(result.band_hz, result.spectra.tl_db[:, zi, :], varied,
                              "TL (dB)", mc) if zi else None,
            "tornado": [(m, svg) for m in ("max_interior_dba", "treatment_mass_kg",
                                           "max_sil4_db")
                        if (svg := tornado_figure(result.sensitivities, m)) is not None]}
    front_cols = ["variant", *[p.column for p in result.spec.parameters],
                  "treatment_mass_kg", "max_interior_dba", "max_sil4_db"]
    ctx.update(mc=mc, n=len(v), seconds=result.seconds, info=result.info, figs=figs,
               stats=_records(key_stats.drop(columns=["n"])),
               probabilities=(result.probabilities.to_dict("records")
                              if result.probabilities is not None else None),
               front=_records(result.front[[c for c in front_cols if c in result.front]]),
               sensitivities=_records(result.sensitivities))
    return ctx


def write_sweep_reports(result, outdir: Path, stem: str) -> list[Path]:
    """Write ``<stem>-sweep.pdf`` and ``<stem>-sweep.xlsx`` atomically."""
    pdf, xlsx = (outdir / n for n in sweep_targets(stem))
    _write_workbook(result.tables(), xlsx, _sweep_charts)
    atomic_write_bytes(pdf, _render("trade.html", {"sweep": sweep_context(result),
                                                   "opt": None}))
    return [pdf, xlsx]


def optimize_context(result) -> dict:
    """Plain values for the optimiser template."""
    ctx = _common(result, "optimum")
    ev = result.evaluations
    ctx.update(objective=result.objective, budget=result.mass_budget_kg,
               feasible=result.feasible, evaluations=result.evaluations_used,
               generations=result.generations, message=result.message,
               seconds=result.seconds,
               optimum=[(c, result.optimum[c].iloc[0]) for c in result.optimum.columns],
               slack=result.slack.to_dict("records"),
               figs={"candidates": front_figure(ev, None,
                                                result.model.inputs.targets.get("dba"),
                                                result.optimum.iloc[0]),
                     "convergence": convergence_figure(ev, result.objective)})
    return ctx


def write_optimize_reports(result, outdir: Path, stem: str) -> list[Path]:
    """Write ``<stem>-optimize.pdf`` and ``<stem>-optimize.xlsx`` atomically."""
    pdf, xlsx = (outdir / n for n in optimize_targets(stem))
    _write_workbook(result.tables(), xlsx, _optimize_charts)
    atomic_write_bytes(pdf, _render("trade.html", {"sweep": None,
                                                   "opt": optimize_context(result)}))
    return [pdf, xlsx]


# ---- workbook ---------------------------------------------------------------------------

def _write_workbook(tables: dict, path: Path, charts) -> None:
    from openpyxl import Workbook

    from .workbook import _sheet

    wb = Workbook()
    wb.remove(wb.active)
    sheets = {}
    for name, df in tables.items():
        sheets[name] = _sheet(wb, name.capitalize(), df.astype(
            {c: float for c in df.columns if df[c].dtype == bool}))
    charts(sheets, tables)
    _sheet(wb, "Cautions", pd.DataFrame({"caution": [*CAUTIONS, TRADE_CAUTION]}),
           {"caution": 140})
    buf = io.BytesIO()
    wb.save(buf)
    atomic_write_bytes(path, buf.getvalue())


def _mass_dba_chart(ws, df, title, anchor):
    from openpyxl.chart import Reference, Series

    from .workbook import _scatter

    ch = _scatter(title, "treatment mass (kg)", "interior dBA, loudest condition", False)
    cols = list(df.columns)
    xc, yc = cols.index("treatment_mass_kg") + 1, cols.index("max_interior_dba") + 1
    s = Series(Reference(ws, min_col=yc, min_row=2, max_row=len(df) + 1),
               Reference(ws, min_col=xc, min_row=2, max_row=len(df) + 1), title=title)
    s.marker.symbol = "circle"
    s.graphicalProperties.line.noFill = True
    ch.series.append(s)
    ws.add_chart(ch, anchor)


def _sweep_charts(sheets, tables):
    _mass_dba_chart(sheets["front"], tables["front"], "Non-dominated variants", "B" + str(
        len(tables["front"]) + 4))


def _optimize_charts(sheets, tables):
    _mass_dba_chart(sheets["evaluations"], tables["evaluations"], "Candidates evaluated",
                    "B" + str(len(tables["evaluations"]) + 4))

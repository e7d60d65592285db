"""Figures for the report as SVG text (matplotlib, Agg backend).

Every function takes plain tables or arrays from :mod:`noisebudget.report.model` and
draws; none computes acoustics. Many conditions or zones become small multiples (one
panel each, shared legend); legends sit outside the data; axes say what they show in
words, with units. User text (package, zone, condition names) is drawn as plain text:
``text.parse_math`` is off, so a ``$`` in a name is never read as markup.
"""

from __future__ import annotations

import io
import math
import re

import numpy as np

__all__ = ["cross_section", "dominant_strips", "exterior_spectra", "interior_spectra",
           "pareto_front", "share_bars", "tile_curves", "tl_spectra", "trade_plot"]

WIDTH = 7.2  # inches: the PDF's text width
_TICKS = (31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000)


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    # text stays text in the SVG (searchable, small, fast to render); DejaVu ships with
    # matplotlib and is on the machine for weasyprint
    plt.rcParams.update({"svg.fonttype": "none", "font.family": "DejaVu Sans",
                         "font.size": 7.5, "axes.grid": True, "grid.alpha": 0.3,
                         "axes.titlesize": 8, "legend.fontsize": 7, "legend.frameon": False,
                         "text.parse_math": False, "axes.formatter.use_mathtext": False})
    return plt


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight")
    _plt().close(fig)
    text = buf.getvalue()
    # matplotlib annotates drawn text in comments; drop them so that no user string
    # from a study ends up as markup
    return re.sub(r"<!--.*?-->", "", text[text.index("<svg"):], flags=re.S)


def _hz(v: float) -> str:
    return f"{v / 1000:g}k" if v >= 1000 else f"{v:g}"


def _frequency_axis(ax, lo: float, hi: float, label: str = "one-third-octave band (Hz)",
                    every: int = 1):
    """Log frequency axis with plain tick labels (63, 125, ..., 1k, 2k)."""
    ax.set_xscale("log")
    ticks = [t for t in _TICKS if lo * 0.99 <= t <= hi * 1.01][::every]
    ax.set_xticks(ticks)
    ax.set_xticklabels([_hz(t) for t in ticks])
    ax.minorticks_off()
    ax.set_xlim(lo / 1.15, hi * 1.15)
    ax.set_xlabel(label)


def _panels(n: int, ncols: int = 3, height: float = 2.1, sharey: bool = True):
    """A grid of ``n`` panels (small multiples) filling the text width."""
    plt = _plt()
    ncols = max(1, min(n, ncols))
    nrows = math.ceil(n / ncols)
    fig, axes = plt.subplots(nrows, ncols, figsize=(WIDTH, height * nrows + 0.45),
                             sharey=sharey, squeeze=False, layout="constrained")
    flat = list(axes.ravel())
    for ax in flat[n:]:
        ax.set_visible(False)
    return fig, flat[:n]


def _ylabel(axes, text: str):
    """The y label on the first panel of every row."""
    for ax in axes:
        if ax.get_subplotspec().is_first_col():
            ax.set_ylabel(text)


def _legend_below(fig, handles, labels, ncol=None):
    if handles:
        fig.legend(handles, labels, loc="outside lower center",
                   ncol=ncol or min(len(labels), 5))


def colours(names) -> dict:
    """A fixed colour per name, in the order given (the workbook uses the same)."""
    from .model import colours as hex_colours

    return {n: "#" + c for n, c in hex_colours(names).items()}


def exterior_spectra(conditions) -> str:
    """Exterior one-third-octave levels and tones, one panel per condition.

    ``conditions``: list of dicts with ``name``, ``band_hz``, ``level_db`` and ``tones``
    (a list of ``(name, frequency_hz, level_db)``).
    """
    fig, axes = _panels(len(conditions), ncols=2, height=1.85)
    lo = min(min(c["band_hz"]) for c in conditions)
    hi = max(max(c["band_hz"]) for c in conditions)
    levels = np.concatenate([np.concatenate([c["level_db"], [t[2] for t in c["tones"]]])
                             for c in conditions])
    floor, top = float(levels.min()) - 8, float(levels.max()) + 5
    handles = {}
    for ax, c in zip(axes, conditions, strict=True):
        (h,) = ax.plot(c["band_hz"], c["level_db"], marker=".", lw=1, color="#335")
        handles["one-third-octave band level"] = h
        for name, f, lv in c["tones"]:
            h = ax.vlines(f, floor, lv, color="#c33", lw=1.2)
            ax.plot([f], [lv], "v", color="#c33", ms=4)
            ax.annotate(name, (f, lv), xytext=(3, 2), textcoords="offset points",
                        fontsize=6.5, color="#822")
            handles["tone (level of the tone alone)"] = h
        ax.set_ylim(floor, top)
        _frequency_axis(ax, lo, hi, "frequency (Hz)", every=1 if len(axes) < 3 else 2)
        ax.set_title(c["name"])
    _ylabel(axes, "exterior level (dB re 20 µPa)")
    _legend_below(fig, list(handles.values()), list(handles))
    return _svg(fig)


def _per_panel_lines(groups, packages, ylabel, extra=None, ncols=3):
    """Small multiples: one panel per ``(title, {package: (x, y)})`` group."""
    fig, axes = _panels(len(groups), ncols=ncols)
    col = colours(packages)
    lo = min(min(x) for _, lines in groups for x, _ in lines.values())
    hi = max(max(x) for _, lines in groups for x, _ in lines.values())
    handles = {}
    for k, (ax, (title, lines)) in enumerate(zip(axes, groups, strict=True)):
        for p in packages:
            if p in lines:
                x, y = lines[p]
                (handles[p],) = ax.plot(x, y, marker=".", ms=3, lw=1, color=col[p])
        if extra:
            for label, (x, y) in extra(k).items():
                (handles[label],) = ax.plot(x, y, "k--", lw=1)
        _frequency_axis(ax, lo, hi, every=1 if len(axes) < 3 else 2)
        ax.set_title(title)
    _ylabel(axes, ylabel)
    _legend_below(fig, list(handles.values()), list(handles))
    return _svg(fig)


def tl_spectra(tl, packages, zones) -> str:
    """Band TL of each package, one panel per zone: first the package alone (``tl_db``),
    then the zone with its leaks and flanking path (``zone_tl_db``) where the table has
    it."""
    groups = []
    kinds = [("tl_db", "package alone")]
    if "zone_tl_db" in tl:
        kinds.append(("zone_tl_db", "with leaks and flanking"))
    for key, words in kinds:
        for z in zones:
            d = tl[tl["zone"] == z]
            groups.append((f"{z}: {words}" if len(kinds) > 1 else z,
                           {p: (g["band_hz"].to_numpy(), g[key].to_numpy())
                            for p, g in d.groupby("package", sort=False)}))
    return _per_panel_lines(groups, packages, "transmission loss (dB)",
                            ncols=len(zones) if len(zones) <= 4 else 3)


def interior_spectra(bands, conditions, packages, limit=None) -> str:
    """Interior band levels of each package, one panel per condition; the limit
    spectrum dashed when the study sets one."""
    groups = []
    for c in conditions:
        d = bands[bands["condition"] == c]
        groups.append((c, {p: (g["band_hz"].to_numpy(), g["interior_db"].to_numpy())
                           for p, g in d.groupby("package", sort=False)}))
    extra = (lambda k: {"interior limit": (np.asarray(limit[0]), np.asarray(limit[1]))}) \
        if limit else None
    return _per_panel_lines(groups, packages, "interior level (dB re 20 µPa)", extra,
                            ncols=2)


def _contributor_legend(fig, contributors, colours, used=None):
    """The contributors' key below the panels: a column per zone (its wall, leak and
    flanking paths) and one for the interior sources."""
    from .paths import HATCHES, SOURCE

    plt = _plt()
    columns: dict = {}
    for label, zone, path in contributors:
        if used is None or label in used:
            columns.setdefault(SOURCE if path == SOURCE else zone, []).append((label, path))
    if not columns:
        return
    rows = max(len(v) for v in columns.values())
    handles, labels = [], []
    for entries in columns.values():
        for k in range(rows):
            if k < len(entries):
                label, path = entries[k]
                handles.append(plt.Rectangle((0, 0), 1, 1, facecolor=colours[label],
                                             hatch=HATCHES.get(path, ""), edgecolor="#333",
                                             lw=0.3))
                labels.append(label)
            else:  # keeps each zone in its own column
                handles.append(plt.Rectangle((0, 0), 1, 1, visible=False))
                labels.append("")
    fig.legend(handles, labels, loc="outside lower center", ncol=len(columns), fontsize=6.5)


def share_bars(levels, conditions, packages, contributors, colours) -> str:
    """Share of each path (zone and path, or interior source) in the interior
    A-weighted energy, one panel per condition, packages as stacked bars.

    ``levels``: rows of ``condition``, ``package``, ``contributor``, ``share_pct``;
    ``contributors``: ``(label, zone, path)`` in order; ``colours``: label -> hex.
    """
    from .paths import HATCHES

    col = {k: "#" + v for k, v in colours.items()}
    fig, axes = _panels(len(conditions), ncols=2, height=0.3 * len(packages) + 0.8)
    for ax, c in zip(axes, conditions, strict=True):
        d = levels[levels["condition"] == c]
        left = np.zeros(len(packages))
        y = np.arange(len(packages))[::-1]
        for label, _, path in contributors:
            e = d[d["contributor"] == label].set_index("package")["share_pct"]
            w = np.array([e.get(p, 0.0) for p in packages])
            ax.barh(y, w, left=left, color=col[label], height=0.62,
                    hatch=HATCHES.get(path, ""), edgecolor="#333", lw=0.3)
            left += w
        ax.set_yticks(y)
        ax.set_yticklabels(packages)
        ax.set_xlim(0, 100)
        ax.grid(axis="y", visible=False)
        ax.set_xlabel("share of interior A-weighted energy (%)")
        ax.set_title(c)
    _contributor_legend(fig, contributors, col)
    return _svg(fig)


def dominant_strips(dominant, conditions, packages, contributors, colours) -> str:
    """The largest contributor of every band: one strip per package, one panel per
    condition, coloured as in :func:`share_bars`.

    ``dominant``: rows of ``condition``, ``package``, ``band_hz``, ``contributor``.
    """
    from matplotlib.colors import ListedColormap

    from .paths import HATCHES

    labels = [c[0] for c in contributors]
    paths = {c[0]: c[2] for c in contributors}
    index = {lab: i for i, lab in enumerate(labels)}
    cmap = ListedColormap(["#" + colours[lab] for lab in labels])
    bands = np.array(sorted(set(dominant["band_hz"])))
    fig, axes = _panels(len(conditions), ncols=1, height=0.26 * len(packages) + 0.75,
                        sharey=False)
    for ax, c in zip(axes, conditions, strict=True):
        d = dominant[dominant["condition"] == c].set_index(["package", "band_hz"])
        grid = np.full((len(packages), len(bands)), np.nan)
        for i, p in enumerate(packages):
            for j, b in enumerate(bands):
                if (p, b) in d.index:
                    grid[i, j] = index[d.loc[(p, b), "contributor"]]
        ax.pcolormesh(np.arange(len(bands) + 1), np.arange(len(packages) + 1), grid,
                      cmap=cmap, vmin=-0.5, vmax=len(labels) - 0.5, edgecolors="white",
                      linewidth=0.6)
        for i in range(len(packages)):  # hatch the leak and flanking cells as in the key
            for j in range(len(bands)):
                if np.isfinite(grid[i, j]) and HATCHES.get(paths[labels[int(grid[i, j])]]):
                    ax.add_patch(_plt().Rectangle((j, i), 1, 1, fill=False, lw=0,
                                                  hatch=HATCHES[paths[labels[int(grid[i, j])]]],
                                                  edgecolor="#333"))
        ax.set_yticks(np.arange(len(packages)) + 0.5)
        ax.set_yticklabels(packages)
        ax.invert_yaxis()
        ticks = [j for j, b in enumerate(bands) if b in _TICKS]
        ax.set_xticks(np.array(ticks) + 0.5)
        ax.set_xticklabels([_hz(bands[j]) for j in ticks])
        ax.grid(False)
        ax.set_xlabel("one-third-octave band (Hz)")
        ax.set_title(c)
    used = set(dominant["contributor"])
    _contributor_legend(fig, contributors, {k: "#" + v for k, v in colours.items()}, used)
    return _svg(fig)


def pareto_front(mass, dba) -> list[int]:
    """Indices of packages not beaten on both mass and dBA (lower is better), by mass."""
    mass, dba = np.asarray(mass), np.asarray(dba)
    keep = [i for i in range(len(mass))
            if not np.any((mass <= mass[i]) & (dba <= dba[i])
                          & ((mass < mass[i]) | (dba < dba[i])))]
    return sorted(keep, key=lambda i: mass[i])


def trade_plot(summary, conditions, baseline, target_dba=None,
               mass_key: str = "treatment_mass_kg",
               mass_label: str = "treatment mass per aircraft (kg)") -> str:
    """Mass (``mass_key`` of the summary, by default the treatment mass per aircraft)
    against interior dBA, one panel per condition: every point labelled with its package,
    the baseline boxed, the non-dominated packages joined."""
    fig, axes = _panels(len(conditions), ncols=2, height=2.5, sharey=False)
    packages = list(dict.fromkeys(summary["package"]))
    col = colours(packages)
    handles = {}
    for ax, c in zip(axes, conditions, strict=True):
        d = summary[summary["condition"] == c].reset_index(drop=True)
        x, y = d[mass_key].to_numpy(), d["interior_dba"].to_numpy()
        ax.scatter(x, y, c=[col[p] for p in d["package"]], zorder=3, s=18)
        order = np.argsort(y)
        for rank, i in enumerate(order):  # alternate label sides so neighbours part
            ax.annotate(d["package"][i], (x[i], y[i]), fontsize=6.5, zorder=5,
                        xytext=(5, 3 if rank % 2 else -8), textcoords="offset points")
        front = pareto_front(x, y)
        (handles["non-dominated packages"],) = ax.plot(x[front], y[front], "g-", lw=1)
        b = d["package"] == baseline
        handles["baseline"] = ax.scatter(x[b], y[b], marker="s", s=70, facecolors="none",
                                         edgecolors="k", zorder=4)
        if target_dba is not None:
            handles["target"] = ax.axhline(target_dba, color="#a33", ls="--", lw=1)
        ax.margins(y=0.12)  # room for the labels above the highest point
        span = max(x.max() - x.min(), 1.0)
        ax.set_xlim(x.min() - 0.08 * span, x.max() + 0.35 * span)  # room for labels
        ax.set_xlabel(mass_label)
        ax.set_ylabel("interior level (dBA)")
        ax.set_title(c)
    _legend_below(fig, list(handles.values()), list(handles))
    return _svg(fig)


def tile_curves(curves) -> str:
    """Effective surface mass (symmetric log axis) and normal-incidence TL of each tile
    layer alone, with the mass law of its areal mass."""
    plt = _plt()
    fig, (a1, a2) = plt.subplots(1, 2, figsize=(WIDTH, 2.7), layout="constrained")
    col = colours([c["label"] for c in curves])
    handles = {}
    for c in curves:
        f = c["f_hz"]
        (handles[c["label"]],) = a1.plot(f, c["mass"], lw=1, color=col[c["label"]])
        a2.plot(f, c["tl_db"], lw=1, color=col[c["label"]])
        (handles["mass law of the same areal mass"],) = a2.plot(f, c["mass_law_db"], "k:",
                                                                 lw=0.9)
    a1.set_yscale("symlog", linthresh=1.0)
    a1.axhline(0, color="k", lw=0.6)
    lo = min(float(c["f_hz"][0]) for c in curves)
    hi = max(float(c["f_hz"][-1]) for c in curves)
    for ax in (a1, a2):
        _frequency_axis(ax, lo, hi, "frequency (Hz)")
    ticks = [v for v in (-1000, -100, -10, -1, 0, 1, 10, 100, 1000)]
    a1.set_yticks(ticks)
    a1.set_yticklabels([f"{t:g}" for t in ticks])
    a1.set_ylim(-1000, 1000)
    a1.set_ylabel("effective surface mass, real part (kg/m²)")
    a1.set_title("effective mass (below zero: the tile acts as a spring)")
    a2.set_ylabel("TL at normal incidence (dB)")
    a2.set_title("transmission loss of the tile alone")
    _legend_below(fig, list(handles.values()), list(handles), ncol=2)
    return _svg(fig)


def cross_section(layers, title, families) -> str:
    """The stack as a cross-section, thicknesses to scale, each layer numbered and
    coloured by material family (``families``: name -> (colour, hatch)), with a key.

    Layers thicker than 30 mm are drawn 30 mm wide with a break mark; thin sheets get a
    minimum width so they stay visible.
    """
    plt = _plt()
    fig, ax = plt.subplots(figsize=(WIDTH, 1.35))
    x, cap = 0.0, 30.0
    used = {}
    last_centre, last_lift = -99.0, 0.0
    for r in layers:
        t = r["thickness_mm"]
        w = min(max(t, 1.5), cap)
        colour, hatch = families[r["family"]]
        used[r["family"]] = plt.Rectangle((0, 0), 1, 1, facecolor=colour, hatch=hatch,
                                          edgecolor="#444", lw=0.5)
        ax.add_patch(plt.Rectangle((x, 0), w, 1, facecolor=colour, hatch=hatch,
                                   edgecolor="#444", lw=0.5))
        if t > cap:
            for dx in (-1.0, 0.0):
                ax.plot([x + w / 2 + dx, x + w / 2 + dx + 2], [0.35, 0.65], "k-", lw=1)
        centre = x + w / 2
        # numbers of thin neighbours would touch: stagger them
        lift = 0.25 if centre - last_centre < 3.5 and not last_lift else 0.0
        last_centre, last_lift = centre, lift
        ax.text(centre, 1.05 + lift, str(r["n"]), ha="center", va="bottom", fontsize=7)
        x += w
    ax.set_xlim(-2, x + 2)
    ax.set_ylim(-0.35, 1.5)
    ax.axis("off")
    ax.text(-2, -0.3, "exterior", fontsize=6.5)
    ax.text(x + 2, -0.3, "cabin", fontsize=6.5, ha="right")
    if title:
        ax.set_title(title, fontsize=7.5, loc="left")
    ax.legend(list(used.values()), list(used), loc="center left", bbox_to_anchor=(1.01, 0.5),
              fontsize=6.5, title="material", title_fontsize=6.5)
    return _svg(fig)

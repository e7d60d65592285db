"""Figures for the report as SVG text (matplotlib, Agg backend)."""

from __future__ import annotations

import io
import re

import numpy as np

__all__ = ["contribution_bars", "interior_spectra", "pareto_front", "tile_mass_figure",
           "tl_figure", "trade_plot"]


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    # text stays text in the SVG (searchable, small, fast to render); DejaVu ships with
    # matplotlib and is on the machine for weasyprint
    plt.rcParams.update({"svg.fonttype": "none", "font.family": "DejaVu Sans",
                         "font.size": 8, "axes.grid": True, "grid.alpha": 0.3})
    plt.rcParams["text.parse_math"] = False  # user names are text, never math markup
    return plt


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight")
    _plt().close(fig)
    text = buf.getvalue()
    # matplotlib annotates drawn text in comments; drop them so that no user string
    # from a study ends up as markup
    return re.sub(r"<!--.*?-->", "", text[text.index("<svg"):], flags=re.S)


def _log_axis(ax, bands, sparse=False):
    ax.set_xscale("log")
    marks = (125, 500, 2000) if sparse else (63, 125, 250, 500, 1000, 2000, 4000, 8000)
    ticks = [b for b in bands if b in marks]
    ax.set_xticks(ticks)
    ax.set_xticklabels([f"{t:g}" for t in ticks])
    ax.minorticks_off()
    ax.set_xlabel("one-third-octave band (Hz)")


def tl_figure(tl, packages) -> str:
    """Composite and per-zone TL per package against frequency."""
    plt = _plt()
    zones = list(dict.fromkeys(tl["zone"]))
    fig, axes = plt.subplots(1, len(zones), figsize=(7.2, 2.6), sharey=True, squeeze=False)
    for ax, zone in zip(axes[0], zones, strict=True):
        for p in packages:
            d = tl[(tl["package"] == p) & (tl["zone"] == zone)]
            ax.plot(d["band_hz"], d["tl_db"], marker=".", lw=1, label=p)
        _log_axis(ax, d["band_hz"].tolist(), sparse=len(zones) > 1)
        ax.set_title(zone)
    axes[0][0].set_ylabel("TL (dB)")
    axes[0][-1].legend(fontsize=6)
    return _svg(fig)


def interior_spectra(bands, condition, packages, limit=None) -> str:
    """Interior one-third-octave spectrum per package for one condition."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7.2, 2.8))
    for p in packages:
        d = bands[(bands["package"] == p) & (bands["condition"] == condition)]
        ax.plot(d["band_hz"], d["interior_db"], marker=".", lw=1, label=p)
    if limit:
        ax.plot(limit[0], limit[1], "k--", lw=1.2, label="target limit")
    _log_axis(ax, d["band_hz"].tolist())
    ax.set_ylabel("interior level (dB re 20 uPa)")
    ax.set_title(f"Interior spectrum, {condition}")
    ax.legend(fontsize=6)
    return _svg(fig)


def pareto_front(mass, dba) -> list[int]:
    """Indices of packages not beaten on both mass and dBA (lower is better), by mass."""
    mass, dba = np.asarray(mass), np.asarray(dba)
    keep = [i for i in range(len(mass))
            if not np.any((mass <= mass[i]) & (dba <= dba[i])
                          & ((mass < mass[i]) | (dba < dba[i])))]
    return sorted(keep, key=lambda i: mass[i])


def trade_plot(summary, condition, baseline) -> str:
    """Added mass against interior dBA; baseline marked, non-dominated packages joined."""
    plt = _plt()
    d = summary[summary["condition"] == condition].reset_index(drop=True)
    fig, ax = plt.subplots(figsize=(3.6, 2.8))
    ax.scatter(d["added_mass_kg"], d["interior_dba"], zorder=3)
    for _, r in d.iterrows():
        ax.annotate(r["package"], (r["added_mass_kg"], r["interior_dba"]), fontsize=6,
                    xytext=(4, 3), textcoords="offset points")
    front = pareto_front(d["added_mass_kg"], d["interior_dba"])
    ax.plot(d.loc[front, "added_mass_kg"], d.loc[front, "interior_dba"], "g-", lw=1,
            label="non-dominated")
    b = d[d["package"] == baseline]
    ax.scatter(b["added_mass_kg"], b["interior_dba"], marker="s", s=60, facecolors="none",
               edgecolors="k", zorder=4, label="baseline")
    ax.set_xlabel("added mass per aircraft (kg)")
    ax.set_ylabel("interior level (dBA)")
    ax.set_title(f"Mass against dBA, {condition}")
    ax.legend(fontsize=6)
    return _svg(fig)


def contribution_bars(contrib, condition, packages) -> str:
    """Share of each zone in the interior A-weighted energy, per package."""
    from ..bands import a_weighting, third_octave_bands

    plt = _plt()
    zones = list(dict.fromkeys(contrib[contrib["condition"] == condition]["zone"]))
    fig, ax = plt.subplots(figsize=(5.5, 2.4))
    bottom = np.zeros(len(packages))
    for z in zones:
        shares = []
        for p in packages:
            d = contrib[(contrib["package"] == p) & (contrib["condition"] == condition)]
            b = third_octave_bands(d["band_hz"].min(), d["band_hz"].max())
            aw = d["band_hz"].map(dict(zip(b.nominal, a_weighting(b.centre), strict=True)))
            d = d.assign(e=10 ** ((d["interior_db"] + aw) / 10))  # rows: zones and paths
            e = d.groupby("zone", sort=False)["e"].sum()
            shares.append(100 * e.get(z, 0.0) / e.sum())
        ax.barh(packages, shares, left=bottom, label=z)
        bottom += np.array(shares)
    ax.set_xlabel("share of interior A-weighted energy (%)")
    ax.set_title(f"Zone contributions, {condition}")
    ax.legend(fontsize=6, loc="lower right")
    return _svg(fig)


def tile_mass_figure(tiles) -> str:
    """Effective surface mass and normal-incidence TL of each tile layer."""
    from ..tiles import mass_law_tl, normal_tl

    plt = _plt()
    f = np.geomspace(20, 2000, 600)
    fig, (a1, a2) = plt.subplots(1, 2, figsize=(7.2, 2.6))
    for label, tile in tiles:
        m = tile.effective_mass(2 * np.pi * f).real
        a1.plot(f, np.sign(m) * np.log10(1 + np.abs(m)), lw=1, label=label)
        a2.plot(f, normal_tl(tile, f), lw=1, label=label)
        a2.plot(f, mass_law_tl(tile.areal_mass, f), "k:", lw=0.8)
    for ax in (a1, a2):
        ax.set_xscale("log")
        ax.set_xlabel("frequency (Hz)")
    a1.set_ylabel("sign(m) lg(1 + |m_eff| / (kg/m^2))")
    a2.set_ylabel("normal-incidence TL (dB)")
    a2.set_title("tile TL (dotted: mass law)")
    a1.legend(fontsize=6)
    return _svg(fig)


def cross_section(stack, title) -> str:
    """The stack as a labelled cross-section, thicknesses to scale; layers thicker than
    30 mm are drawn 30 mm wide with a break mark, sheets get a minimum width."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7.2, 1.5))
    x, cap, colours = 0.0, 30.0, plt.rcParams["axes.prop_cycle"].by_key()["color"]
    for i, (layer, label) in enumerate(zip(stack.layers, stack.labels, strict=True)):
        t = layer.thickness * 1e3
        w = min(max(t, 1.5), cap)
        ax.add_patch(plt.Rectangle((x, 0), w, 1, color=colours[i % len(colours)], alpha=0.6))
        if t > cap:
            ax.plot([x + w / 2 - 1, x + w / 2 + 1], [0.35, 0.65], "k-", lw=1)
            ax.plot([x + w / 2, x + w / 2 + 2], [0.35, 0.65], "k-", lw=1)
        ax.text(x + w / 2, 1.05 + 0.35 * (i % 2), f"{label}\n{t:.2g} mm" if t < 1 else
                f"{label}\n{t:.1f} mm", ha="center",
                va="bottom", fontsize=5.5)
        x += w
    ax.set_xlim(-2, x + 2)
    ax.set_ylim(0, 2.2)
    ax.axis("off")
    ax.text(-2, -0.25, "exterior", fontsize=6)
    ax.text(x + 2, -0.25, "cabin", fontsize=6, ha="right")
    ax.set_title(title, fontsize=7)
    return _svg(fig)

"""Paths into the cabin for the report: each zone's wall, leak and flanking path and each
interior source, as one "contributor" with a label and a colour, their A-weighted levels
and shares, and the largest contributor of every band.

Everything here is bookkeeping on the budget's ``contributions`` table (levels of each
path per band, whose energy sum is the band's interior level): energies are added, never
levels, and A-weighting is applied at the band centres as the summary's dBA does, so the
contributors' A-weighted energies add up to the summary's interior dBA.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .model import GENERAL, Column, Table, in_study_order

__all__ = ["HATCHES", "PATH_WORDS", "band_contributions", "contributor_colours",
           "contributor_label", "contributors", "dominant_by_band", "dominant_runs",
           "path_levels", "path_table"]

SOURCE = "interior source"
PATH_WORDS = {"wall": "through the package", "leak": "through its leaks",
              "flanking": "around the package (flanking)",
              SOURCE: "already in the cabin"}
#: hatches of the paths in the figures (the workbook's charts use the colours alone)
HATCHES = {"wall": "", "leak": "///", "flanking": "\\\\\\", SOURCE: ""}
# a hue per zone (Okabe-Ito), the leak darker and the flanking path lighter; greys for
# the interior sources
_ZONE_HUES = ("0072B2", "E69F00", "009E73", "D55E00", "CC79A7", "56B4E9", "8C6D31")
_GREYS = ("4D4D4D", "8C8C8C", "BFBFBF", "6E6E6E", "A6A6A6")


def contributor_label(zone: str, path: str) -> str:
    """``sidewall: wall``, ``sidewall: leak``, ``air conditioning (interior source)``."""
    return f"{zone} ({SOURCE})" if path == SOURCE else f"{zone}: {path}"


def contributors(result) -> list:
    """``(label, zone or source, path)`` of every contributor, zones in study order with
    their paths (wall, leak, flanking), then the interior sources."""
    c = result.contributions
    present = set(zip(c["zone"], c["path"], strict=True))
    out = [(contributor_label(z.name, k), z.name, k) for z in result.inputs.zones
           for k in ("wall", "leak", "flanking") if (z.name, k) in present]
    out += [(contributor_label(s.name, SOURCE), s.name, SOURCE)
            for s in result.inputs.interior_sources if (s.name, SOURCE) in present]
    known = {(z, k) for _, z, k in out}
    out += [(contributor_label(z, k), z, k) for z, k in dict.fromkeys(present)
            if (z, k) not in known]  # anything else the budget adds, last
    return out


def _mix(hex_colour: str, other: str, t: float) -> str:
    a = np.array([int(hex_colour[i:i + 2], 16) for i in (0, 2, 4)])
    b = np.array([int(other[i:i + 2], 16) for i in (0, 2, 4)])
    return "".join(f"{int(round(v)):02X}" for v in (1 - t) * a + t * b)


def contributor_colours(result) -> dict:
    """A colour (hex, no '#') per contributor label, the same in the PDF and the
    workbook: a hue per zone, darker for its leaks, lighter for its flanking path; greys
    for the interior sources."""
    zones = [z.name for z in result.inputs.zones]
    out, grey = {}, 0
    for label, zone, path in contributors(result):
        if zone in zones:
            hue = _ZONE_HUES[zones.index(zone) % len(_ZONE_HUES)]
            out[label] = {"wall": hue, "leak": _mix(hue, "000000", 0.4),
                          "flanking": _mix(hue, "FFFFFF", 0.55)}.get(path, hue)
        else:
            out[label] = _GREYS[grey % len(_GREYS)]
            grey += 1
    return out


def _weights(bands_hz) -> dict:
    """A-weighting (dB) at the exact centre of each nominal one-third-octave band."""
    from ..bands import a_weighting, third_octave_bands

    b = third_octave_bands(float(np.min(bands_hz)), float(np.max(bands_hz)))
    return dict(zip(b.nominal, a_weighting(b.centre), strict=True))


def band_contributions(result) -> pd.DataFrame:
    """The contributions table with each row's contributor and its share of the band's
    energy (``band_share_pct``), in the study's order."""
    c = result.contributions.copy()
    c["contributor"] = [contributor_label(z, k) for z, k in zip(c["zone"], c["path"],
                                                                strict=True)]
    e = 10 ** (c["interior_db"] / 10)
    total = e.groupby([c["package"], c["condition"], c["band_hz"]]).transform("sum")
    c["band_share_pct"] = 100 * e / total
    return in_study_order(c, result.inputs, ["condition", "package"])


def path_levels(result) -> pd.DataFrame:
    """A-weighted level (``level_dba``) and share of the interior A-weighted energy
    (``share_pct``) of each contributor, per condition and package."""
    c = result.contributions
    weight = _weights(c["band_hz"])
    e = 10 ** ((c["interior_db"] + c["band_hz"].map(weight)) / 10)
    labels = pd.Series([contributor_label(z, k) for z, k in zip(c["zone"], c["path"],
                                                                strict=True)], index=c.index)
    g = e.groupby([c["condition"], c["package"], labels], sort=False).sum()
    g.index.names = ["condition", "package", "contributor"]
    total = g.groupby(level=[0, 1], sort=False).transform("sum")
    with np.errstate(divide="ignore"):
        out = pd.DataFrame({"level_dba": 10 * np.log10(g), "share_pct": 100 * g / total})
    out = out.reset_index()
    order = {label: i for i, (label, _, _) in enumerate(contributors(result))}
    out["_k"] = out["contributor"].map(order)
    out = in_study_order(out.sort_values("_k", kind="stable"), result.inputs,
                         ["condition", "package"])
    return out.drop(columns="_k")


def path_table(result, condition: str | None = None) -> Table:
    """Contributors (rows) by package: A-weighted level, then share of the interior
    A-weighted energy, with an "all paths" row. One condition, or every condition with
    a condition column first."""
    inp = result.inputs
    packages = [p.name for p in inp.packages]
    levels = path_levels(result)
    conds = [condition] if condition else [c.name for c in inp.conditions]
    cols = [Column("condition", "condition")] if condition is None else []
    cols += [Column("contributor", "path")]
    cols += [Column(f"level:{p}", f"{p} (dBA)", "0.0", "dBA") for p in packages]
    cols += [Column(f"share:{p}", f"{p} (%)", "0.0", "%") for p in packages]
    summary = result.summary.set_index(["condition", "package"])["interior_dba"]
    rows = []
    for cond in conds:
        d = levels[levels["condition"] == cond].set_index(["contributor", "package"])
        for label, _, _ in contributors(result):
            if label not in d.index.get_level_values(0):
                continue
            lv = [d["level_dba"].get((label, p)) for p in packages]
            sh = [d["share_pct"].get((label, p)) for p in packages]
            rows.append(([cond] if condition is None else []) + [label, *lv, *sh])
        rows.append(([cond] if condition is None else []) + [
            "all paths", *[float(summary[cond, p]) for p in packages], *[100.0] * len(packages)])
    return Table(cols, [[None if isinstance(v, float) and not np.isfinite(v) else v
                         for v in r] for r in rows])


def dominant_by_band(result) -> pd.DataFrame:
    """The largest contributor of every band (``contributor``) and its share of the
    band's energy (``band_share_pct``), per condition and package."""
    c = band_contributions(result)
    idx = c.groupby(["condition", "package", "band_hz"], sort=False)["band_share_pct"].idxmax()
    out = c.loc[idx, ["condition", "package", "band_hz", "contributor", "band_share_pct"]]
    return in_study_order(out.sort_values("band_hz", kind="stable"), result.inputs,
                          ["condition", "package"])


def dominant_runs(result) -> Table:
    """The largest contributor band by band, as runs of neighbouring bands with the same
    largest contributor: condition, package, first and last band, the contributor, and
    the least and most of its share of a band's energy over the run."""
    d = dominant_by_band(result)
    rows = []
    for (cond, pkg), g in d.groupby(["condition", "package"], sort=False):
        g = g.sort_values("band_hz")
        run = (g["contributor"] != g["contributor"].shift()).cumsum()
        for _, r in g.groupby(run, sort=False):
            rows.append([cond, pkg, float(r["band_hz"].iloc[0]), float(r["band_hz"].iloc[-1]),
                         r["contributor"].iloc[0], float(r["band_share_pct"].min()),
                         float(r["band_share_pct"].max())])
    return Table([Column("condition", "condition"), Column("package", "package"),
                  Column("from_hz", "from band (Hz)", GENERAL, "Hz"),
                  Column("to_hz", "to band (Hz)", GENERAL, "Hz"),
                  Column("contributor", "largest path"),
                  Column("least_pct", "least share of the band (%)", "0", "%"),
                  Column("most_pct", "most share of the band (%)", "0", "%")], rows)

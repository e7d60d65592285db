"""Design-review PDF: jinja2 HTML template rendered by weasyprint.

Autoescaping is on, and weasyprint's URL fetcher serves only files of the package's own
template folder: a title or note in a study cannot pull in a network resource or any
other local file.
"""

from __future__ import annotations

from pathlib import Path

from ..resources import data_path
from ..writing import atomic_write_bytes
from . import CAUTIONS
from .notes import REFERENCES

__all__ = ["REFERENCES", "render_html", "safe_url_fetcher", "svg_data_uri", "write_pdf"]


def svg_data_uri(svg: str) -> str:
    """A figure's SVG as a self-contained data URI for an ``<img>``."""
    import base64

    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode()


def safe_url_fetcher(url, *args, **kwargs):
    """Serve only files inside the package's template folder and the report's own SVG
    data URIs; refuse everything else (network, other files, other data)."""
    import base64
    from urllib.parse import unquote, urlparse

    prefix = "data:image/svg+xml;base64,"
    if url.startswith(prefix):
        return {"string": base64.b64decode(url[len(prefix):]), "mime_type": "image/svg+xml"}
    root = data_path("templates").resolve()
    parsed = urlparse(url)
    if parsed.scheme == "file":
        path = Path(unquote(parsed.path)).resolve()
        if path.is_relative_to(root) and path.is_file():
            return {"string": path.read_bytes(), "mime_type": _mime(path)}
    raise ValueError(f"resource refused: {url[:80]}")


def _fetcher():
    """The restricted fetcher in the form the installed weasyprint expects."""
    from weasyprint import urls

    base = getattr(urls, "URLFetcher", None)
    if base is None or not hasattr(base, "fetch"):
        return safe_url_fetcher  # older releases take a function returning a dict

    class TemplateOnlyFetcher(base):
        def fetch(self, url, headers=None):
            got = safe_url_fetcher(url)
            return urls.URLFetcherResponse(url, got["string"],
                                           {"Content-Type": got["mime_type"]})

    return TemplateOnlyFetcher(fail_on_errors=False)


def _mime(path: Path) -> str:
    return {".css": "text/css", ".svg": "image/svg+xml"}.get(path.suffix, "text/plain")


def _figures(result, m: dict, bar) -> dict:
    """Every figure of the report as SVG text; ``bar`` shows progress per figure."""
    from . import figures
    from .model import FAMILIES, tiles_model

    inp = result.inputs
    conds = [{"name": c.name, "band_hz": c.bands.nominal, "level_db": c.levels_db,
              "tones": list(zip(c.tone_names or [f"{f:g} Hz" for f in c.tones_hz],
                                c.tones_hz, c.tone_levels_db, strict=True))}
             for c in inp.conditions]
    packages, conditions, zones = m["packages"], m["conditions"], m["zone_names"]
    who, hue = m["contributors"], m["contributor_colours"]
    jobs = {
        "exterior": lambda: figures.exterior_spectra(conds),
        "trade": lambda: figures.trade_plot(result.summary, conditions, inp.baseline,
                                            inp.targets.get("dba")),
        "tl": lambda: figures.tl_spectra(result.tl, packages, zones),
        "interior": lambda: figures.interior_spectra(result.bands, conditions, packages,
                                                     inp.targets.get("limit")),
        "shares": lambda: figures.share_bars(m["path_levels"], conditions, packages, who,
                                             hue),
        "dominant": lambda: figures.dominant_strips(m["dominant_by_band"], conditions,
                                                    packages, who, hue),
    }
    for k, s in enumerate(m["stacks"]):
        if "layers" in s:
            jobs[f"stack{k}"] = (lambda s=s: figures.cross_section(
                s["layers"], "", FAMILIES))
    curves, m["tile_table"] = tiles_model(result)
    if curves:
        jobs["tiles"] = lambda: figures.tile_curves(curves)
    labels = {"exterior": "exterior spectra", "trade": "mass against dBA", "tl": "TL",
              "interior": "interior spectra", "shares": "contributions",
              "dominant": "dominant paths", "tiles": "tile curves"}
    out = {}
    for name, job in jobs.items():
        bar.start(labels.get(name, "stack drawings"))
        out[name] = job()
    for k, s in enumerate(m["stacks"]):
        s["svg"] = out.get(f"stack{k}")
    return out


def _figure_count(result) -> int:
    stacks = {id(s): s for p in result.inputs.packages for s in p.stacks.values()}
    tiles = any(layer.type_name == "tile" for s in stacks.values() for layer in s.layers)
    return 6 + len(stacks) + tiles


def _context(result, bar) -> dict:
    from .model import FAMILIES, build

    m = build(result)
    figs = _figures(result, m, bar)
    inp = result.inputs
    from ..catalog import load_catalog

    cat = load_catalog()
    sources = [(k, cat.entries[k].get("source", "")) for k in inp.meta.get("catalog_entries",
                                                                           [])]
    return {**m, "figs": figs, "families": FAMILIES, "cautions": CAUTIONS,
            "sources": sources, "air": inp.meta["air"],
            "theta_max": inp.theta_max_deg or 78,
            "limit": inp.targets.get("limit")}


def _cells(table, blank: int = 0) -> list:
    """Rows of ``(text, css class)`` cells; the first ``blank`` columns are left empty
    where they repeat the row above, so groups read at a glance; negative margins are
    marked as missed targets; rows of totals (all zones, the composite, all paths) are
    marked as such."""
    from .model import TEXT, TOTAL_LABELS, fmt

    out, prev = [], None
    for i, row in enumerate(table.rows):
        cells, same = [], prev is not None
        for j, (v, c) in enumerate(zip(row, table.columns, strict=True)):
            same = same and j < blank and prev[j] == v
            style = table.styles[i] if c.style == "row" else c.style
            text = "" if same else fmt(v, style)
            cls = "n" if style != TEXT else ("wrap" if len(text) > 28 else "")
            if c.key.startswith(("margin", "min_margin", "slack")) and isinstance(v, float):
                cls += " fail" if fmt(v, style).startswith("-") else " pass"
            cells.append((text, cls.strip()))
        out.append({"cells": cells, "group": blank and cells[0][0] != "" and prev is not None,
                    "total": any(v in TOTAL_LABELS for v in row if isinstance(v, str))})
        prev = row
    return out


def _without(table, *keys):
    """The table without the columns ``keys`` (a narrower view for the page)."""
    from .model import Table

    keep = [j for j, c in enumerate(table.columns) if c.key not in keys]
    return Table([table.columns[j] for j in keep], [[r[j] for j in keep] for r in table.rows])


def _environment():
    import jinja2

    from .model import fmt

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(data_path("templates"))),
                             autoescape=True, undefined=jinja2.StrictUndefined)
    env.filters["cell"] = lambda v, col: fmt(v, col.style)
    env.filters["fmt"] = fmt
    env.filters["svg"] = svg_data_uri
    env.globals["cells"] = _cells
    env.globals["without"] = _without
    return env


def render_html(result, study_path: Path | None = None, bar=None) -> str:
    """The report as HTML text (autoescaped; figures are trusted SVG from matplotlib)."""
    from ..progress import steps

    if bar is None:
        with steps(1, "report") as quiet_bar:
            return render_html(result, study_path, quiet_bar)
    return _environment().get_template("report.html").render(**_context(result, bar))


def write_pdf(result, study_path: Path, path: Path) -> None:
    """Render and write the PDF atomically, with progress on standard error when the
    work takes more than a second (see :mod:`noisebudget.progress`)."""
    import weasyprint

    from ..progress import steps

    with steps(_figure_count(result) + 2, "PDF") as bar:
        html = render_html(result, study_path, bar)
        bar.start("page layout")
        base = data_path("templates").resolve().as_uri() + "/"
        pdf = weasyprint.HTML(string=html, base_url=base,
                              url_fetcher=_fetcher()).write_pdf()
        bar.start("writing")
    atomic_write_bytes(path, pdf)

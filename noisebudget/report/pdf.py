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

__all__ = ["REFERENCES", "render_html", "safe_url_fetcher", "svg_data_uri", "write_pdf"]

REFERENCES = [
    "J. F. Allard, N. Atalla, Propagation of Sound in Porous Media, 2nd ed., Wiley 2009 "
    "(transfer matrices, JCA model).",
    "M. E. Delany, E. N. Bazley, Acoustical properties of fibrous absorbent materials, "
    "Applied Acoustics 3 (1970) 105-116.",
    "Y. Miki, Acoustical properties of porous materials, J. Acoust. Soc. Jpn (E) 11 (1990).",
    "D. L. Johnson, J. Koplik, R. Dashen, J. Fluid Mech. 176 (1987) 379-402; Y. Champoux, "
    "J. F. Allard, J. Appl. Phys. 70 (1991) 1975.",
    "R. Panneton, Comments on the limp frame equivalent fluid model, JASA 122 (2007) EL217.",
    "T. E. Vigran, Building Acoustics, Taylor & Francis 2008 (mass law, plates, Paris).",
    "L. Cremer, M. Heckl, B. Petersson, Structure-Borne Sound (plate impedance).",
    "Z. Yang et al., Membrane-type acoustic metamaterial, Phys. Rev. Lett. 101, 204301 "
    "(2008); Y. Chen et al., JASA 136 (2014) 969.",
    "D. A. Bies, C. H. Hansen, Engineering Noise Control (composite TL; flow resistivity of "
    "fibres, Applied Acoustics 13 (1980)).",
    "IEC 61672-1:2013 (weightings); IEC 61260-1:2014 (bands); ISO 266 (preferred "
    "frequencies).",
    "ASTM E413 (STC); ISO 717-1:2013 (Rw, C, Ctr); ASTM E1332 (OITC); ANSI S3.14-1977 (SIL).",
    "ISO 10140-2, ISO 16283-1 (R = L1 - L2 + 10 lg S/A); W. C. Sabine (A = 0.161 V/T).",
    "ICAO Doc 7488 (standard atmosphere); 14 CFR 25.841 (cabin pressure altitude).",
]


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


def _context(result, study_path: Path) -> dict:
    from .. import __version__
    from ..stack import Stack
    from . import figures

    inp = result.inputs
    packages = [p.name for p in inp.packages]
    s = result.summary
    rat = result.ratings
    summary_rows = []
    for _, r in s.iterrows():
        side = rat[(rat["package"] == r["package"]) & (rat["zone"] == "composite")].iloc[0]
        summary_rows.append({**r.to_dict(), "stc": side["stc"], "rw": side["rw"],
                             "rating_zone": side["zone"]})
    limit = inp.targets.get("limit")
    figs = {"tl": figures.tl_figure(result.tl, packages),
            "spectra": [figures.interior_spectra(result.bands, c.name, packages, limit)
                        for c in inp.conditions],
            "trade": [figures.trade_plot(s, c.name, inp.baseline) for c in inp.conditions],
            "contrib": [figures.contribution_bars(result.contributions, c.name, packages)
                        for c in inp.conditions]}
    tiles = [(f"{p.name}: {z}", layer) for p in inp.packages for z, st in p.stacks.items()
             for layer in st.layers if layer.type_name == "tile"]
    unique, seen = [], set()
    for label, t in tiles:
        if t not in seen:
            seen.add(t)
            unique.append((label, t))
    figs["tiles"] = figures.tile_mass_figure(unique) if unique else None
    tile_rows = []
    if unique:
        from ..tiles import mass_law_tl, tile_extrema

        for label, t in unique:
            ext = tile_extrema(t, 10.0, 5000.0)
            if ext.peak_hz.size:
                fp, tp = float(ext.peak_hz[0]), float(ext.peak_db[0])
                tile_rows.append({"label": label, "mass": t.areal_mass, "peak_hz": fp,
                                  "peak_db": tp,
                                  "gain_db": tp - float(mass_law_tl(t.areal_mass, [fp])[0]),
                                  "dip_hz": float(ext.dip_hz[0]) if ext.dip_hz.size else None})
    stacks, drawn = [], {}
    for p in inp.packages:
        for z in inp.zones:
            st: Stack = p.stacks[z.name]
            if id(st) in drawn:  # a zone taken over unchanged (based_on): say so once
                stacks.append({"package": p.name, "zone": z.name, "same_as": drawn[id(st)]})
                continue
            drawn[id(st)] = p.name
            rows = [{"label": lab, "type": layer.type_name,
                     "thickness_mm": layer.thickness * 1e3, "mass": layer.areal_mass}
                    for layer, lab in zip(st.layers, st.labels, strict=True)]
            stacks.append({"package": p.name, "zone": z.name, "rows": rows,
                           "total_mass": st.areal_mass, "total_mm": st.thickness * 1e3,
                           "svg": figures.cross_section(st, f"{p.name}: {z.name}")})
    band_tables = []
    for c in inp.conditions:
        d = result.bands[result.bands["condition"] == c.name]
        pivot = d.pivot(index="band_hz", columns="package", values="interior_db")[packages]
        band_tables.append({"condition": c.name, "packages": packages,
                            "rows": [(b, list(v)) for b, v in zip(pivot.index,
                                                                   pivot.to_numpy(),
                                                                   strict=True)]})
    from ..catalog import load_catalog

    cat = load_catalog()
    sources = [(k, cat.entries[k].get("source", "")) for k in inp.meta.get("catalog_entries",
                                                                           [])]
    air = inp.meta["air"]
    return {"meta": inp.meta, "title": inp.title, "version": __version__,
            "files": sorted(getattr(result, "files", {}).items()), "summary": summary_rows,
            "figs": figs, "stacks": stacks, "band_tables": band_tables,
            "cautions": CAUTIONS, "references": REFERENCES, "sources": sources,
            "inputs": inp, "air": air, "baseline": inp.baseline, "tile_rows": tile_rows,
            "notes": {p.name: p.notes for p in inp.packages}}


def render_html(result, study_path: Path) -> str:
    """The report as HTML text (autoescaped; figures are trusted SVG from matplotlib)."""
    import jinja2

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(data_path("templates"))),
                             autoescape=True, undefined=jinja2.StrictUndefined)
    env.filters["f1"] = lambda v: "-" if v is None or v != v else f"{v:.1f}"
    env.filters["f2"] = lambda v: "-" if v is None or v != v else f"{v:.2f}"
    env.filters["f0"] = lambda v: "-" if v is None or v != v else f"{v:.0f}"
    env.filters["svg"] = svg_data_uri
    env.filters["f3"] = lambda v: "-" if v is None or v != v else f"{v + 0.0:.3f}"
    env.filters["mm"] = lambda v: f"{v:.2f}" if 0 < v < 1 else f"{v:.1f}"
    return env.get_template("report.html").render(**_context(result, study_path))


def write_pdf(result, study_path: Path, path: Path) -> None:
    """Render and write the PDF atomically."""
    import weasyprint

    html = render_html(result, study_path)
    base = data_path("templates").resolve().as_uri() + "/"
    pdf = weasyprint.HTML(string=html, base_url=base,
                          url_fetcher=_fetcher()).write_pdf()
    atomic_write_bytes(path, pdf)

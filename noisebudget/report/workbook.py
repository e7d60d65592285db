"""Workbook for programme staff (openpyxl): every table of the report as numbers.

Each sheet opens with the same title block (study, programme, revision, date, author,
input hash), then one table with a frozen, filterable header row. A column's number
format follows its unit (mm for thicknesses, 0.1 dB for levels, 0.1 kg for masses, three
significant figures for material properties); values keep their full precision, except
that a value which would show as -0.0 is stored as 0. Native charts cover every flight
condition and zone. Text from user files is stored as text, never as a formula,
whatever it starts with.
"""

from __future__ import annotations

import io
import math
from pathlib import Path

import numpy as np
import pandas as pd

from ..writing import atomic_write_bytes
from . import CAUTIONS
from .model import (
    GENERAL,
    MM,
    SIG3,
    TEXT,
    Column,
    Table,
    build,
    colours,
    decimals_3sf,
    fmt,
    in_study_order,
)

__all__ = ["HEADER_ROW", "write_workbook"]

HEADER_ROW = 5  # rows 1-3 title block, row 4 empty
CHART_ROWS = 17  # rows a chart of the default size takes, with a gap
_BLUE = "E8ECF0"


def _excel_format(style: str, value) -> str | None:
    """Excel number format for a style and a value (three significant figures are
    chosen per value)."""
    if style == SIG3:
        d = decimals_3sf(value)
        return "0.00E+00" if d is None else ("0" if d == 0 else "0." + "0" * d)
    if style in (TEXT, GENERAL):
        return None
    return style


def _tidy(value, style):
    """The number as stored: a value that shows as zero is stored as zero (no -0.0)."""
    if style not in (TEXT, GENERAL, SIG3, MM) and "." in style:
        d = len(style.split(".")[1])
        if abs(value) < 0.5 * 10.0**-d:
            return 0.0
    if style == MM and abs(value) < 0.005:
        return 0.0
    return value + 0.0


def _put(ws, row, col, value, style=TEXT):
    """Write one cell: text as text (never a formula), numbers with their format."""
    cell = ws.cell(row=row, column=col)
    if value is None or (isinstance(value, float) and value != value):
        cell.value = None
    elif isinstance(value, str):
        cell.value = value
        cell.data_type = "s"  # never a formula, whatever the text starts with
    else:
        v = float(value) if not isinstance(value, (bool, int)) else value
        if isinstance(v, float):
            v = _tidy(v, style)
        cell.value = v
        f = _excel_format(style, v)
        if f:
            cell.number_format = f
    return cell


def _title_block(ws, tb: dict):
    from openpyxl.styles import Font

    c = _put(ws, 1, 1, tb["title"])
    c.font = Font(bold=True, size=13)
    _put(ws, 2, 1, f"programme: {tb['programme']}   revision: {tb['revision']}   "
                   f"date: {tb['date']}   author: {tb['author']}   "
                   f"{tb.get('baseline_label', 'baseline')}: {tb['baseline']}")
    c = _put(ws, 3, 1, f"input hash (SHA-256): {tb['input_hash']}   {tb['tool']}   "
                       "engineering estimates: see the Cautions sheet")
    c.font = Font(size=8, color="555555")


def _sheet(wb, name: str, table: Table, tb: dict, row_styles=None, widths=None):
    """A sheet with the title block and one table; returns the sheet."""
    from openpyxl.styles import Alignment, Font, PatternFill
    from openpyxl.utils import get_column_letter

    ws = wb.create_sheet(name)
    _title_block(ws, tb)
    row_styles = row_styles or table.styles
    h = HEADER_ROW
    for j, col in enumerate(table.columns, start=1):
        c = _put(ws, h, j, col.header)
        c.font = Font(bold=True)
        c.fill = PatternFill("solid", fgColor=_BLUE)
        c.alignment = Alignment(wrap_text=True, vertical="top")
    indent = Alignment(horizontal="left", indent=1)  # text clear of numbers to its left
    for i, row in enumerate(table.rows, start=h + 1):
        for j, (v, col) in enumerate(zip(row, table.columns, strict=True), start=1):
            style = row_styles[i - h - 1] if col.style == "row" else col.style
            c = _put(ws, i, j, v, style)
            if j > 1 and isinstance(v, str):
                c.alignment = indent
    ncol = len(table.columns)
    last = get_column_letter(max(ncol, 1))
    ws.freeze_panes = f"A{h + 1}"
    if table.rows:
        ws.auto_filter.ref = f"A{h}:{last}{h + len(table.rows)}"
    for j, col in enumerate(table.columns, start=1):
        shown = [len(fmt(r[j - 1], col.style if col.style != "row" else SIG3))
                 for r in table.rows[:500]]
        longest_word = max((len(w) for w in col.header.split()), default=4)
        width = max([min(len(col.header), 16), longest_word, *shown]) + 2
        ws.column_dimensions[get_column_letter(j)].width = min((widths or {}).get(
            col.key, width), 60)
    # the header row grows with its longest header (bold text wraps at word ends)
    lines = max((math.ceil(len(c.header) * 1.15 / max(
        ws.column_dimensions[get_column_letter(j)].width - 1, 1))
        for j, c in enumerate(table.columns, start=1)), default=1)
    ws.row_dimensions[h].height = 13 * max(lines, 2) + 4
    # printing: landscape, one page wide, title block and header on every page
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.page_setup.fitToWidth, ws.page_setup.fitToHeight = 1, 0
    ws.print_title_rows = f"1:{h}"
    return ws


def _frequency_chart(title, y_title, x_title="frequency (Hz)"):
    from openpyxl.chart import ScatterChart

    ch = ScatterChart()
    ch.title, ch.style, ch.scatterStyle = title, 13, "lineMarker"
    ch.x_axis.title, ch.y_axis.title = x_title, y_title
    ch.x_axis.delete = False
    ch.y_axis.delete = False
    ch.x_axis.scaling.logBase = 10
    ch.legend.position = "b"  # below the plot, outside the data
    ch.height, ch.width = 8, 16
    return ch


def _anchor(ws, table: Table, k: int, rows: int = CHART_ROWS) -> str:
    """The cell of the ``k``-th chart beside a table, charts ``rows`` rows apart."""
    from openpyxl.utils import get_column_letter

    return f"{get_column_letter(len(table.columns) + 2)}{HEADER_ROW + k * rows}"


def _runs(values, rows):
    """``{value: (first, last)}`` sheet rows of each contiguous run of ``values``."""
    out = {}
    for v, r in zip(values, rows, strict=True):
        lo, _ = out.get(v, (r, r))
        if v in out and out[v][1] != r - 1:
            raise AssertionError("chart series rows must be contiguous")
        out[v] = (lo, r)
    return out


def _colour(series, hex_colour: str, line: bool = True):
    """One colour for a series' line and markers (the PDF's colour of the same name)."""
    series.marker.graphicalProperties.solidFill = hex_colour
    series.marker.graphicalProperties.line.solidFill = hex_colour
    if line:
        series.graphicalProperties.line.solidFill = hex_colour
        series.graphicalProperties.line.width = 15000  # EMU, about 1.2 pt
    else:
        series.graphicalProperties.line.noFill = True


def _y_range(chart, values, step: float = 10.0):
    """The y axis from the data rounded out to ``step`` with a little room above and
    below (dB axes need not start at 0)."""
    v = [x for x in values if isinstance(x, float)]
    if v:
        chart.y_axis.scaling.min = step * np.floor((min(v) - 0.2 * step) / step)
        chart.y_axis.scaling.max = step * np.ceil((max(v) + 0.2 * step) / step)
        chart.y_axis.majorUnit = step
        chart.y_axis.number_format = "0"


def _line_charts(ws, table: Table, panel_key, series_key, y_key, panels, title, y_title,
                 first: int = 0):
    """One chart per panel value (condition or zone), one series per ``series_key``;
    ``first`` charts already stand beside the table."""
    from openpyxl.chart import Reference, Series

    keys = [c.key for c in table.columns]
    xc, yc = keys.index("band_hz") + 1, keys.index(y_key) + 1
    panel_vals, series_vals = table.values(panel_key), table.values(series_key)
    col = colours(series_vals)
    rows = range(HEADER_ROW + 1, HEADER_ROW + 1 + len(table.rows))
    for k, panel in enumerate(panels):
        sel = [(s, r) for p, s, r in zip(panel_vals, series_vals, rows, strict=True)
               if p == panel]
        ch = _frequency_chart(f"{title}, {panel}", y_title)
        for name, (lo, hi) in _runs([s for s, _ in sel], [r for _, r in sel]).items():
            s = Series(Reference(ws, min_col=yc, min_row=lo, max_row=hi),
                       Reference(ws, min_col=xc, min_row=lo, max_row=hi), title=str(name))
            s.marker.symbol = "circle"
            s.marker.size = 4
            _colour(s, col[name])
            ch.series.append(s)
        _y_range(ch, [table.rows[r - HEADER_ROW - 1][yc - 1] for _, r in sel])
        ws.add_chart(ch, _anchor(ws, table, first + k))


def _trade_charts(ws, table: Table, conditions):
    """Added mass against interior dBA per condition; each point is its own series, so
    its label is the package's name."""
    from openpyxl.chart import Reference, ScatterChart, Series
    from openpyxl.chart.label import DataLabelList

    keys = [c.key for c in table.columns]
    xc, yc = keys.index("treatment_mass_kg") + 1, keys.index("interior_dba") + 1
    col = colours(table.values("package"))
    for k, cond in enumerate(conditions):
        ch = ScatterChart()
        ch.title, ch.style, ch.scatterStyle = f"Treatment mass against interior dBA, {cond}", \
            13, "lineMarker"
        ch.x_axis.title = "treatment mass per aircraft (kg)"
        ch.y_axis.title = "interior level (dBA)"
        ch.x_axis.delete = False
        ch.y_axis.delete = False
        ch.legend = None  # the points carry their names
        ch.height, ch.width = 8, 16
        for i, row in enumerate(table.rows):
            if row[keys.index("condition")] != cond:
                continue
            r = HEADER_ROW + 1 + i
            s = Series(Reference(ws, min_col=yc, min_row=r), Reference(ws, min_col=xc, min_row=r),
                       title=str(row[keys.index("package")]))
            s.marker.symbol = "circle"
            s.marker.size = 7
            _colour(s, col[row[keys.index("package")]], line=False)
            s.dLbls = DataLabelList()
            s.dLbls.showSerName = True
            for flag in ("showVal", "showCatName", "showLegendKey", "showPercent"):
                setattr(s.dLbls, flag, False)
            s.dLbls.position = "r"
            ch.series.append(s)
        ws.add_chart(ch, _anchor(ws, table, k))


def _share_table(shares: pd.DataFrame) -> Table:
    wide = shares.pivot_table(index=["condition", "package"], columns="contributor",
                              values="share_pct", sort=False).reset_index()
    who = [c for c in dict.fromkeys(shares["contributor"])]
    cols = [Column("condition", "condition"), Column("package", "package")] + \
        [Column(f"share:{w}", f"{w} (%)", "0.0", "%") for w in who]
    rows = [[r["condition"], r["package"], *[_num(r.get(w)) for w in who]]
            for _, r in wide.iterrows()]
    order = {c: i for i, c in enumerate(dict.fromkeys(shares["condition"]))}
    porder = {p: i for i, p in enumerate(dict.fromkeys(shares["package"]))}
    rows.sort(key=lambda r: (order[r[0]], porder[r[1]]))
    return Table(cols, rows)


def _num(v):
    return None if v is None or (isinstance(v, float) and v != v) else float(v)


def _share_charts(ws, table: Table, conditions, palette: dict):
    """Stacked bars of each contributor's share, one chart per condition; ``palette``
    maps contributor labels to colours (the PDF's)."""
    from openpyxl.chart import BarChart, Reference, Series

    conds = table.values("condition")
    for k, cond in enumerate(conditions):
        idx = [i for i, c in enumerate(conds) if c == cond]
        lo, hi = HEADER_ROW + 1 + idx[0], HEADER_ROW + 1 + idx[-1]
        ch = BarChart()
        ch.type, ch.grouping, ch.overlap = "bar", "percentStacked", 100
        ch.title = f"Share of interior A-weighted energy, {cond}"
        ch.y_axis.title, ch.x_axis.title = "share (%)", "package"
        ch.x_axis.delete = False
        ch.y_axis.delete = False
        ch.legend.position = "b"
        ch.height, ch.width = 12.5, 18
        cats = Reference(ws, min_col=2, min_row=lo, max_row=hi)
        for j, col in enumerate(table.columns[2:], start=3):
            who = col.key.split(":", 1)[1]
            s = Series(Reference(ws, min_col=j, min_row=lo, max_row=hi), title=who)
            s.graphicalProperties.solidFill = palette.get(who, "BBBBBB")
            s.graphicalProperties.line.solidFill = palette.get(who, "BBBBBB")
            ch.series.append(s)
        ch.set_categories(cats)
        ws.add_chart(ch, _anchor(ws, table, k, rows=26))


def _layers_table(result) -> tuple:
    from .model import layer_family, parameter_rows

    rows, styles = [], []
    for p in result.inputs.packages:
        for z in result.inputs.zones:
            st = p.stacks[z.name]
            for k, (layer, label) in enumerate(zip(st.layers, st.labels, strict=True), 1):
                fam = layer_family(layer, label)
                for name, value, unit, style in parameter_rows(layer):
                    rows.append([p.name, z.name, k, label, fam, name, value, unit])
                    styles.append(style)
    cols = [Column("package", "package"), Column("zone", "zone"),
            Column("layer", "layer", "0"), Column("label", "label"),
            Column("family", "material family"), Column("parameter", "parameter"),
            Column("value", "value", "row"), Column("unit", "unit")]
    return Table(cols, rows), styles


def _properties(wb, tb: dict):
    from datetime import UTC, datetime

    p = wb.properties
    p.title = tb["title"]
    p.subject = tb["programme"]
    p.creator = tb["author"] or "noisebudget"
    p.lastModifiedBy = tb["tool"]
    p.description = " ".join(CAUTIONS)
    p.keywords = f"design review; revision {tb['revision']}; {tb['date']}"
    p.identifier = tb["input_hash"]
    p.category = "engineering estimate"
    p.version = tb["revision"] or None
    p.created = p.modified = datetime.now(UTC).replace(tzinfo=None, microsecond=0)


# sheets whose text columns are long: they wrap
_TEXT_SHEETS = ("Inputs", "Zones", "Packages", "Package zones", "Leaks", "Stacks",
                "Assumptions", "Catalog and files", "Cautions")


def write_workbook(result, path: Path) -> None:
    """Write the workbook atomically."""
    from openpyxl import Workbook

    from .inputs import inputs_long

    m = build(result)
    tb = m["title"]
    inp = result.inputs
    ins = m["inputs"]
    conditions, zones = m["conditions"], m["zone_names"]
    wb = Workbook()
    wb.remove(wb.active)
    _properties(wb, tb)

    ws = _sheet(wb, "Summary", m["summary"], tb)
    _trade_charts(ws, m["summary"], conditions)

    long, styles = inputs_long(result, ins)
    _sheet(wb, "Inputs", long, tb, row_styles=styles, widths={"item": 36, "value": 50})
    _spectra_sheet(wb, ins["bands"], tb)
    _sheet(wb, "Zones", ins["zones"], tb, widths={"exterior_offset": 50, "flanking_tl": 50})
    _sheet(wb, "Zone curves", ins["zone_curves"], tb)
    _sheet(wb, "Packages", ins["packages"], tb, widths={"notes": 50})
    _sheet(wb, "Package zones", ins["package_zones"], tb,
           widths={"structure": 40, "leaks": 40, "flanking": 40})
    _sheet(wb, "Leaks", ins["leaks"], tb, widths={"bypasses": 40})
    if ins["sources"].rows:
        _sheet(wb, "Interior sources", ins["sources"], tb)

    if m["tones"].rows:
        _sheet(wb, "Tones", m["tones"], tb)

    _sheet(wb, "Paths", m["paths_all"], tb)
    shares = _share_table(m["path_levels"])
    ws = _sheet(wb, "Shares", shares, tb)
    _share_charts(ws, shares, conditions, m["contributor_colours"])
    _sheet(wb, "Dominant paths", m["dominant"], tb)

    bands = _table(_with_largest(result.bands, m["dominant_by_band"]), inp,
                   ["condition", "package"], {
                       "dominant_zone": "dominant zone (zones only)",
                       "dominant_path": "dominant kind of path (summed over zones)",
                       "contributor": "largest path",
                       "band_share_pct": "its share of the band (%)"})
    ws = _sheet(wb, "Interior bands", bands, tb)
    _line_charts(ws, bands, "condition", "package", "interior_db", conditions,
                 "Interior spectrum", "interior level (dB re 20 µPa)")

    contrib = _table(m["band_contributions"], inp, ["condition", "package"],
                     {"zone": "zone or interior source", "path": "kind of path",
                      "contributor": "path"})
    _sheet(wb, "Contributions", contrib, tb)

    tl = _table(result.tl, inp, ["zone", "package"])
    ws = _sheet(wb, "TL", tl, tb)
    _line_charts(ws, tl, "zone", "package", "tl_db", zones, "Transmission loss",
                 "transmission loss (dB)")
    if "zone_tl_db" in result.tl:
        _line_charts(ws, tl, "zone", "package", "zone_tl_db", zones,
                     "Zone TL with leaks and flanking", "transmission loss (dB)",
                     first=len(zones))

    _sheet(wb, "Ratings", m["ratings"], tb)
    _sheet(wb, "Mass", m["mass"], tb)
    _sheet(wb, "Stacks", m["stack_layers"], tb, widths={"notes": 50})
    layers, styles = _layers_table(result)
    _sheet(wb, "Layers", layers, tb, row_styles=styles)
    notes = [[topic, text, here] for topic, text, here in m["assumptions"]]
    notes += [[f"reference {k}", ref, None] for k, ref in enumerate(m["references"], 1)]
    _sheet(wb, "Assumptions", Table([Column("topic", "topic"),
                                     Column("statement", "assumption or convention"),
                                     Column("here", "in this study")], notes), tb,
           widths={"topic": 24, "statement": 60, "here": 50})

    from ..catalog import load_catalog

    cat = load_catalog()
    src = [[k, cat.entries[k].get("source", "")] for k in inp.meta.get("catalog_entries", [])]
    src += [[name, f"SHA-256 {digest}"] for name, digest in tb["files"]]
    src.append(["input hash", f"SHA-256 over the lines 'digest  file name' above, sorted: "
                              f"{tb['input_hash']}"])
    _sheet(wb, "Catalog and files", Table([Column("entry", "entry or file"),
                                           Column("source", "source")], src), tb,
           widths={"source": 60})
    _sheet(wb, "Cautions", Table([Column("caution", "caution")], [[c] for c in CAUTIONS]),
           tb, widths={"caution": 60})
    for name in _TEXT_SHEETS:  # long text wraps
        if name in wb.sheetnames:
            _wrap_long(wb[name])
    buf = io.BytesIO()
    wb.save(buf)
    atomic_write_bytes(path, buf.getvalue())


def _spectra_sheet(wb, table: Table, tb: dict):
    """Band inputs with a chart per condition's exterior spectrum and one of the
    interior sources."""
    from openpyxl.chart import Reference, Series

    ws = _sheet(wb, "Input spectra", table, tb)
    n = len(table.rows)

    def series(j, title, hex_colour):
        s = Series(Reference(ws, min_col=j, min_row=HEADER_ROW + 1, max_row=HEADER_ROW + n),
                   Reference(ws, min_col=1, min_row=HEADER_ROW + 1, max_row=HEADER_ROW + n),
                   title=title)
        s.marker.symbol = "circle"
        s.marker.size = 4
        _colour(s, hex_colour)
        return s

    exterior = [c for c in table.columns if c.key.startswith("exterior:")]
    for k, col in enumerate(exterior):
        j = table.columns.index(col) + 1
        ch = _frequency_chart(f"Exterior spectrum, {col.key.split(':', 1)[1]}",
                              "exterior level (dB re 20 µPa)", "one-third-octave band (Hz)")
        ch.series.append(series(j, col.header, "333355"))
        _y_range(ch, [r[j - 1] for r in table.rows])
        ch.legend = None  # one series, named in the title
        ws.add_chart(ch, _anchor(ws, table, k))
    sources = [c for c in table.columns if c.key.startswith("source:")]
    if sources:
        ch = _frequency_chart("Interior sources", "level in the cabin (dB re 20 µPa)",
                              "one-third-octave band (Hz)")
        hues = colours([c.key for c in sources])
        for col in sources:
            j = table.columns.index(col) + 1
            ch.series.append(series(j, col.key.split(":", 1)[1], hues[col.key]))
        _y_range(ch, [r[table.columns.index(c)] for r in table.rows for c in sources])
        ws.add_chart(ch, _anchor(ws, table, len(exterior)))


def _with_largest(bands: pd.DataFrame, largest: pd.DataFrame) -> pd.DataFrame:
    """The bands table with each band's largest path and its share of the band."""
    return bands.merge(largest, on=["condition", "package", "band_hz"], how="left")


def _table(df: pd.DataFrame, inp, keys, headers=None) -> Table:
    """A result table in the study's order, its sort keys as the first columns."""
    df = in_study_order(df, inp, keys)
    return Table.from_frame(df, [*keys, *[c for c in df.columns if c not in keys]], headers)


def _wrap_long(ws):
    """Text longer than its column wraps, and its row grows to show it; every cell of
    such a row aligns to the top, so numbers stay level with the text they belong to."""
    from copy import copy

    for row in ws.iter_rows(min_row=HEADER_ROW + 1):
        lines = 1
        for c in row:
            width = ws.column_dimensions[c.column_letter].width or 10
            if isinstance(c.value, str) and len(c.value) > width:
                lines = max(lines, math.ceil(len(c.value) * 1.1 / width))
        if lines > 1:
            for c in row:
                align = copy(c.alignment)
                align.vertical = "top"
                if isinstance(c.value, str):
                    align.wrap_text = True
                c.alignment = align
            ws.row_dimensions[row[0].row].height = 13 * lines



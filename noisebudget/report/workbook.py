"""Workbook for programme staff (openpyxl): tables as numbers, units in headers, charts.

Text from user files that starts with ``=``, ``+``, ``-`` or ``@`` is stored as text,
never as a formula.
"""

from __future__ import annotations

import io
from pathlib import Path

from ..writing import atomic_write_bytes
from . import CAUTIONS

__all__ = ["HEADERS", "write_workbook"]

HEADERS = {  # column -> header with unit
    "package": "package", "zone": "zone", "condition": "condition", "band_hz": "band (Hz)",
    "tl_db": "TL (dB)", "exterior_db": "exterior (dB)", "composite_tl_db": "composite TL (dB)",
    "interior_db": "interior (dB)", "noise_reduction_db": "noise reduction (dB)",
    "dominant_zone": "dominant zone", "interior_dbz": "interior dB(Z)",
    "interior_dba": "interior dBA", "sil4_db": "SIL4 (dB)", "exterior_dbz": "exterior dB(Z)",
    "exterior_dba": "exterior dBA", "noise_reduction_dba": "noise reduction (dBA)",
    "target_dba": "target dBA", "margin_dba": "margin dBA", "target_sil4_db": "target SIL4 (dB)",
    "margin_sil4_db": "margin SIL4 (dB)", "margin_limit_db": "margin to limit (dB)",
    "mass_kg": "mass (kg)", "added_mass_kg": "added mass (kg)", "dba_gain": "dBA gained",
    "dba_gain_per_kg": "dBA gained per kg", "area_m2": "area (m^2)",
    "stack_kg_m2": "stack (kg/m^2)", "installation_kg_m2": "installation (kg/m^2)",
    "areal_mass_kg_m2": "areal mass (kg/m^2)",
}


def _put(ws, row, col, value):
    cell = ws.cell(row=row, column=col)
    if isinstance(value, str):
        cell.value = value
        cell.data_type = "s"  # never a formula, whatever the text starts with
    elif value is None or (isinstance(value, float) and value != value):
        cell.value = None
    else:
        cell.value = float(value) if hasattr(value, "__float__") and not isinstance(
            value, (int, bool)) else value
        if isinstance(cell.value, float):
            cell.number_format = "0.00"
    return cell


def _sheet(wb, title, df, widths=None):
    from openpyxl.styles import Font, PatternFill

    ws = wb.create_sheet(title)
    for j, col in enumerate(df.columns, start=1):
        c = _put(ws, 1, j, HEADERS.get(col, col))
        c.font = Font(bold=True)
        c.fill = PatternFill("solid", fgColor="E8ECF0")
    for i, row in enumerate(df.itertuples(index=False), start=2):
        for j, v in enumerate(row, start=1):
            _put(ws, i, j, v)
    ws.freeze_panes = "A2"
    for j, col in enumerate(df.columns, start=1):
        letter = ws.cell(row=1, column=j).column_letter
        ws.column_dimensions[letter].width = (widths or {}).get(col, max(
            12, len(HEADERS.get(col, col)) + 2))
    return ws


def _scatter(title, x_title, y_title, log_x):
    from openpyxl.chart import ScatterChart

    ch = ScatterChart()
    ch.title, ch.style = title, 13
    ch.x_axis.title, ch.y_axis.title = x_title, y_title
    ch.x_axis.delete = False
    ch.y_axis.delete = False
    if log_x:
        ch.x_axis.scaling.logBase = 10
    ch.height, ch.width = 8, 16
    return ch


def _series_chart(ws, df, key, x_col, y_col, title, y_title, anchor):
    """One chart with a series per value of ``key``; rows of df are in sheet order."""
    from openpyxl.chart import Reference, Series

    ch = _scatter(title, HEADERS[x_col], y_title, True)
    xc = list(df.columns).index(x_col) + 1
    yc = list(df.columns).index(y_col) + 1
    rows = df.reset_index(drop=True)
    for name, group in rows.groupby(key, sort=False):
        lo, hi = group.index.min() + 2, group.index.max() + 2
        s = Series(Reference(ws, min_col=yc, min_row=lo, max_row=hi),
                   Reference(ws, min_col=xc, min_row=lo, max_row=hi), title=str(name))
        s.marker.symbol = "circle"
        ch.series.append(s)
    ws.add_chart(ch, anchor)


def write_workbook(result, path: Path) -> None:
    """Write the workbook atomically."""
    from openpyxl import Workbook
    from openpyxl.chart import Reference, Series

    inp = result.inputs
    wb = Workbook()
    wb.remove(wb.active)
    ws = _sheet(wb, "Summary", result.summary)
    ch = _scatter("Added mass against interior dBA", "added mass (kg)", "interior dBA", False)
    cols = list(result.summary.columns)
    for cond, group in result.summary.reset_index(drop=True).groupby("condition", sort=False):
        s = Series(Reference(ws, min_col=cols.index("interior_dba") + 1,
                             min_row=group.index.min() + 2, max_row=group.index.max() + 2),
                   Reference(ws, min_col=cols.index("added_mass_kg") + 1,
                             min_row=group.index.min() + 2, max_row=group.index.max() + 2),
                   title=str(cond))
        s.marker.symbol = "diamond"
        s.graphicalProperties.line.noFill = True
        ch.series.append(s)
    ws.add_chart(ch, f"A{len(result.summary) + 4}")
    bands = result.bands.sort_values(["condition", "package", "band_hz"], kind="stable")
    ws = _sheet(wb, "Bands", bands)
    first = bands[bands["condition"] == inp.conditions[0].name]
    _series_chart(ws, first, "package", "band_hz", "interior_db",
                  f"Interior spectrum, {inp.conditions[0].name}", "interior (dB)", "K2")
    tl = result.tl.sort_values(["zone", "package", "band_hz"], kind="stable")
    ws = _sheet(wb, "TL", tl)
    zone0 = tl[tl["zone"] == inp.zones[0].name]
    _series_chart(ws, zone0, "package", "band_hz", "tl_db",
                  f"Transmission loss, {inp.zones[0].name}", "TL (dB)", "F2")
    _sheet(wb, "Mass", result.mass)
    rows = []
    for p in inp.packages:
        for z in inp.zones:
            st = p.stacks[z.name]
            for k, (layer, label) in enumerate(zip(st.layers, st.labels, strict=True), 1):
                for name, value in layer.parameters().items():
                    if name == "cells":
                        for ci, cell in enumerate(value, 1):
                            for cn, cv in vars(cell).items():
                                rows.append((p.name, z.name, k, label, f"cell[{ci}].{cn}",
                                             cv, _unit(cn)))
                        continue
                    rows.append((p.name, z.name, k, label, name, value, _unit(name)))
    import pandas as pd

    inputs = pd.DataFrame(rows, columns=["package", "zone", "layer", "label", "parameter",
                                         "value (SI)", "unit"])
    _sheet(wb, "Inputs", inputs, {"label": 28, "parameter": 24})
    from ..catalog import load_catalog

    cat = load_catalog()
    src = pd.DataFrame([(k, cat.entries[k].get("source", "")) for k in
                        inp.meta.get("catalog_entries", [])] +
                       [(Path(f).name, f"SHA-256 {h}") for f, h in
                        sorted(getattr(result, "files", {}).items())],
                       columns=["entry or file", "source"])
    _sheet(wb, "Sources", src, {"entry or file": 30, "source": 110})
    _sheet(wb, "Cautions", pd.DataFrame({"caution": list(CAUTIONS)}), {"caution": 140})
    buf = io.BytesIO()
    wb.save(buf)
    atomic_write_bytes(path, buf.getvalue())


def _unit(name: str) -> str:
    units = {"thickness": "m", "gap": "m", "layer_thickness": "m", "plate_thickness": "m",
             "sheet_thickness": "m", "screen_thickness": "m", "tile_thickness": "m",
             "surface_density": "kg/m^2", "bending_stiffness": "N m",
             "flow_resistivity": "Pa s/m^2", "flow_resistance": "Pa s/m",
             "viscous_length": "m", "thermal_length": "m", "bulk_density": "kg/m^3",
             "pitch": "m", "frame_areal_mass": "kg/m^2", "radius": "m",
             "membrane_thickness": "m", "membrane_density": "kg/m^3", "tension": "N/m",
             "mass": "kg", "mass_radius": "m"}
    return units.get(name, "-")

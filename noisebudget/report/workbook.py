"""Workbook for programme staff (openpyxl): tables as numbers, units in headers, charts.

Text from user files that starts with ``=``, ``+``, ``-`` or ``@`` is stored as text,
never as a formula.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pandas as pd

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


def _ordered(df, inp, keys):
    """Rows sorted in the study's own order of conditions, packages and zones."""
    order = {"condition": [c.name for c in inp.conditions],
             "package": [p.name for p in inp.packages], "zone": [z.name for z in inp.zones]}
    tmp = df.copy()
    for k in keys:
        if k in order:
            tmp[k] = pd.Categorical(tmp[k], categories=order[k], ordered=True)
    tmp = tmp.sort_values(keys, kind="stable")
    for k in keys:
        if k in order:
            tmp[k] = tmp[k].astype(str)
    return tmp.reset_index(drop=True)


def _series_chart(ws, df, mask, key, x_col, y_col, title, x_title, y_title, anchor, log_x):
    """A scatter chart with one series per value of ``key`` among the rows in ``mask``.

    ``df`` is the sheet's table in sheet order; each series must be a contiguous run of
    rows, which :func:`_ordered` guarantees.
    """
    from openpyxl.chart import Reference, Series

    ch = _scatter(title, x_title, y_title, log_x)
    xc = list(df.columns).index(x_col) + 1
    yc = list(df.columns).index(y_col) + 1
    sub = df[mask]
    for name, group in sub.groupby(key, sort=False):
        pos = group.index.to_numpy()
        if not np.all(np.diff(pos) == 1):
            raise AssertionError("chart series rows must be contiguous")
        lo, hi = int(pos[0]) + 2, int(pos[-1]) + 2
        s = Series(Reference(ws, min_col=yc, min_row=lo, max_row=hi),
                   Reference(ws, min_col=xc, min_row=lo, max_row=hi), title=str(name))
        s.marker.symbol = "circle"
        if not log_x:
            s.graphicalProperties.line.noFill = True
        ch.series.append(s)
    ws.add_chart(ch, anchor)


def write_workbook(result, path: Path) -> None:
    """Write the workbook atomically."""
    from openpyxl import Workbook

    inp = result.inputs
    wb = Workbook()
    wb.remove(wb.active)
    summary = _ordered(result.summary, inp, ["condition", "package"])
    ws = _sheet(wb, "Summary", summary)
    _series_chart(ws, summary, np.ones(len(summary), bool), "condition", "added_mass_kg",
                  "interior_dba", "Added mass against interior dBA", "added mass (kg)",
                  "interior dBA", f"A{len(summary) + 4}", False)
    bands = _ordered(result.bands, inp, ["condition", "package", "band_hz"])
    ws = _sheet(wb, "Bands", bands)
    first = inp.conditions[0].name
    _series_chart(ws, bands, (bands["condition"] == first).to_numpy(), "package", "band_hz",
                  "interior_db", f"Interior spectrum, {first}", HEADERS["band_hz"],
                  "interior (dB)", "K2", True)
    tl = _ordered(result.tl, inp, ["zone", "package", "band_hz"])
    ws = _sheet(wb, "TL", tl)
    zone0 = inp.zones[0].name
    _series_chart(ws, tl, (tl["zone"] == zone0).to_numpy(), "package", "band_hz", "tl_db",
                  f"Transmission loss, {zone0}", HEADERS["band_hz"], "TL (dB)", "F2", True)
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
             "mass": "kg", "mass_radius": "m",
             "bending_stiffness_axial": "N m", "bending_stiffness_hoop": "N m",
             "in_plane_tension": "N/m", "in_plane_tension_axial": "N/m",
             "in_plane_tension_hoop": "N/m", "curvature_radius": "m", "youngs_modulus": "Pa",
             "face_thickness": "m", "face_density": "kg/m^3", "face_youngs_modulus": "Pa",
             "core_thickness": "m", "core_density": "kg/m^3", "core_shear_modulus": "Pa",
             "added_surface_density": "kg/m^2"}
    return units.get(name, "-")

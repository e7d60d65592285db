"""The workbook, opened with openpyxl: sheets, title blocks, document properties, number
formats per unit, charts for every condition and zone, filters, frozen headers and
values equal to the result tables."""

import hashlib
from pathlib import Path

import openpyxl
import pytest

HEADER = 5  # header row of every table sheet
SHEETS = ["Summary", "Inputs", "Exterior", "Tones", "Interior bands", "Contributions",
          "Shares", "TL", "Ratings and mass", "Layers", "Sources", "Cautions"]


@pytest.fixture(scope="module")
def wb(demo_out):
    return openpyxl.load_workbook(demo_out / "demo-study.xlsx")


def header(ws):
    return [c.value for c in ws[HEADER]]


def records(ws):
    """Rows below the header as dicts by header text, with their cells."""
    head = header(ws)
    for row in ws.iter_rows(min_row=HEADER + 1):
        yield {h: c for h, c in zip(head, row, strict=True)}


def independent_hash(files):
    """SHA-256 of the sorted lines 'sha256(file)  name', hashed here with hashlib from
    the files themselves."""
    lines = sorted(f"{hashlib.sha256(Path(p).read_bytes()).hexdigest()}  {Path(p).name}"
                   for p in files)
    return hashlib.sha256("\n".join(lines).encode()).hexdigest()


def test_sheets_title_blocks_and_properties(wb, demo_result):
    assert wb.sheetnames == SHEETS
    digest = independent_hash(demo_result.files)
    for ws in wb.worksheets:
        assert ws["A1"].value == "NB-70 forward cabin sidewall treatment trade", ws.title
        for words in ("NB-70 regional turboprop (demo programme)", "revision: B",
                      "date: 2026-12-02"):
            assert words in ws["A2"].value, (ws.title, words)
        assert digest in ws["A3"].value, ws.title
        assert ws.freeze_panes == f"A{HEADER + 1}", ws.title
        assert ws.auto_filter.ref == f"A{HEADER}:{ws.cell(HEADER, ws.max_column).column_letter}" \
                                     f"{ws.max_row}", ws.title
        for j, head in enumerate(header(ws), start=1):  # every header word fits
            width = ws.column_dimensions[ws.cell(HEADER, j).column_letter].width
            assert width >= max(len(w) for w in head.split()), (ws.title, head)
    p = wb.properties
    assert p.title == "NB-70 forward cabin sidewall treatment trade"
    assert p.subject == "NB-70 regional turboprop (demo programme)"
    assert p.creator == "Cabin acoustics, demo" and p.identifier == digest
    assert "revision B" in p.keywords and "airworthiness" in p.description


def test_number_formats_follow_units(wb):
    def formats(sheet, head):
        return {c[head].number_format for c in records(wb[sheet]) if c[head].value is not None}

    assert formats("TL", "TL (dB)") == {"0.0"}
    assert formats("Interior bands", "interior level (dB)") == {"0.0"}
    assert formats("Summary", "mass per aircraft (kg)") == {"0.0"}
    assert formats("Summary", "interior level (dBA)") == {"0.0"}
    assert formats("Ratings and mass", "areal mass (kg/m²)") == {"0.00"}
    assert formats("Ratings and mass", "STC") == {"0"}
    assert formats("Tones", "tone frequency (Hz)") == {"0.0"}
    layers = list(records(wb["Layers"]))
    thick = [r for r in layers if r["parameter"].value == "layer_thickness"
             and r["label"].value == "blanket.glass-0.6pcf-limp"]
    assert thick and all(r["unit"].value == "mm" and r["value"].number_format == "0.0#"
                         for r in thick)
    assert 75.0 in [r["value"].value for r in thick]  # 75 mm, not 0.075 m shown as 0.08
    film = [r for r in layers if r["parameter"].value == "sheet_thickness"]
    assert film[0]["value"].value == pytest.approx(0.03)  # 0.03 mm cover film
    # material properties to three significant figures
    expect = {"flow_resistivity": (40000.0, "0"), "bulk_density": (9.6, "0.00"),
              "porosity": (0.996, "0.000")}
    for r in layers:
        name = r["parameter"].value
        if name in expect and r["label"].value == "blanket.glass-0.6pcf-limp":
            value, fmt = expect[name]
            assert r["value"].value == pytest.approx(value) and r["value"].number_format == fmt
    # no number shows as -0.0: a value that rounds to zero at its format is stored as 0
    for ws in wb.worksheets:
        for row in ws.iter_rows(min_row=HEADER + 1):
            for c in row:
                if isinstance(c.value, float) and c.number_format.startswith("0."):
                    d = len(c.number_format.split(".")[1].rstrip("#"))
                    assert not (c.value < 0 and round(c.value, d) == 0), (ws.title, c)


def test_values_equal_the_result(wb, demo_result):
    from noisebudget.report.model import column

    ws = wb["Summary"]
    table = demo_result.summary.set_index(["package", "condition"])
    by_header = {column(k).header: k for k in demo_result.summary.columns}
    by_header["mass per aircraft (kg)"] = "mass_kg"
    n = 0
    for rec in records(ws):
        n += 1
        want = table.loc[(rec["package"].value, rec["condition"].value)]
        for head, cell in rec.items():
            key = by_header[head]
            if key in ("package", "condition"):
                continue
            if want[key] != want[key]:
                assert cell.value is None
            elif cell.value == 0 and "." in cell.number_format:  # shows as zero: stored as 0
                d = len(cell.number_format.split(".")[1])
                assert abs(want[key]) < 0.5 * 10.0**-d, head
            else:  # full precision
                assert cell.value == pytest.approx(want[key], abs=1e-9), head
    assert n == len(demo_result.summary)
    tl = demo_result.tl.set_index(["package", "zone", "band_hz"])["tl_db"]
    for rec in records(wb["TL"]):
        key = (rec["package"].value, rec["zone"].value, rec["band (Hz)"].value)
        assert rec["TL (dB)"].value == pytest.approx(tl.loc[key], abs=1e-9)
    tones = list(records(wb["Tones"]))
    assert len(tones) == len(demo_result.tones)
    assert {r["dominant zone"].value for r in tones} <= {"sidewall", "windows", "crown"}


def test_inputs_sheet_has_the_study_inputs(wb, demo_study):
    import tomllib

    toml = tomllib.loads(demo_study.read_text())
    rows = {(r["section"].value, r["item"].value): (r["value"], r["unit"].value)
            for r in records(wb["Inputs"])}
    for z in toml["zone"]:
        cell, unit = rows[("zone", f"{z['name']}: area")]
        assert cell.value == float(z["area"].split()[0]) and unit == "m²"
    assert rows[("cabin", "volume")][0].value == 95.0
    assert rows[("target", "interior level")][0].value == toml["targets"]["dba"]
    assert rows[("air", "cabin: temperature")][0].value == pytest.approx(22.0)
    assert rows[("air", "cabin: temperature")][1] == "°C"
    ext = wb["Exterior"]
    head = header(ext)
    for c in toml["condition"]:
        j = head.index(f"{c['name']} exterior (dB)")
        got = [row[j].value for row in ext.iter_rows(min_row=HEADER + 1)]
        assert got == [float(v) for v in c["levels_db"]]


def _chart_titles(ws):
    return [" ".join(r.t for p in ch.title.tx.rich.p for r in (p.r or [])) for ch in ws._charts]


def _series_rows(ws, series):
    ref = series.yVal.numRef.f  # e.g. 'TL'!$D$6:$D$26
    parts = [int(part.split("$")[-1]) for part in ref.split("!")[1].split(":")]
    return parts[0], parts[-1]


def test_charts_for_every_condition_and_zone(wb, demo_result):
    conditions = list(dict.fromkeys(demo_result.summary["condition"]))
    packages = list(dict.fromkeys(demo_result.summary["package"]))
    zones = ["sidewall", "windows", "crown"]
    assert _chart_titles(wb["Interior bands"]) == [f"Interior spectrum, {c}" for c in conditions]
    assert _chart_titles(wb["TL"]) == [f"Transmission loss, {z}" for z in zones]
    assert _chart_titles(wb["Exterior"]) == [f"Exterior spectrum, {c}" for c in conditions]
    assert len(wb["Shares"]._charts) == len(conditions)
    # each TL series points at the rows of its own package and zone
    tl = wb["TL"]
    head = header(tl)
    for chart, zone in zip(tl._charts, zones, strict=True):
        assert len(chart.series) == len(packages)
        for s, package in zip(chart.series, packages, strict=True):
            lo, hi = _series_rows(tl, s)
            assert hi - lo + 1 == 21
            for r in range(lo, hi + 1):
                assert tl.cell(r, head.index("zone") + 1).value == zone
                assert tl.cell(r, head.index("package") + 1).value == package
            assert chart.x_axis.scaling.logBase == 10
    # mass against dBA: one chart per condition, every point labelled with its package
    summary = wb["Summary"]
    assert len(summary._charts) == len(conditions)
    for chart, cond in zip(summary._charts, conditions, strict=True):
        names = [s.tx.strRef.f if s.tx.strRef else s.tx.v for s in chart.series]
        assert names == packages
        for s in chart.series:
            assert s.dLbls.showSerName and not s.dLbls.showVal
            lo, hi = _series_rows(summary, s)
            assert lo == hi
            assert summary.cell(lo, 1).value == cond

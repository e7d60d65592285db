"""The workbook, opened with openpyxl: sheets, title blocks, document properties, number
formats per unit, charts for every condition and zone, filters, frozen headers, values
equal to the result tables, inputs equal to the study file (read with tomllib), and the
paths' energies adding up to each band's interior level."""

import hashlib
import math
import tomllib
from pathlib import Path

import openpyxl
import pytest

HEADER = 5  # header row of every table sheet
SHEETS = ["Summary", "Inputs", "Input spectra", "Zones", "Zone curves", "Packages",
          "Package zones", "Leaks", "Interior sources", "Tones", "Paths", "Shares",
          "Dominant paths", "Interior bands", "Contributions", "TL", "Ratings", "Mass",
          "Stacks", "Layers", "Assumptions", "Catalog and files", "Cautions"]


@pytest.fixture(scope="module")
def wb(demo_out):
    return openpyxl.load_workbook(demo_out / "demo-study.xlsx")


@pytest.fixture(scope="module")
def toml(demo_study):
    return tomllib.loads(demo_study.read_text())


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


def test_sheets_title_blocks_and_properties(wb, demo_result, toml):
    expected = [s for s in SHEETS if s != "Interior sources" or toml.get("interior_source")]
    assert wb.sheetnames == expected
    digest = independent_hash(demo_result.files)
    study = toml["study"]
    for ws in wb.worksheets:
        assert ws["A1"].value == study["title"], ws.title
        for words in (study["programme"], f"revision: {study['revision']}",
                      f"date: {study['date']}"):
            assert words in ws["A2"].value, (ws.title, words)
        assert digest in ws["A3"].value, ws.title
        assert ws.freeze_panes == f"A{HEADER + 1}", ws.title
        assert ws.auto_filter.ref == f"A{HEADER}:{ws.cell(HEADER, ws.max_column).column_letter}" \
                                     f"{ws.max_row}", ws.title
        for j, head in enumerate(header(ws), start=1):  # every header word fits
            width = ws.column_dimensions[ws.cell(HEADER, j).column_letter].width
            assert width >= max(len(w) for w in head.split()), (ws.title, head)
    p = wb.properties
    assert p.title == study["title"] and p.subject == study["programme"]
    assert p.creator == study["author"] and p.identifier == digest
    assert f"revision {study['revision']}" in p.keywords and "airworthiness" in p.description


def test_number_formats_follow_units(wb):
    def formats(sheet, head):
        return {c[head].number_format for c in records(wb[sheet]) if c[head].value is not None}

    assert formats("TL", "TL (dB)") == {"0.0"}
    assert formats("Interior bands", "interior level (dB)") == {"0.0"}
    assert formats("Summary", "mass per aircraft (kg)") == {"0.0"}
    assert formats("Summary", "interior level (dBA)") == {"0.0"}
    assert formats("Mass", "total areal mass (kg/m²)") == {"0.00"}
    assert formats("Mass", "structure (kg/m²)") == {"0.00"}
    assert formats("Mass", "treatment mass per aircraft (kg)") == {"0.0"}
    assert formats("Ratings", "STC") == {"0"}
    assert formats("Tones", "tone frequency (Hz)") == {"0.0"}
    assert formats("Leaks", "open area (mm²)") == {"0.0"}
    assert formats("Leaks", "depth (mm)") == {"0.0#"}
    assert formats("Paths", "path") == {"General"}  # text
    assert formats("Contributions", "share of the band's energy (%)") == {"0.0"}
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
    by_header["added mass (kg)"] = "added_mass_kg"
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
    assert {r["dominant zone"].value for r in tones} <= {z.name for z in
                                                         demo_result.inputs.zones}


def _mm(text):
    value, unit = text.split()
    return float(value) * {"mm": 1.0, "cm": 10.0, "m": 1000.0}[unit]


def test_inputs_sheets_have_the_study_inputs(wb, toml):
    """Zones with their offset and flanking points, leaks with dimensions and open areas
    computed here from them, interior sources, conversions, cabin and targets: the
    workbook's numbers against the study file read with tomllib."""
    rows = {(r["section"].value, r["item"].value): (r["value"], r["unit"].value)
            for r in records(wb["Inputs"])}
    assert rows[("cabin", "volume")][0].value == float(toml["cabin"]["volume"].split()[0])
    for key, item in (("dba", "interior level"), ("sil4", "speech interference level SIL4")):
        if key in toml.get("targets", {}):
            assert rows[("target", item)][0].value == toml["targets"][key]
    if toml["air"]["cabin"].get("temperature") == "22 degC":
        assert rows[("air", "cabin: temperature")][0].value == pytest.approx(22.0)
    assert rows[("air", "cabin: temperature")][1] == "°C"
    conversions = [v.value for (section, _), (v, _) in rows.items() if section == "conversion"]
    for c in toml["condition"]:
        if c.get("bandwidth") == "octave":
            assert any(f"condition {c['name']!r}" in t for t in conversions)
    for src in toml.get("interior_source", []):
        if src.get("bandwidth") == "octave":
            assert any(f"interior source {src['name']!r}" in t for t in conversions)
    # zones and the points of their curves (no frequency: one value everywhere)
    zones = {r["zone"].value: r for r in records(wb["Zones"])}
    assert list(zones) == [z["name"] for z in toml["zone"]]
    curves = {}
    for r in records(wb["Zone curves"]):
        if r["given by"].value == "zone":
            curves.setdefault((r["zone"].value, r["quantity"].value), []).append(
                (r["frequency (Hz)"].value, r["value (dB)"].value))
    for z in toml["zone"]:
        assert zones[z["name"]]["area (m²)"].value == float(z["area"].split()[0])
        for key, points, quantity in (("exterior_offset_db", "offset_bands_hz",
                                       "exterior offset"),
                                      ("flanking_tl_db", "flanking_bands_hz", "flanking TL")):
            v = z.get(key, 0 if quantity == "exterior offset" else None)
            if v is None:
                assert (z["name"], quantity) not in curves
            elif isinstance(v, list):
                assert curves[(z["name"], quantity)] == [
                    (float(f), float(x)) for f, x in zip(z[points], v, strict=True)]
            else:
                assert curves[(z["name"], quantity)] == [(None, float(v))]
    # leaks: dimensions in mm, open area in mm^2 from the dimensions
    leaks = {(r["package"].value, r["zone"].value, r["leak"].value): r
             for r in records(wb["Leaks"])}
    given = [(p["name"], zn, leak, zt) for p in toml["package"]
             for zn, zt in p.get("zone", {}).items() for leak in zt.get("leak", [])]
    assert len(leaks) == len(given)
    for pkg, zone, leak, zt in given:
        r = leaks[(pkg, zone, leak.get("name", "unnamed"))]
        layers = zt.get("layer", [])
        if isinstance(layers, list) and layers and not any("stack" in e for e in layers):
            # the layers after behind_layer
            bypassed = r["bypasses layers"].value.split("; ")
            assert len(bypassed) == len(layers) - leak.get("behind_layer", 0)
        assert r["depth (mm)"].value == pytest.approx(_mm(leak["depth"]), rel=1e-12)
        if leak["shape"] == "slit":
            area = _mm(leak["width"]) * _mm(leak["length"])
            assert r["width (mm)"].value == pytest.approx(_mm(leak["width"]), rel=1e-12)
        else:
            area = leak.get("count", 1) * math.pi * _mm(leak["diameter"]) ** 2 / 4
            assert r["count"].value == leak.get("count", 1)
        assert r["open area (mm²)"].value == pytest.approx(area, rel=1e-9)
    # interior sources
    if toml.get("interior_source"):
        sources = [r["interior source"].value for r in records(wb["Interior sources"])]
        assert sources == [s["name"] for s in toml["interior_source"]]
    spectra = wb["Input spectra"]
    head = header(spectra)
    for c in toml["condition"]:
        if c.get("bandwidth", "third") != "third":
            continue
        j = head.index(f"{c['name']} exterior (dB)")
        got = {row[0].value: row[j].value for row in spectra.iter_rows(min_row=HEADER + 1)}
        assert [got[float(b)] for b in c["bands_hz"]] == [float(v) for v in c["levels_db"]]


def test_paths_add_up_to_each_band(wb, demo_result):
    """The energy sum of a band's path levels (sheet Contributions) equals the band's
    interior level (sheet Interior bands), whose largest path is the one with the most
    energy; the paths' A-weighted levels add up to the summary's dBA (sheet Paths)."""
    energy, top = {}, {}
    for r in records(wb["Contributions"]):
        key = (r["condition"].value, r["package"].value, r["band (Hz)"].value)
        level = r["interior level (dB)"].value
        energy[key] = energy.get(key, 0.0) + 10 ** (level / 10)
        if level > top.get(key, (-math.inf, ""))[0]:
            top[key] = (level, r["path"].value)
    bands = list(records(wb["Interior bands"]))
    assert len(bands) == len(energy) == len(demo_result.bands)
    for r in bands:
        key = (r["condition"].value, r["package"].value, r["band (Hz)"].value)
        assert 10 * math.log10(energy[key]) == pytest.approx(r["interior level (dB)"].value,
                                                             abs=1e-9)
        assert r["largest path"].value == top[key][1]
        share = 100 * 10 ** (top[key][0] / 10) / energy[key]
        assert r["its share of the band (%)"].value == pytest.approx(share, rel=1e-9)
    packages = list(dict.fromkeys(demo_result.summary["package"]))
    dba = demo_result.summary.set_index(["condition", "package"])["interior_dba"]
    sums: dict = {}
    for r in records(wb["Paths"]):
        for p in packages:
            v = r[f"{p} (dBA)"].value
            if r["path"].value == "all paths":
                assert v == pytest.approx(dba[(r["condition"].value, p)], abs=1e-9)
                assert 10 * math.log10(sums[(r["condition"].value, p)]) == pytest.approx(
                    v, abs=1e-9)
            elif v is not None:
                key = (r["condition"].value, p)
                sums[key] = sums.get(key, 0.0) + 10 ** (v / 10)


def test_ratings_composite_and_mass(wb, demo_result):
    rows = [(r["package"].value, r["zone"].value, r["STC"].value) for r in records(wb["Ratings"])]
    rat = demo_result.ratings.set_index(["package", "zone"])["stc"]
    for pkg, zone, stc in rows:
        assert stc == rat[(pkg, "composite" if zone == "composite, area-weighted" else zone)]
    assert sum(z == "composite, area-weighted" for _, z, _ in rows) == len(
        demo_result.summary["package"].unique())
    mass = demo_result.mass.set_index(["package", "zone"])
    for r in records(wb["Mass"]):
        if r["zone"].value == "all zones":
            continue
        want = mass.loc[(r["package"].value, r["zone"].value)]
        parts = sum(r[k].value for k in ("structure (kg/m²)", "treatment layers (kg/m²)",
                                         "installation (kg/m²)"))
        assert parts == pytest.approx(want["areal_mass_kg_m2"], rel=1e-12)
        assert r["treatment mass per aircraft (kg)"].value == pytest.approx(
            want["treatment_mass_kg"], rel=1e-12)


def test_assumptions_sheet(wb):
    topics = [r["topic"].value for r in records(wb["Assumptions"])]
    for t in ("Curved, pressurised skins", "Finite bays", "Sandwich panels", "Cavity loss",
              "Porous, elastic and Biot layers", "Leaks", "Octave-band inputs", "Paths"):
        assert t in topics
    refs = [r["assumption or convention"].value for r in records(wb["Assumptions"])
            if r["topic"].value.startswith("reference")]
    assert any("Villot" in r for r in refs) and any("Gomperts" in r for r in refs)


def _chart_titles(ws):
    return [" ".join(r.t for p in ch.title.tx.rich.p for r in (p.r or [])) for ch in ws._charts]


def _series_rows(ws, series):
    ref = series.yVal.numRef.f  # e.g. 'TL'!$D$6:$D$26
    parts = [int(part.split("$")[-1]) for part in ref.split("!")[1].split(":")]
    return parts[0], parts[-1]


def test_charts_for_every_condition_and_zone(wb, demo_result):
    conditions = list(dict.fromkeys(demo_result.summary["condition"]))
    packages = list(dict.fromkeys(demo_result.summary["package"]))
    zones = [z.name for z in demo_result.inputs.zones]
    assert _chart_titles(wb["Interior bands"]) == [f"Interior spectrum, {c}" for c in conditions]
    assert _chart_titles(wb["TL"]) == [f"Transmission loss, {z}" for z in zones] + [
        f"Zone TL with leaks and flanking, {z}" for z in zones]
    spectra = [f"Exterior spectrum, {c}" for c in conditions]
    if demo_result.inputs.interior_sources:
        spectra.append("Interior sources")
    assert _chart_titles(wb["Input spectra"]) == spectra
    assert len(wb["Shares"]._charts) == len(conditions)
    # each TL series points at the rows of its own package and zone, in its own column
    tl = wb["TL"]
    head = header(tl)
    n_bands = demo_result.tl["band_hz"].nunique()
    for k, chart in enumerate(tl._charts):
        zone, column = zones[k % len(zones)], "TL (dB)" if k < len(zones) else \
            "zone TL, with leaks and flanking (dB)"
        assert len(chart.series) == len(packages)
        for s, package in zip(chart.series, packages, strict=True):
            lo, hi = _series_rows(tl, s)
            assert hi - lo + 1 == n_bands
            assert s.yVal.numRef.f.split("!$")[1].split("$")[0] == \
                tl.cell(HEADER, head.index(column) + 1).column_letter
            for r in range(lo, hi + 1):
                assert tl.cell(r, head.index("zone") + 1).value == zone
                assert tl.cell(r, head.index("package") + 1).value == package
            assert chart.x_axis.scaling.logBase == 10
    # mass against dBA: one chart per condition, every point labelled with its package,
    # the treatment mass per aircraft on the horizontal axis
    summary = wb["Summary"]
    mass_col = summary.cell(HEADER, header(summary).index(
        "treatment mass per aircraft (kg)") + 1).column_letter
    assert len(summary._charts) == len(conditions)
    for chart, cond in zip(summary._charts, conditions, strict=True):
        names = [s.tx.strRef.f if s.tx.strRef else s.tx.v for s in chart.series]
        assert names == packages
        for s in chart.series:
            assert s.dLbls.showSerName and not s.dLbls.showVal
            assert s.xVal.numRef.f.split("!$")[1].split("$")[0] == mass_col
            lo, hi = _series_rows(summary, s)
            assert lo == hi
            assert summary.cell(lo, 1).value == cond

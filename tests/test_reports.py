"""The design-review PDF: inputs, tones, per-zone ratings and mass, figures for every
condition and zone, one caution; read back from the HTML before rendering and from the
PDF's text. Also inert user text, the restricted fetcher and atomic writes."""

import base64
import re
import shutil
import tomllib
from html.parser import HTMLParser

import openpyxl
import pytest
from pypdf import PdfReader

import noisebudget as nb
from noisebudget.cli import main
from noisebudget.resources import data_path
from noisebudget.writing import atomic_write_bytes


class _Tables(HTMLParser):
    """Every <table> of an HTML text as a list of rows of cell texts."""

    def __init__(self):
        super().__init__()
        self.tables, self._row, self._cell = [], None, None

    def handle_starttag(self, tag, attrs):
        if tag == "table":
            self.tables.append([])
        elif tag == "tr":
            self._row = []
        elif tag in ("td", "th"):
            self._cell = ""

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._row is not None:
            self._row.append(self._cell.strip())
            self._cell = None
        elif tag == "tr" and self._row is not None:
            self.tables[-1].append(self._row)
            self._row = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell += data


def tables_of(html):
    p = _Tables()
    p.feed(html)
    return p.tables


def table_with(tables, first_header, also=None):
    """The table whose header row starts with ``first_header`` (and holds ``also``)."""
    for t in tables:
        if t and t[0] and t[0][0] == first_header and (also is None or also in t[0]):
            return t
    raise AssertionError(f"no table headed {first_header!r} / {also!r}")


def filled(rows, n):
    """Rows with the first ``n`` blank cells filled from the row above (grouped tables)."""
    out, prev = [], None
    for r in rows:
        r = list(r)
        for j in range(n):
            if r[j] == "" and prev is not None:
                r[j] = prev[j]
        out.append(r)
        prev = r
    return out


@pytest.fixture(scope="module")
def html(demo_result, demo_study):
    from noisebudget.report.pdf import render_html

    return render_html(demo_result, demo_study)


@pytest.fixture(scope="module")
def demo_toml(demo_study):
    return tomllib.loads(demo_study.read_text())


@pytest.fixture(scope="module")
def pdf_text(demo_out):
    pages = PdfReader(demo_out / "demo-study.pdf").pages
    return " ".join(" ".join(p.extract_text() for p in pages).split()), len(pages)


def test_pdf_sections_and_one_aviation_caution(pdf_text, demo_result):
    text, pages = pdf_text
    for name in demo_result.summary["package"].unique():
        assert name in text
    for v in demo_result.summary["interior_dba"]:
        assert f"{v:.1f}" in text
    for section in ("Summary", "Inputs", "Exterior spectra and tones", "Zones", "Tones",
                    "Ratings and mass per zone", "Transmission loss", "Interior spectra",
                    "Contributions", "Resonator tiles", "Interior band levels",
                    "Packages and stacks", "Assumptions and conventions", "References",
                    "SHA-256", "input hash", "gain over mass law"):
        assert section.lower() in text.lower(), section
    assert text.count("Caution.") == 1  # one caution block, not repeated
    for words in ("airworthiness", "14 CFR Part 25", "flammability", "noise-exposure",
                  "Licensed engineering practice"):
        assert words in text, words
    assert "local codes" not in text  # building-regulation wording
    assert not re.search(r"(?<![\w.])-0\.0+(?!\d*[1-9])", text)  # no negative zero
    assert 6 <= pages <= 30


def test_inputs_section_shows_the_study_file(html, demo_toml):
    """Inputs as given in the study file (read here with tomllib, not the project)."""
    tables = tables_of(html)
    bands = table_with(tables, "band (Hz)", "cruise exterior (dB)")
    head = bands[0]
    rows = {float(r[0]): r for r in bands[1:]}
    t60 = [float(v.split()[0]) for v in demo_toml["cabin"]["reverberation_time"]]
    for k, b in enumerate(demo_toml["cabin"]["bands_hz"]):
        assert float(rows[b][head.index("reverberation time (s)")]) == pytest.approx(
            t60[k], abs=0.005)
    for c in demo_toml["condition"]:
        col = head.index(f"{c['name']} exterior (dB)")
        for b, lv in zip(c["bands_hz"], c["levels_db"], strict=True):
            assert float(rows[b][col]) == pytest.approx(lv, abs=0.05)
    tones = filled(table_with(tables, "condition", "tone frequency (Hz)")[1:], 1)
    given = [(c["name"], t["name"], float(t["frequency"].split()[0]), float(t["level_db"]))
             for c in demo_toml["condition"] for t in c["tone"]]
    assert [(r[0], r[1], float(r[2]), float(r[3])) for r in tones] == given
    zones = table_with(tables, "name", "area (m²)")
    assert [(r[0], float(r[1])) for r in zones[1:]] == [
        (z["name"], float(z["area"].split()[0])) for z in demo_toml["zone"]]
    assert "95.0 m³" in html and "reverberation time" in html
    air = {r[0]: r for r in table_with(tables, "air", "temperature (°C)")[1:]}
    assert float(air["cabin"][1]) == pytest.approx(22.0, abs=0.05)
    # 25,000 ft in the ISA: T = 288.15 K - 6.5 K/km * 7.62 km, p = 101.325 kPa
    # (T / 288.15 K)^5.25588 (ICAO Doc 7488), computed from those formulas
    t = 288.15 - 0.0065 * 7620.0
    assert float(air["exterior"][1]) == pytest.approx(t - 273.15, abs=0.05)
    assert float(air["exterior"][2]) == pytest.approx(101.325 * (t / 288.15) ** 5.25588,
                                                      abs=0.01)
    targets = {r[0]: r[1] for t in tables for r in t if len(r) == 2}
    assert targets["interior level"] == "84.0 dBA"
    assert targets["speech interference level SIL4"] == "60.0 dB"


def test_tone_table(html, demo_result):
    rows = filled(table_with(tables_of(html), "condition", "TL at the tone (dB)")[1:], 4)
    tones = demo_result.tones
    assert len(rows) == len(tones)
    by_key = {(r["condition"], r["tone"], r["package"]): r for _, r in tones.iterrows()}
    for cond, tone, freq, ext, pkg, tl, interior, zone, path in rows:
        r = by_key[(cond, tone, pkg)]
        assert float(freq) == pytest.approx(r["tone_hz"], abs=0.05)
        assert float(ext) == pytest.approx(r["exterior_db"], abs=0.05)
        assert float(tl) == pytest.approx(r["tl_db"], abs=0.05)
        assert float(interior) == pytest.approx(r["interior_db"], abs=0.05)
        assert (zone, path) == (r["dominant_zone"], r["dominant_path"])


def test_ratings_and_mass_per_zone(html, demo_result):
    zone_t = table_with(tables_of(html), "package", "OITC")
    head = zone_t[0]
    rows = filled(zone_t[1:], 1)
    rat = demo_result.ratings.set_index(["package", "zone"])
    mass = demo_result.mass
    seen = set()
    for r in rows:
        pkg, zone = r[0], r[1]
        seen.add((pkg, zone))
        if zone == "all zones":
            m = mass[mass["package"] == pkg]
            assert float(r[head.index("mass per aircraft (kg)")]) == pytest.approx(
                m["mass_kg"].sum(), abs=0.05)
            assert float(r[head.index("area (m²)")]) == pytest.approx(114.5, abs=0.05)
            continue
        want = rat.loc[(pkg, zone)]
        for key, col in (("stc", "STC"), ("rw", "Rw (dB)"), ("c", "C (dB)"),
                         ("ctr", "Ctr (dB)"), ("oitc", "OITC")):
            assert int(r[head.index(col)]) == want[key], (pkg, zone, key)
    assert seen == {(p, z) for p in demo_result.summary["package"].unique()
                    for z in ("sidewall", "windows", "crown", "all zones")}
    summary = table_with(tables_of(html), "condition", "added mass (kg)")
    assert "STC" not in summary[0] and "Rw (dB)" not in summary[0]  # no package-wide label


def _svgs(html):
    return [base64.b64decode(u).decode() for u in
            re.findall(r'src="data:image/svg\+xml;base64,([^"]+)"', html)]


def test_figures_cover_every_condition_and_zone(html):
    svgs = _svgs(html)
    def with_text(*words):
        return [s for s in svgs if all(f">{w}<" in s for w in words)]
    assert with_text("sidewall", "windows", "crown", "transmission loss (dB)")
    assert with_text("cruise", "climb", "interior level (dB re 20 µPa)")
    assert with_text("cruise", "climb", "exterior level (dB re 20 µPa)", "BPF", "2 BPF")
    assert with_text("cruise", "climb", "interior level (dBA)", "BPF tiles")  # trade
    assert with_text("cruise", "climb", "share of interior A-weighted energy (%)")
    tile = with_text("effective surface mass, real part (kg/m²)")
    assert tile and all("sign(m)" not in s and "lg(1" not in s for s in svgs)
    drawings = with_text("material", "exterior", "cabin")
    assert len(drawings) == 9  # the distinct stacks of the demo, each with its key
    assert all(">trim / sandwich<" in d for d in drawings if ">tile<" in d)


def test_layer_families():
    from noisebudget.report.model import layer_family

    stack = nb.load_stack(data_path("examples", "sidewall.toml"))
    families = [layer_family(layer, label) for layer, label in
                zip(stack.layers, stack.labels, strict=True)]
    assert families == ["skin / plate", "porous", "septum", "air", "trim / sandwich"]


def test_number_text_never_negative_zero():
    from noisebudget.report.model import fmt
    from noisebudget.textout import fmt_number

    assert fmt(-0.04, "0.0") == "0.0" and fmt(-0.0, "0.00") == "0.00"
    assert fmt(-0.06, "0.0") == "-0.1" and fmt(0.03, "0.0#") == "0.03"
    assert fmt(40000.0, "3sf") == "40000" and fmt(9.6, "3sf") == "9.60"
    assert fmt(0.0001, "3sf") == "0.0001" and fmt(None) == "-"
    assert fmt_number(-0.0004, 3) == "0.000" and fmt_number(-1.25, 1) == "-1.2"


def test_user_text_renders_inert(tmp_path, demo_study):
    study = tmp_path / "evil.toml"
    text = demo_study.read_text().replace(
        'title = "NB-70 forward cabin sidewall treatment trade"',
        'title = "=HYPERLINK(\\"x\\") <b>bold</b> <img src=\\"file:///etc/passwd\\"> $x^2$"')
    text = text.replace('author = "Cabin acoustics, demo"', 'author = "@SUM(A1:A2)"')
    text = text.replace('name = "septum"', 'name = "=1+1 $\\\\alpha$"')
    study.write_text(text)
    from noisebudget.report.pdf import render_html
    from noisebudget.report.workbook import write_workbook

    result = nb.run_study(study)
    html = render_html(result, study)
    assert "&lt;img src=" in html and "<b>bold</b>" not in html
    sources = re.findall(r'<img src="([^"]*)"', html)
    assert sources and all(s.startswith("data:image/svg+xml;base64,") for s in sources)
    assert any(">=1+1 $\\alpha$<" in s for s in _svgs(html))  # drawn as typed, no markup
    write_workbook(result, tmp_path / "evil.xlsx")
    wb = openpyxl.load_workbook(tmp_path / "evil.xlsx")
    cells = [c for ws in wb.worksheets for row in ws.iter_rows() for c in row]
    assert all(c.data_type != "f" for c in cells)
    assert wb["Summary"]["A1"].value.startswith("=HYPERLINK")
    assert "=1+1 $\\alpha$" in [c.value for c in wb["Summary"]["B"]]


def test_fetcher_refuses_outside_files():
    from noisebudget.report.pdf import safe_url_fetcher
    with pytest.raises(ValueError, match="refused"):
        safe_url_fetcher("file:///etc/passwd")
    with pytest.raises(ValueError, match="refused"):
        safe_url_fetcher("http://example.invalid/x.png")
    with pytest.raises(ValueError, match="refused"):
        safe_url_fetcher("data:text/html,<img src=x>")
    css = data_path("templates", "report.css").resolve().as_uri()
    assert safe_url_fetcher(css)["mime_type"] == "text/css"


def test_interrupted_write_keeps_previous_report(tmp_path, monkeypatch):
    target = tmp_path / "r.pdf"
    target.write_bytes(b"previous report")

    def broken_replace(src, dst):
        raise KeyboardInterrupt  # interrupted between writing and renaming

    monkeypatch.setattr("noisebudget.writing.os.replace", broken_replace)
    with pytest.raises(KeyboardInterrupt):
        atomic_write_bytes(target, b"new report")
    assert target.read_bytes() == b"previous report"
    assert [p.name for p in tmp_path.iterdir()] == ["r.pdf"]  # no temporary left


def test_reports_not_overwritten_without_force(demo_out, tmp_path):
    out = tmp_path / "o"
    shutil.copytree(demo_out, out)
    before = (out / "demo-study.pdf").read_bytes()
    assert main(["demo", "-o", str(out), "-q"]) == 2
    assert (out / "demo-study.pdf").read_bytes() == before


def test_inputs_show_offsets_flanking_leaks_and_sources(html, demo_toml):
    text = " ".join(" ".join(map(str, r)) for t in tables_of(html) for r in t)
    for zone in demo_toml["zone"]:
        assert zone["name"] in text
    for source in demo_toml["interior_source"]:
        assert source["name"] in text
    leaks = [leak.get("name") for p in demo_toml["package"]
             for z in p.get("zone", {}).values() for leak in z.get("leak", [])]
    assert leaks and all(name in text for name in leaks if name)

"""The design-review PDF and the workbook: content, read-back, inert user text, atomicity."""

import shutil

import openpyxl
import pytest
from pypdf import PdfReader

import noisebudget as nb
from noisebudget.cli import main
from noisebudget.resources import data_path
from noisebudget.writing import atomic_write_bytes

DEMO = data_path("examples", "demo-study.toml")


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    assert main(["demo", "-o", str(out)]) == 0
    return out


def test_pdf_holds_every_package_and_dba(demo_out):
    text = "\n".join(p.extract_text() for p in PdfReader(demo_out / "demo-study.pdf").pages)
    res = nb.run_study(DEMO)
    for name in res.summary["package"].unique():
        assert name in text
    for v in res.summary["interior_dba"]:
        assert f"{v:.1f}" in text
    for section in ("Summary", "Transmission loss", "Interior spectra", "Zone contributions",
                    "Resonator tiles", "Interior band levels", "Packages and stacks",
                    "Assumptions and conventions", "Cautions", "References", "SHA-256",
                    "ASTM E90", "licensed", "flammability", "gain over mass law"):
        assert section.lower() in text.lower(), section
    assert 6 <= len(PdfReader(demo_out / "demo-study.pdf").pages) <= 30


def test_workbook_reads_back_equal(demo_out):
    wb = openpyxl.load_workbook(demo_out / "demo-study.xlsx")
    assert wb.sheetnames == ["Summary", "Bands", "TL", "Mass", "Inputs", "Sources", "Cautions"]
    res = nb.run_study(DEMO)
    ws = wb["Summary"]
    header = [c.value for c in ws[1]]
    assert "interior dBA" in header and "added mass (kg)" in header
    # every cell of the Summary equals the result table, matched by (package, condition)
    table = res.summary.set_index(["package", "condition"])
    from noisebudget.report.workbook import HEADERS
    column_of = {HEADERS.get(c, c): c for c in res.summary.columns}
    for row in ws.iter_rows(min_row=2, values_only=True):
        record = dict(zip(header, row, strict=True))
        expected = table.loc[(record["package"], record["condition"])]
        for head, value in record.items():
            col = column_of[head]
            if col in ("package", "condition"):
                continue
            want = expected[col]
            if want != want:  # NaN is written as an empty cell
                assert value is None
            else:
                assert value == pytest.approx(want, abs=1e-9), head
    assert ws.max_row - 1 == len(res.summary)
    tl = wb["TL"]
    tl_table = res.tl.set_index(["package", "zone", "band_hz"])["tl_db"]
    for package, zone, band, value, *_ in tl.iter_rows(min_row=2, values_only=True):
        assert value == pytest.approx(tl_table.loc[(package, zone, band)], abs=1e-9)
    # chart series point at the rows they are named after (study order kept)
    chart = tl._charts[0]
    first = chart.series[0].yVal.numRef.f  # e.g. 'TL'!$D$2:$D$22
    lo = int(first.split(":")[0].split("$")[-1])
    assert tl.cell(row=lo, column=2).value == "sidewall"
    assert tl.cell(row=lo, column=1).value == "baseline"
    assert ws.freeze_panes == "A2"
    assert len(wb["Summary"]._charts) == 1 and len(wb["Bands"]._charts) == 1
    assert len(wb["TL"]._charts) == 1


def test_user_text_renders_inert(tmp_path):
    study = tmp_path / "evil.toml"
    text = DEMO.read_text().replace(
        'title = "NB-70 forward cabin sidewall treatment trade"',
        'title = "=HYPERLINK(\\"x\\") <b>bold</b> <img src=\\"file:///etc/passwd\\">"')
    text = text.replace('author = "Cabin acoustics, demo"', 'author = "@SUM(A1:A2)"')
    study.write_text(text)
    out = tmp_path / "out"
    assert main(["run", str(study), "-o", str(out)]) == 0
    from noisebudget.report.pdf import render_html
    html = render_html(nb.run_study(study), study)
    import re
    assert "&lt;img src=" in html and "<b>bold</b>" not in html
    sources = re.findall(r'<img src="([^"]*)"', html)
    assert sources and all(s.startswith("data:image/svg+xml;base64,") for s in sources)
    pdf_text = PdfReader(out / "evil.pdf").pages[0].extract_text()
    assert "root:" not in pdf_text  # nothing of /etc/passwd
    wb = openpyxl.load_workbook(out / "evil.xlsx")
    cells = [c for row in wb["Inputs"].iter_rows() for c in row] + \
        [c for row in wb["Summary"].iter_rows() for c in row]
    assert all(c.data_type != "f" for c in cells)


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
    assert main(["demo", "-o", str(out)]) == 2
    assert (out / "demo-study.pdf").read_bytes() == before

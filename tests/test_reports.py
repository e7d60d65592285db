"""The design-review PDF: inputs (zones, packages per zone, leaks, interior sources,
conversions), paths into the cabin, tones, ratings of the packages alone, mass per zone,
figures for every condition and zone, assumptions and references, one caution; read back
from the HTML before rendering and from the PDF's text and checked against the study file
(read with tomllib) and the result tables. Also inert user text, the restricted fetcher
and atomic writes."""

import base64
import math
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


def plain_text(html):
    """The HTML's text, tags dropped and entities read, whitespace collapsed."""
    from html import unescape

    return " ".join(unescape(re.sub(r"<[^>]+>", " ", html)).split())


def quantity(text, units):
    """A quantity string of the study file ("12 m", "4 mm") in the unit of ``units``
    (a dict of factors), parsed here, not by the project."""
    value, unit = text.split()
    return float(value) * units[unit]


MM = {"mm": 1.0, "cm": 10.0, "m": 1000.0}


def hz(text):
    """'63 Hz' / '1.25 kHz' -> Hz."""
    value, unit = text.split()
    return float(value) * (1000.0 if unit == "kHz" else 1.0)


def curve_points(text):
    """``[(f_hz, dB)]`` of a curve in words ("+3.0 dB at 63 Hz, ..."), or ``[(None, dB)]``
    for "... dB at every frequency"."""
    if text.endswith("at every frequency"):
        return [(None, float(text.split(" dB")[0]))]
    return [(hz(f"{f} {u}"), float(v))
            for v, f, u in re.findall(r"([+-]?\d+\.\d) dB at ([\d.]+) (k?Hz)", text)]


def toml_curve(table, key, points_key):
    """The same from the study file: a number, or a list at the frequencies given."""
    v = table[key]
    if isinstance(v, list):
        return [(float(f), float(x)) for f, x in zip(table[points_key], v, strict=True)]
    return [(None, float(v))]


def rows_by(table, *keys):
    """Rows of a parsed HTML table as dicts by header, grouped columns filled."""
    head = table[0]
    out = []
    for r in filled(table[1:], len(keys)):
        out.append(dict(zip(head, r, strict=True)))
    return out


def test_pdf_sections_and_one_aviation_caution(pdf_text, demo_result):
    from noisebudget.report import CAUTIONS

    text, pages = pdf_text
    for name in demo_result.summary["package"].unique():
        assert name in text
    for v in demo_result.summary["interior_dba"]:
        assert f"{v:.1f}" in text
    for section in ("Summary", "Inputs", "Exterior spectra and tones", "Spectra per band",
                    "Zones", "Packages per zone", "Leaks", "Interior sources", "Tones",
                    "Paths into the cabin", "A-weighted level of each path",
                    "Largest path, band by band", "Ratings of the packages alone",
                    "Mass per zone", "Transmission loss", "Interior spectra",
                    "Interior band levels", "Packages and stacks",
                    "Assumptions and conventions", "References", "SHA-256", "input hash"):
        assert section.lower() in text.lower(), section
    assert text.count("Caution.") == 1  # one caution block, not repeated
    for c in CAUTIONS:  # each caution sentence once
        assert text.count(" ".join(c.split())[:60]) == 1, c[:40]
    for words in ("airworthiness", "14 CFR Part 25", "flammability", "noise-exposure",
                  "Licensed engineering practice"):
        assert words in text, words
    assert "local codes" not in text  # building-regulation wording
    assert not re.search(r"(?<![\w.])-0\.0+(?!\d*[1-9])", text)  # no negative zero
    assert 6 <= pages <= 30


def test_assumptions_and_references_name_the_physics(html):
    """The conventions section states the models the tool now uses, each with its
    published source in the reference list."""
    text = plain_text(html)
    start = text.index("Assumptions and conventions")
    notes, refs = text[start:text.index("References", start)], text[text.index("References",
                                                                                start):]
    for words in ("Donnell", "shallow-shell", "breathing mode", "ring frequency",
                  "smeared", "Villot, Guigou & Gagliardini", "radiated side only",
                  "independently of its neighbours", "core's shear", "Mead & Markus",
                  "loss factor", "Biot", "unbonded", "Gomperts", "Wilson & Soroka",
                  "k a < 1.84", "k w < pi", "equal energy (-4.77 dB", "Flanking TL and interior "
                  "sources are taken as the study gives them", "without leaks and flanking",
                  "transmission to 2 % (0.09 dB)", "never worse than 10 % (0.41 dB)"):
        assert words in notes, words
    assert notes.count("In this study:") >= 12
    for source in ("Villot", "Sewell", "Gomperts", "Wilson", "Stinson", "Biot",
                   "Deresiewicz", "Kennett", "Donnell", "Leissa", "Koval", "Heckl",
                   "Mead", "Kurtze", "Nilsson", "Timoshenko", "Allard"):
        assert source in refs, source


def test_inputs_section_shows_the_study_file(html, demo_toml):
    """Inputs as given in the study file (read here with tomllib, not the project)."""
    tables = tables_of(html)
    bands = table_with(tables, "band (Hz)", f"{demo_toml['condition'][0]['name']} exterior (dB)")
    head = bands[0]
    rows = {float(r[0]): r for r in bands[1:]}
    cabin = demo_toml["cabin"]
    if cabin.get("bandwidth", "third") == "third" and "reverberation_time" in cabin:
        t60 = [float(v.split()[0]) for v in cabin["reverberation_time"]]
        for k, b in enumerate(cabin["bands_hz"]):
            assert float(rows[b][head.index("reverberation time (s)")]) == pytest.approx(
                t60[k], abs=0.005)
    for c in demo_toml["condition"]:
        if c.get("bandwidth", "third") != "third":
            continue
        col = head.index(f"{c['name']} exterior (dB)")
        for b, lv in zip(c["bands_hz"], c["levels_db"], strict=True):
            assert float(rows[b][col]) == pytest.approx(lv, abs=0.05)
    tones = filled(table_with(tables, "condition", "tone frequency (Hz)")[1:], 1)
    given = [(c["name"], t["name"], float(t["frequency"].split()[0]), float(t["level_db"]))
             for c in demo_toml["condition"] for t in c.get("tone", [])]
    assert [(r[0], r[1], float(r[2]), float(r[3])) for r in tones] == given
    volume = float(cabin["volume"].split()[0])
    assert f"{volume:.1f} m³" in html
    air = {r[0]: r for r in table_with(tables, "air", "temperature (°C)")[1:]}
    if demo_toml["air"]["cabin"].get("temperature") == "22 degC":
        assert float(air["cabin"][1]) == pytest.approx(22.0, abs=0.05)
    if demo_toml["air"]["exterior"].get("altitude") == "25000 ft":
        # 25,000 ft in the ISA: T = 288.15 K - 6.5 K/km * 7.62 km, p = 101.325 kPa
        # (T / 288.15 K)^5.25588 (ICAO Doc 7488), computed from those formulas
        t = 288.15 - 0.0065 * 7620.0
        assert float(air["exterior"][1]) == pytest.approx(t - 273.15, abs=0.05)
        assert float(air["exterior"][2]) == pytest.approx(101.325 * (t / 288.15) ** 5.25588,
                                                          abs=0.01)
    targets = {r[0]: r[1] for t in tables for r in t if len(r) == 2}
    if "dba" in demo_toml.get("targets", {}):
        assert targets["interior level"] == f"{float(demo_toml['targets']['dba']):.1f} dBA"
    if "sil4" in demo_toml.get("targets", {}):
        assert targets["speech interference level SIL4"] == \
            f"{float(demo_toml['targets']['sil4']):.1f} dB"


def test_zones_offsets_flanking_and_bays(html, demo_toml):
    zones = {r["zone"]: r for r in rows_by(table_with(tables_of(html), "zone",
                                                       "exterior offset"))}
    assert list(zones) == [z["name"] for z in demo_toml["zone"]]
    for z in demo_toml["zone"]:
        row = zones[z["name"]]
        assert float(row["area (m²)"]) == pytest.approx(float(z["area"].split()[0]), abs=0.05)
        offset = toml_curve(z, "exterior_offset_db", "offset_bands_hz") \
            if "exterior_offset_db" in z else [(None, 0.0)]
        assert curve_points(row["exterior offset"]) == offset
        flank = row["flanking TL (path around the package)"]
        if "flanking_tl_db" in z:
            assert curve_points(flank) == toml_curve(z, "flanking_tl_db", "flanking_bands_hz")
        else:
            assert flank == "none"
        if "panel_width" in z:
            assert float(row["bay width (mm)"]) == pytest.approx(
                quantity(z["panel_width"], MM), abs=0.05)
            assert float(row["bay height (mm)"]) == pytest.approx(
                quantity(z["panel_height"], MM), abs=0.05)


def _package_chain(toml, name):
    """The package's own table and, for each zone, the package that defines it (following
    based_on in the study file)."""
    by_name = {p["name"]: p for p in toml["package"]}
    zones = {}
    p = by_name[name]
    while True:
        for z in p.get("zone", {}):
            zones.setdefault(z, p["name"])
        if "based_on" not in p:
            return zones
        p = by_name[p["based_on"]]


def _layer_entries(zone_table):
    """The zone's layer entries as written, or [] where they come from other files
    (``stack = ...``), whose layers this test does not read."""
    layers = zone_table.get("layer", [])
    if not isinstance(layers, list) or any("stack" in e for e in layers):
        return []
    return layers


def test_packages_per_zone(html, demo_toml):
    """Installation mass per zone (own or taken over), structure layers by name, leaks
    and flanking values, against the study file."""
    rows = {(r["package"], r["zone"]): r for r in rows_by(
        table_with(tables_of(html), "package", "structure layers (airframe mass)"), "package")}
    by_name = {p["name"]: p for p in demo_toml["package"]}
    for pkg in demo_toml["package"]:
        for zone, origin in _package_chain(demo_toml, pkg["name"]).items():
            row = rows[(pkg["name"], zone)]
            source = by_name[origin]
            inst = quantity(source.get("installation_mass", "0 kg/m^2"), {"kg/m^2": 1.0})
            assert float(row["installation (kg/m²)"]) == pytest.approx(inst, abs=0.005)
            assert row["zone defined by"] == ("this package" if origin == pkg["name"]
                                              else f"{origin} (taken over)")
            zt = source["zone"][zone]
            entries = _layer_entries(zt)
            if entries:  # structure: its own key, else catalog skins (structure = true)
                named = [f"{k} {e.get('name') or e.get('use') or e['type']}"
                         for k, e in enumerate(entries, start=1)
                         if e.get("structure", str(e.get("use", "")).startswith("skin."))]
                assert row["structure layers (airframe mass)"] == ("; ".join(named) or "none")
            leaks = zt.get("leak", [])
            for leak in leaks:
                assert leak.get("name", "unnamed") in row["leaks (open area)"]
            if not leaks:
                assert row["leaks (open area)"] == "none"
            if "flanking_tl_db" in zt:
                assert curve_points(row["flanking TL"]) == toml_curve(
                    zt, "flanking_tl_db", "flanking_bands_hz")
            else:
                assert row["flanking TL"] == "zone value"


def test_leaks_table_against_the_study_file(html, demo_toml):
    """Each leak the study file gives: shape, dimensions, open area computed here from
    the dimensions (slit: width x length; holes: count x pi d^2 / 4), the layer it sits
    behind and the layers it bypasses."""
    table = table_with(tables_of(html), "package", "open area (mm²)")
    rows = {(r["package"], r["zone"], r["leak"]): r for r in rows_by(table, "package", "zone")}
    given = [(p["name"], z, leak, zt) for p in demo_toml["package"]
             for z, zt in p.get("zone", {}).items() for leak in zt.get("leak", [])]
    assert given and len(rows) == len(given)
    for pkg, zone, leak, zt in given:
        row = rows[(pkg, zone, leak.get("name", "unnamed"))]
        assert row["shape"] == leak["shape"]
        depth = quantity(leak["depth"], MM)
        assert float(row["depth (mm)"]) == pytest.approx(depth, abs=0.005)
        if leak["shape"] == "slit":
            w, length = quantity(leak["width"], MM), quantity(leak["length"], MM)
            assert float(row["width (mm)"]) == pytest.approx(w, abs=0.005)
            assert float(row["length (mm)"]) == pytest.approx(length, abs=0.005)
            area = w * length
        else:
            d, n = quantity(leak["diameter"], MM), leak.get("count", 1)
            assert float(row["diameter (mm)"]) == pytest.approx(d, abs=0.005)
            assert int(row["count"]) == n
            area = n * math.pi * d**2 / 4
        assert float(row["open area (mm²)"]) == pytest.approx(area, abs=0.051)
        behind = leak.get("behind_layer", 0)
        assert int(row["behind layer"].split()[0]) == behind
        if behind:
            entries = _layer_entries(zt)
            if entries:
                e = entries[behind - 1]
                assert row["behind layer"] == \
                    f"{behind} {e.get('name') or e.get('use') or e['type']}"


def test_interior_sources_and_conversions(html, demo_toml):
    """Sources as given: where they sound, in which bands, and their levels per band
    (an octave level split into its three thirds with equal energy, -10 lg 3 dB each:
    common practice); every octave-to-third conversion is stated."""
    tables = tables_of(html)
    text = plain_text(html)
    sources = demo_toml.get("interior_source", [])
    if not sources:
        return
    meta = {r["interior source"]: r for r in rows_by(table_with(tables, "interior source"))}
    assert list(meta) == [s["name"] for s in sources]
    bands = table_with(tables, "band (Hz)", f"{sources[0]['name']} in the cabin (dB)")
    head, rows = bands[0], bands[1:]
    nominal = [float(r[0]) for r in rows]
    for s in sources:
        row = meta[s["name"]]
        assert row["sounds in"] == (", ".join(s["conditions"]) if "conditions" in s
                                    else "every condition")
        octave = s.get("bandwidth", "third") == "octave"
        assert row["given in"] == ("octave bands, split into thirds" if octave
                                   else "one-third-octave bands")
        col = head.index(f"{s['name']} in the cabin (dB)")
        for b, lv in zip(s["bands_hz"], s["levels_db"], strict=True):
            if octave:
                i = nominal.index(float(b))
                for k in (i - 1, i, i + 1):
                    assert float(rows[k][col]) == pytest.approx(
                        lv - 10 * math.log10(3), abs=0.05)
            else:
                assert float(rows[nominal.index(float(b))][col]) == pytest.approx(lv, abs=0.05)
        if octave:
            assert f"interior source '{s['name']}': octave-band levels split into three " \
                   "one-third-octave bands of equal energy" in text
    for c in demo_toml["condition"]:
        if c.get("bandwidth") == "octave":
            assert f"condition '{c['name']}': octave-band levels split" in text


def test_paths_add_up_to_the_interior_level(html, demo_result):
    """Each condition's path table: the paths' A-weighted energies add up to the summary's
    interior dBA (row "all paths"), their shares to 100 %; every path of the budget's
    contributions table has its row."""
    from noisebudget.report.paths import contributor_label

    tables = tables_of(html)
    packages = list(dict.fromkeys(demo_result.summary["package"]))
    dba = demo_result.summary.set_index(["condition", "package"])["interior_dba"]
    c = demo_result.contributions
    paths = [t for t in tables if t and t[0][0] == "path"]
    conditions = list(dict.fromkeys(demo_result.summary["condition"]))
    assert len(paths) == len(conditions)
    for cond, t in zip(conditions, paths, strict=True):
        subheads = t[1]
        n = len(packages)
        assert subheads[:n] == packages and subheads[n:] == packages
        body = {r[0]: [float(x) if x != "-" else None for x in r[1:]] for r in t[2:]}
        total = body.pop("all paths")
        here = c[c["condition"] == cond]
        assert set(body) == {contributor_label(z, k) for z, k in
                             zip(here["zone"], here["path"], strict=True)}
        for j, p in enumerate(packages):
            energy = sum(10 ** (r[j] / 10) for r in body.values() if r[j] is not None)
            assert 10 * math.log10(energy) == pytest.approx(total[j], abs=0.1)
            assert total[j] == pytest.approx(dba[(cond, p)], abs=0.051)
            assert sum(r[n + j] for r in body.values() if r[n + j] is not None) == \
                pytest.approx(100.0, abs=0.05 * len(body) + 0.05)


def test_largest_path_band_by_band(html, demo_result):
    """The runs of largest paths cover every band of every condition and package once,
    and each names the path with the most energy in those bands (from the budget's
    contributions table)."""
    from noisebudget.report.paths import contributor_label

    c = demo_result.contributions
    c = c.assign(label=[contributor_label(z, k) for z, k in zip(c["zone"], c["path"],
                                                                strict=True)])
    top = c.loc[c.groupby(["condition", "package", "band_hz"])["interior_db"].idxmax()]
    want = {(r.condition, r.package, float(r.band_hz)): r.label for r in top.itertuples()}
    rows = rows_by(table_with(tables_of(html), "condition", "largest path"), "condition",
                   "package")
    got = {}
    for r in rows:
        lo, hi = float(r["from band (Hz)"]), float(r["to band (Hz)"])
        for cond, pkg, b in want:
            if cond == r["condition"] and pkg == r["package"] and lo <= b <= hi:
                assert (cond, pkg, b) not in got
                got[(cond, pkg, b)] = r["largest path"]
    assert got == want


def test_tone_table(html, demo_result):
    rows = filled(table_with(tables_of(html), "condition", "package TL at the tone (dB)")[1:],
                  4)
    tones = demo_result.tones
    assert len(rows) == len(tones)
    by_key = {(r["condition"], r["tone"], r["package"]): r for _, r in tones.iterrows()}
    for cond, tone, freq, ext, pkg, tl, zone_tl, interior, zone, path in rows:
        r = by_key[(cond, tone, pkg)]
        assert float(freq) == pytest.approx(r["tone_hz"], abs=0.05)
        assert float(ext) == pytest.approx(r["exterior_db"], abs=0.05)
        assert float(tl) == pytest.approx(r["tl_db"], abs=0.05)
        assert float(zone_tl) == pytest.approx(r["zone_tl_db"], abs=0.05)
        assert float(interior) == pytest.approx(r["interior_db"], abs=0.05)
        assert (zone, path) == (r["dominant_zone"], r["dominant_path"])


def test_ratings_per_zone_and_composite(html, pdf_text, demo_result):
    """Ratings of the package alone per zone, then the composite row, labelled as such."""
    table = table_with(tables_of(html), "package", "OITC")
    head = table[0]
    rows = filled(table[1:], 1)
    rat = demo_result.ratings.set_index(["package", "zone"])
    zones = [z.name for z in demo_result.inputs.zones]
    seen = []
    for r in rows:
        pkg, zone = r[0], r[1]
        key = "composite" if zone == "composite, area-weighted" else zone
        seen.append((pkg, key))
        want = rat.loc[(pkg, key)]
        for k, col in (("stc", "STC"), ("rw", "Rw (dB)"), ("c", "C (dB)"),
                       ("ctr", "Ctr (dB)"), ("oitc", "OITC")):
            assert int(r[head.index(col)]) == want[k], (pkg, zone, k)
    packages = list(dict.fromkeys(demo_result.summary["package"]))
    assert seen == [(p, z) for p in packages for z in [*zones, "composite"]]
    text, _ = pdf_text
    assert "Ratings of the packages alone" in text
    assert "the layers alone: no leaks, no flanking" in text
    summary = table_with(tables_of(html), "condition", "added mass (kg)")
    assert "STC" not in summary[0] and "Rw (dB)" not in summary[0]  # no package-wide label


def test_mass_per_zone(html, demo_result):
    """Structure, treatment layers and installation add up to the zone's areal mass;
    per aircraft the mass and the treatment mass equal the mass table; all zones sums."""
    table = table_with(tables_of(html), "package", "treatment mass per aircraft (kg)")
    rows = rows_by(table, "package")
    mass = demo_result.mass.set_index(["package", "zone"])
    for r in rows:
        if r["zone"] == "all zones":
            m = demo_result.mass[demo_result.mass["package"] == r["package"]]
            assert float(r["mass per aircraft (kg)"]) == pytest.approx(m["mass_kg"].sum(),
                                                                        abs=0.05)
            assert float(r["treatment mass per aircraft (kg)"]) == pytest.approx(
                m["treatment_mass_kg"].sum(), abs=0.05)
            assert float(r["area (m²)"]) == pytest.approx(m["area_m2"].sum(), abs=0.05)
            continue
        want = mass.loc[(r["package"], r["zone"])]
        parts = [float(r[k]) for k in ("structure (kg/m²)", "treatment layers (kg/m²)",
                                       "installation (kg/m²)")]
        assert sum(parts) == pytest.approx(want["areal_mass_kg_m2"], abs=0.016)
        assert parts[1] + parts[2] == pytest.approx(want["treatment_kg_m2"], abs=0.011)
        assert float(r["total areal mass (kg/m²)"]) == pytest.approx(
            want["areal_mass_kg_m2"], abs=0.005)
        assert float(r["treatment mass per aircraft (kg)"]) == pytest.approx(
            want["treatment_mass_kg"], abs=0.05)


def _svgs(html):
    return [base64.b64decode(u).decode() for u in
            re.findall(r'src="data:image/svg\+xml;base64,([^"]+)"', html)]


def test_figures_cover_every_condition_and_zone(html, demo_result, demo_toml):
    svgs = _svgs(html)

    def with_text(*words):
        return [s for s in svgs if all(f">{w}<" in s for w in words)]

    inp = demo_result.inputs
    zones, conds = [z.name for z in inp.zones], [c.name for c in inp.conditions]
    tones = [t["name"] for c in demo_toml["condition"] for t in c.get("tone", [])]
    assert with_text(*[f"{z}: package alone" for z in zones],
                     *[f"{z}: with leaks and flanking" for z in zones],
                     "transmission loss (dB)")
    assert with_text(*conds, "interior level (dB re 20 µPa)")
    assert with_text(*conds, "exterior level (dB re 20 µPa)", *tones)
    trade = with_text(*conds, "interior level (dBA)", *[p.name for p in inp.packages])
    assert trade and ">treatment mass per aircraft (kg)<" in trade[0]
    from noisebudget.report.paths import contributors

    labels = [c[0] for c in contributors(demo_result)]
    assert with_text(*conds, "share of interior A-weighted energy (%)", *labels)
    assert with_text(*conds, "one-third-octave band (Hz)", *[p.name for p in inp.packages],
                     labels[0])  # the largest path per band
    if any(layer.type_name == "tile" for p in inp.packages for s in p.stacks.values()
           for layer in s.layers):
        tile = with_text("effective surface mass, real part (kg/m²)")
        assert tile and all("sign(m)" not in s and "lg(1" not in s for s in svgs)
    drawings = with_text("material", "exterior", "cabin")
    distinct = {id(s) for p in inp.packages for s in p.stacks.values()}
    assert len(drawings) == len(distinct)  # each distinct stack, each with its key
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


SYNTHETIC = '''
[study]
title = "Report check: curved skin, bonded foam"
baseline = "plain"
exterior_level = "surface"
[air.exterior]
altitude = "25000 ft"
[air.cabin]
pressure_altitude = "8000 ft"
temperature = "22 degC"
[cabin]
volume = "60 m^3"
bandwidth = "octave"
bands_hz = [125, 250, 500, 1000]
reverberation_time = ["0.5 s", "0.4 s", "0.35 s", "0.3 s"]
[[condition]]
name = "cruise"
bandwidth = "octave"
bands_hz = [125, 250, 500, 1000]
levels_db = [110, 108, 105, 100]
[[zone]]
name = "sidewall"
area = "20 m^2"
flanking_tl_db = 45
[[package]]
name = "plain"
installation_mass = "0.2 kg/m^2"
[package.zone.sidewall]
layer = [{ use = "skin.al2024-t3-1.6mm", curvature_radius = "1.4 m" },
         { use = "blanket.glass-0.6pcf-limp", thickness = "50 mm" },
         { type = "air", thickness = "20 mm", loss_factor = 0.05 },
         { use = "trim.honeycomb-glass-10" }]
[[package]]
name = "bonded foam"
based_on = "plain"
installation_mass = "0.3 kg/m^2"
[package.zone.sidewall]
flanking_tl_db = [40, 50]
flanking_bands_hz = [125, 1000]
layer = [{ use = "skin.al2024-t3-1.6mm", curvature_radius = "1.4 m" },
         { use = "poroelastic.pu-foam-24" },
         { type = "air", thickness = "20 mm" },
         { use = "trim.honeycomb-glass-10", bonding = "unbonded" }]
'''


def test_models_of_the_study_stated(tmp_path):
    """A study with a curved, pressurised skin, a lossy gap, a bonded Biot foam under an
    unbonded trim, a package flanking value and octave inputs: the stack tables and the
    assumptions name each of them with its values (inputs only: nothing is computed)."""
    from types import SimpleNamespace

    from noisebudget.report.inputs import zone_curves_table, zones_table
    from noisebudget.report.model import stacks_model
    from noisebudget.report.notes import assumptions

    path = tmp_path / "study.toml"
    path.write_text(SYNTHETIC)
    result = SimpleNamespace(inputs=nb.load_study(path).inputs)
    stacks = {s["package"]: s["layers"] for s in stacks_model(result)}
    skin, foam, gap, trim = stacks["bonded foam"]
    # ring frequency f_r = c_L / (2 pi R), c_L = sqrt(E / (rho (1 - nu^2))) (Leissa 1973),
    # computed here from the catalog's own values; hoop tension Delta p R of a thin
    # cylinder (Timoshenko & Woinowsky-Krieger) with both pressures from the ISA (ICAO
    # Doc 7488), computed from those formulas
    al = tomllib.loads(data_path("catalogs", "skins.toml").read_text())["skin"][
        "al2024-t3-1.6mm"]
    e, rho, nu = (float(al["youngs_modulus"].split()[0]) * 1e9,
                  float(al["density"].split()[0]), al["poisson_ratio"])
    ring = math.sqrt(e / (rho * (1 - nu**2))) / (2 * math.pi * 1.4)
    assert f"curved, radius 1.4 m, ring frequency {ring:.0f} Hz" in skin["notes"]

    def isa_kpa(feet):
        t = 288.15 - 0.0065 * feet * 0.3048
        return 101.325 * (t / 288.15) ** 5.25588

    hoop = (isa_kpa(8000) - isa_kpa(25000)) * 1.4  # kN/m
    assert f"{hoop:.3g} kN/m hoop" in skin["notes"]
    assert f"{hoop / 2:.3g} kN/m axial" in skin["notes"] and "pressure difference" in \
        skin["notes"]
    assert skin["role"] == "structure" and foam["role"] == "treatment"
    assert foam["family"] == "foam, elastic frame" and "Biot" in foam["notes"]
    assert foam["contact"] == "bonded to 1" and trim["contact"] == "unbonded to 3"
    assert stacks["plain"][2]["notes"] == "cavity loss factor 0.05"
    here = {topic: text for topic, _, text in assumptions(result)}
    assert "radius 1.4 m" in here["Curved, pressurised skins"]
    assert "0.05" in here["Cavity loss"]
    assert "poroelastic.pu-foam-24" in here["Porous, elastic and Biot layers"]
    assert "trim.honeycomb-glass-10 unbonded to air" in here["Porous, elastic and Biot layers"]
    assert "condition 'cruise'" in here["Octave-band inputs"]
    assert "cabin: octave-band values copied" in here["Octave-band inputs"]
    assert "bonded foam (sidewall)" in here["Paths"]
    zones = zones_table(result)
    assert zones.rows[0][2:4] == ["+0.0 dB at every frequency", "45.0 dB at every frequency"]
    curves = zone_curves_table(result).rows
    assert ["sidewall", "package bonded foam", "flanking TL", 125.0, 40.0] in curves
    assert ["sidewall", "package bonded foam", "flanking TL", 1000.0, 50.0] in curves



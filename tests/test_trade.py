"""Trade studies: sweeps, Monte Carlo, optimum, non-dominated set, workers and Dask,
checkpoints, and the [[vary]] / [trade] keys, against closed forms and single runs."""

import os
import signal
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.optimize import brentq

import noisebudget as nb
from noisebudget.bands import a_weighting, third_octave_bands
from noisebudget.budget import compute_budget
from noisebudget.cli import main
from noisebudget.media import Air
from noisebudget.study import load_study
from noisebudget.trade.evaluate import TRADE_RTOL
from noisebudget.trade.stats import non_dominated, wilson_interval
from noisebudget.trade.sweep import sweep_study

THIRDS = [400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000]
RATED = [80, 100, 125, 160, 200, 250, 315, *THIRDS]  # OITC needs 80 Hz to 4 kHz


def study(package, vary="", trade="", bands=THIRDS, incidence="normal", targets=None):
    n = len(bands)
    targets = targets or "dba = 70\nsil4 = 62"
    return f'''
[study]
title = "trade check"
incidence = "{incidence}"
[air.exterior]
temperature = "20 degC"
pressure = "101.325 kPa"
[air.cabin]
temperature = "20 degC"
pressure = "101.325 kPa"
[cabin]
volume = "50 m^3"
bands_hz = {bands}
absorption_area = {['10 m^2'] * n}
[[condition]]
name = "cruise"
bands_hz = {bands}
levels_db = {[100] * n}
[[condition]]
name = "climb"
bands_hz = {bands}
levels_db = {[103] * n}
[[zone]]
name = "wall"
area = "10 m^2"
[targets]
{targets}
{package}
{trade}
{vary}
'''


SEPTUM = '''
[[package]]
name = "p"
installation_mass = "0.2 kg/m^2"
[package.zone.wall]
layer = [{ type = "septum", surface_density = "@SD@" }]
'''

DOUBLE = '''
[[package]]
name = "p"
[[package.zone.wall.layer]]
type = "plate"
thickness = "1 mm"
density = "2700 kg/m^3"
youngs_modulus = "70 GPa"
poisson_ratio = 0.33
loss_factor = 0.02
[[package.zone.wall.layer]]
type = "porous"
model = "miki"
thickness = "@T@"
flow_resistivity = "6000 Pa*s/m^2"
[[package.zone.wall.layer]]
type = "septum"
surface_density = "1.5 kg/m^2"
'''


def vary(**keys):
    lines = ["[[vary]]"]
    for k, v in {"package": "p", "zone": "wall", "layer": 1, **keys}.items():
        if v is not None:
            lines.append(f"{k} = {v!r}".replace("'", '"') if not isinstance(v, list)
                         else f"{k} = {v}".replace("'", '"'))
    return "\n".join(lines) + "\n"


def write(tmp_path, text, name="s.toml"):
    path = tmp_path / name
    path.write_text(text)
    return path


# ---- sweeps against single runs ---------------------------------------------------------

def test_grid_sweep_reproduces_single_runs_exactly(tmp_path):
    # source: the budget of the same stacks written out in study files (nb.run_study): a
    # variant is the package with one value changed, so every number must be identical
    # the skin is airframe structure: the treatment mass leaves it out
    double = DOUBLE.replace('type = "plate"', 'type = "plate"\nstructure = true')
    thick = ["30 mm", "60 mm"]
    v = vary(layer=2, key="thickness", values=thick) + vary(
        key="installation_mass", zone=None, layer=None, values=["0 kg/m^2", "0.5 kg/m^2"])
    path = write(tmp_path, study(double.replace("@T@", "45 mm"), v, incidence="field",
                                 bands=RATED))
    sweep = nb.run_sweep(path)
    assert len(sweep) == 4
    for row in sweep.itertuples(index=False):
        t_mm, inst = row[1] * 1e3, row[2]
        pkg = double.replace("@T@", f"{t_mm:g} mm").replace(
            'name = "p"', f'name = "p"\ninstallation_mass = "{inst:g} kg/m^2"')
        one = write(tmp_path, study(pkg, incidence="field", bands=RATED), "one.toml")
        single = nb.run_study(one)
        s = single.summary.set_index("condition")
        r = dict(zip(sweep.columns, row, strict=True))
        # and the budget at an explicit tolerance equal to the trade's: the same numbers
        plain = compute_budget(load_study(one).inputs, TRADE_RTOL).summary.set_index(
            "condition")
        for c in ("cruise", "climb"):
            for m in ("interior_dba", "sil4_db", "margin_dba", "margin_sil4_db"):
                assert r[f"{m}[{c}]"] == s.loc[c, m]
                assert r[f"{m}[{c}]"] == plain.loc[c, m]
        assert r["mass_kg"] == single.mass["mass_kg"].sum()
        assert r["treatment_mass_kg"] == single.mass["treatment_mass_kg"].sum()
        assert r["treatment_mass_kg"] < r["mass_kg"]
        assert r["treatment_kg_m2[wall]"] == single.mass["treatment_kg_m2"].iloc[0]
        rat = single.ratings.set_index("zone")
        for k in ("stc", "rw", "c", "ctr", "oitc"):
            assert r[f"{k}[wall]"] == rat.loc["wall", k]
            assert r[f"{k}[composite]"] == rat.loc["composite", k]
    assert list(sweep.columns[1:3]) == ["wall.layer2.thickness_m", "installation_mass_kg_m2"]


def test_sweep_spectra_are_the_budget_tables(tmp_path):
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "4 kg/m^2"),
                                 vary(key="surface_density", values=["2 kg/m^2"])))
    res = sweep_study(path)
    single = nb.run_study(write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2")), "o.toml"))
    np.testing.assert_array_equal(res.spectra.tl_db[0, 0], single.tl["tl_db"].to_numpy())
    cruise = single.bands[single.bands["condition"] == "cruise"]["interior_db"].to_numpy()
    np.testing.assert_array_equal(res.spectra.interior_db[0, 0], cruise)


def test_inherited_zone_from_a_stack_file(tmp_path):
    # the package varies a zone it takes over (based_on) from a package whose zone is a
    # stack file; the variant must equal that stack file written with the value
    layers = DOUBLE.split('name = "p"\n', 1)[1].replace("[[package.zone.wall.layer]]",
                                                          "[[layer]]")
    (tmp_path / "wall.toml").write_text(layers.replace("@T@", "45 mm"))
    pkg = ('[[package]]\nname = "p"\n[package.zone.wall]\nstack = "wall.toml"\n'
           '[[package]]\nname = "q"\nbased_on = "p"\n')
    v = vary(package="q", layer=2, key="thickness", values=["70 mm"])
    res = nb.run_sweep(write(tmp_path, study(pkg, v)))
    (tmp_path / "wall.toml").write_text((tmp_path / "wall.toml").read_text().replace(
        "45 mm", "70 mm"))
    single = nb.run_study(write(tmp_path, study(pkg), "one.toml")).summary
    s = single[single["package"] == "q"].set_index("condition")
    assert res.loc[0, "interior_dba[cruise]"] == s.loc["cruise", "interior_dba"]
    assert res.loc[0, "wall.layer2.thickness_m"] == 0.07


def test_installation_mass_of_the_zones_a_package_gives_itself(tmp_path):
    # q takes the roof over from p (based_on) and gives the wall itself: its installation
    # mass applies to the wall only, the roof keeps p's (as run_study counts it)
    pkg = ('[[package]]\nname = "p"\ninstallation_mass = "0.2 kg/m^2"\n'
           '[package.zone.wall]\nlayer = [{ type = "septum", surface_density = "2 kg/m^2" }]\n'
           '[package.zone.roof]\nlayer = [{ type = "septum", surface_density = "3 kg/m^2" }]\n'
           '[[package]]\nname = "q"\nbased_on = "p"\ninstallation_mass = "@I@"\n'
           '[package.zone.wall]\nlayer = [{ type = "septum", surface_density = "4 kg/m^2" }]\n')
    text = study(pkg).replace('[[zone]]\nname = "wall"\narea = "10 m^2"\n',
                              '[[zone]]\nname = "wall"\narea = "10 m^2"\n'
                              '[[zone]]\nname = "roof"\narea = "5 m^2"\n')
    v = vary(package="q", key="installation_mass", zone=None, layer=None,
             values=["0.1 kg/m^2", "0.9 kg/m^2"])
    sweep = nb.run_sweep(write(tmp_path, text.replace("@I@", "0.4 kg/m^2") + v))
    for row, inst in zip(sweep.itertuples(index=False), (0.1, 0.9), strict=True):
        single = nb.run_study(write(tmp_path, text.replace("@I@", f"{inst} kg/m^2"),
                                    "one.toml")).mass
        q = single[single["package"] == "q"]
        assert row.treatment_mass_kg == q["treatment_mass_kg"].sum()
        # wall 10 m^2 x (4 + inst), roof 5 m^2 x (3 + 0.2): by hand
        assert row.treatment_mass_kg == pytest.approx(10 * (4 + inst) + 5 * 3.2)


# ---- Monte Carlo against the mass law -----------------------------------------------------

def _band_tl(m, band):
    """Band-averaged normal-incidence mass law in closed form: <tau> = [atan(beta fu) -
    atan(beta fl)] / (beta (fu - fl)), beta = pi m / (rho c) (Vigran, Building
    Acoustics 2008, eq. 6.109 at theta = 0, integrated over the band)."""
    beta = np.pi * np.asarray(m, dtype=float) / Air().impedance
    tau = (np.arctan(beta * band.upper[0]) - np.arctan(beta * band.lower[0])) / (
        beta * (band.upper[0] - band.lower[0]))
    return -10 * np.log10(tau)


def test_monte_carlo_mass_law_tl_distribution(tmp_path):
    # m ~ normal(10, 0.3) kg/m^2. TL is monotone in m, so its exact distribution is the
    # transform of the normal: F(TL) = Phi((m(TL) - 10) / 0.3). For small spread
    # TL ~ 20 lg(omega m / 2 rho c) + const is normal with std 20 lg(e) sigma / m.
    n, m0, sd = 300, 10.0, 0.3
    trade = f'[trade]\nmode = "monte-carlo"\nsamples = {n}\nseed = 11\n'
    v = vary(key="surface_density", distribution="normal", mean="10 kg/m^2",
             std="0.3 kg/m^2")
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "10 kg/m^2"), v, trade))
    res = sweep_study(path)
    band = third_octave_bands(1000, 1000)
    k = list(res.band_hz).index(1000.0)
    tl = res.spectra.tl_db[:, 0, k]
    # the engine's band TL is the closed form to the quadrature's tolerance
    m = res.variants["wall.layer1.surface_density_kg_m2"].to_numpy()
    np.testing.assert_allclose(tl, _band_tl(m, band), atol=0.02)

    def cdf(t):
        inv = np.array([brentq(lambda x, tt=tt: _band_tl(x, band) - tt, 1.0, 40.0)
                        for tt in np.atleast_1d(t)])
        return stats.norm.cdf((inv - m0) / sd)

    assert stats.kstest(tl, cdf).pvalue > 0.01   # Kolmogorov-Smirnov, exact transform
    # small-spread (delta-method) std, within 3 standard errors of a sample std
    # (relative SE 1 / sqrt(2 (n - 1)))
    expected = 20 * np.log10(np.e) * sd / m0
    assert abs(tl.std(ddof=1) / expected - 1) < 3 / np.sqrt(2 * (n - 1))
    # P5 / P50 / P95 against the transform of the normal's quantiles, within 3 standard
    # errors of a sample quantile, sqrt(p (1 - p) / n) / f(x_p)
    for p in (0.05, 0.5, 0.95):
        x_p = _band_tl(m0 + stats.norm.ppf(p) * sd, band)
        se = np.sqrt(p * (1 - p) / n) / stats.norm.pdf(stats.norm.ppf(p)) * expected
        assert abs(np.percentile(tl, 100 * p) - x_p) < 3 * se


def test_monte_carlo_probability_and_statistics(tmp_path):
    trade = '[trade]\nmode = "monte-carlo"\nsamples = 40\nseed = 2\n'
    v = vary(key="surface_density", distribution="uniform", low="2 kg/m^2",
             high="8 kg/m^2")
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "4 kg/m^2"), v, trade))
    res = sweep_study(path)
    met = (res.variants["margin_dba[climb]"] >= 0).sum()
    row = res.probabilities.set_index(["target", "condition"]).loc[("dba", "climb")]
    assert row["meeting"] == met and row["probability"] == met / 40
    assert (row["ci_low"], row["ci_high"]) == wilson_interval(met, 40)
    st = res.statistics.set_index("metric").loc["max_interior_dba"]
    assert st["p50"] == np.percentile(res.variants["max_interior_dba"], 50)
    # the same seed draws the same variants
    again = sweep_study(path)
    pd.testing.assert_frame_equal(res.variants, again.variants, check_exact=True)


def test_wilson_interval_against_closed_form():
    # Wilson (1927): (p + z^2/2n +- z sqrt(p(1-p)/n + z^2/4n^2)) / (1 + z^2/n);
    # 81 of 263 gives 0.2553 to 0.3662 (Newcombe, Stat. Med. 17 (1998) 857, from memory)
    k, n, z = 81, 263, stats.norm.ppf(0.975)
    p = k / n
    half = z * np.sqrt(p * (1 - p) / n + z**2 / (4 * n**2))
    lo, hi = ((p + z**2 / (2 * n)) + np.array([-half, half])) / (1 + z**2 / n)
    assert wilson_interval(k, n) == pytest.approx((lo, hi), abs=1e-9)
    assert wilson_interval(k, n) == pytest.approx((0.2553, 0.3662), abs=1e-4)


# ---- optimum --------------------------------------------------------------------------------

def test_optimum_is_the_lightest_septum_meeting_the_target(tmp_path):
    # closed form: a single 1 kHz band, normal incidence, so
    # dBA = L + A(1 kHz) - TL_band(m) + 10 lg(S / A) with the band-averaged mass law;
    # the lightest septum meeting 70 dBA solves dBA(m) = 70 (brentq)
    v = vary(key="surface_density", range=["0.5 kg/m^2", "20 kg/m^2"], steps=2)
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2").replace(
        'installation_mass = "0.2 kg/m^2"', ""), v, bands=[1000], targets="dba = 70"))
    band = third_octave_bands(1000, 1000)
    aw = a_weighting(band.centre)[0]

    def dba(m, level):
        return level + aw - _band_tl(m, band) + 10 * np.log10(10 / 10)

    m_star = brentq(lambda m: dba(m, 103.0) - 70.0, 0.5, 20.0)  # climb is louder
    res = nb.trade.run_optimization(path, population=8)
    opt = res.optimum.iloc[0]
    assert res.feasible
    assert opt["wall.layer1.surface_density_kg_m2"] == pytest.approx(m_star, rel=2e-3)
    assert opt["treatment_mass_kg"] == pytest.approx(10 * m_star, rel=2e-3)
    slack = res.slack.set_index("condition").loc["climb", "slack"]
    assert 0 <= slack < 0.05
    assert res.evaluations_used == len(res.evaluations) > 0
    # seeded: the same run finds the same point
    again = nb.trade.run_optimization(path, population=8)
    assert again.optimum.equals(res.optimum)


def test_lowest_dba_within_a_mass_budget(tmp_path):
    v = vary(key="surface_density", range=["0.5 kg/m^2", "20 kg/m^2"], steps=2)
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2").replace(
        'installation_mass = "0.2 kg/m^2"', ""), v, bands=[1000], targets="dba = 70"))
    res = nb.trade.run_optimization(path, mass_budget_kg=50.0, population=8)
    # the mass law only gains with mass, so the optimum spends the budget: m = 5 kg/m^2
    assert res.optimum.iloc[0]["treatment_mass_kg"] == pytest.approx(50.0, rel=2e-3)
    assert res.slack.iloc[0]["slack"] >= 0


# ---- non-dominated set ----------------------------------------------------------------------

def test_non_dominated_set_of_a_constructed_case():
    # by hand: (1, 9) (2, 7) (2, 8) (3, 7) (4, 4) (4, 4) (5, 6) (6, 3); (2, 8) loses to
    # (2, 7), (3, 7) to (2, 7), (5, 6) to (4, 4); the equal pair (4, 4) stays
    mass = [5, 1, 2, 2, 3, 4, 4, 6]
    dba = [6, 9, 8, 7, 7, 4, 4, 3]
    assert list(non_dominated(mass, dba)) == [1, 3, 5, 6, 7]
    # against the definition (Pareto dominance), on random points with ties
    rng = np.random.default_rng(5)
    m, d = rng.integers(0, 15, 300), rng.integers(0, 15, 300)
    brute = [i for i in range(300) if not np.any((m <= m[i]) & (d <= d[i])
                                                 & ((m < m[i]) | (d < d[i])))]
    assert sorted(non_dominated(m, d)) == brute


def test_sweep_front_drops_dead_mass(tmp_path):
    # installation mass adds weight and no TL: only variants at the lowest installation
    # mass can be non-dominated, and there every septum is (heavier is quieter)
    v = (vary(key="surface_density", values=["1 kg/m^2", "2 kg/m^2", "4 kg/m^2"])
         + vary(key="installation_mass", zone=None, layer=None,
                values=["0.5 kg/m^2", "0 kg/m^2"]))
    res = sweep_study(write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2"), v)))
    assert list(res.front["installation_mass_kg_m2"]) == [0.0, 0.0, 0.0]
    assert list(res.front["wall.layer1.surface_density_kg_m2"]) == [1.0, 2.0, 4.0]


# ---- workers, Dask, checkpoints ---------------------------------------------------------------

def _frames_equal(a, b):
    pd.testing.assert_frame_equal(a.variants, b.variants, check_exact=True)
    for k in ("metrics", "interior_db", "tl_db"):
        np.testing.assert_array_equal(getattr(a.spectra, k), getattr(b.spectra, k))


@pytest.fixture
def mc_study(tmp_path):
    trade = '[trade]\nmode = "monte-carlo"\nsamples = 70\nseed = 4\n'
    v = (vary(layer=2, key="thickness", distribution="triangular", low="30 mm",
              mode="45 mm", high="60 mm")
         + vary(layer=3, key="surface_density", distribution="normal", mean="1.5 kg/m^2",
                std="0.1 kg/m^2"))
    return write(tmp_path, study(DOUBLE.replace("@T@", "45 mm"), v, trade))


def test_local_processes_and_dask_agree_bit_for_bit(mc_study):
    one = sweep_study(mc_study, workers=1)
    _frames_equal(one, sweep_study(mc_study, workers=2))
    dask = sweep_study(mc_study, workers=2, cluster="local",
                       cluster_options={"processes": False})
    _frames_equal(one, dask)


class _StopAfter:
    """A progress display that interrupts the run after some chunks, as Ctrl-C would."""

    def __init__(self, chunks):
        self.left, self.seen = chunks, 0

    def __call__(self, total, initial):
        self.initial = initial
        return self

    def update(self, n):
        self.seen += n
        self.left -= 1
        if self.left == 0:
            raise KeyboardInterrupt

    def close(self):
        pass


def test_interrupted_sweep_resumes_from_its_checkpoint(mc_study, tmp_path):
    full = sweep_study(mc_study)
    ck = tmp_path / "ck.npz"
    stop = _StopAfter(3)
    with pytest.raises(KeyboardInterrupt):
        sweep_study(mc_study, checkpoint=ck, progress=stop)
    assert ck.exists()
    count = _StopAfter(-1)
    resumed = sweep_study(mc_study, checkpoint=ck, resume=True, progress=count)
    assert count.initial == stop.seen and count.seen == 70 - stop.seen
    _frames_equal(full, resumed)
    # a checkpoint of another study (changed file) is refused
    mc_study.write_text(mc_study.read_text().replace("seed = 4", "seed = 5"))
    with pytest.raises(nb.InputError, match="another study"):
        sweep_study(mc_study, checkpoint=ck, resume=True)


# ---- command line -------------------------------------------------------------------------

def test_sweep_and_optimize_commands_write_their_outputs(tmp_path, capsys):
    v = vary(key="surface_density", range=["1 kg/m^2", "6 kg/m^2"], steps=4)
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2"), v))
    out = tmp_path / "out"
    assert main(["sweep", str(path), "-o", str(out), "--workers", "1", "--quiet"]) == 0
    names = {p.name for p in out.iterdir()}
    assert {"s-sweep-variants.csv", "s-sweep-front.csv", "s-sweep-statistics.csv",
            "s-sweep-sensitivities.csv", "s-sweep.pdf", "s-sweep.xlsx"} <= names
    assert "s-sweep.checkpoint.npz" not in names
    table = pd.read_csv(out / "s-sweep-variants.csv")
    assert len(table) == 4
    capsys.readouterr()
    assert main(["sweep", str(path), "-o", str(out), "--workers", "1"]) == 2
    assert "s-sweep-variants.csv: exists (and 5 more); use --force" in capsys.readouterr().err
    assert main(["sweep", str(path), "-o", str(out), "--resume"]) == 2
    assert main(["optimize", str(path), "-o", str(out), "--workers", "1", "--quiet",
                 "--generations", "3", "--population", "5"]) == 0
    assert {"s-optimize-optimum.csv", "s-optimize-slack.csv", "s-optimize.pdf",
            "s-optimize.xlsx"} <= {p.name for p in out.iterdir()}
    from pypdf import PdfReader

    text = "".join(p.extract_text() for p in PdfReader(out / "s-sweep.pdf").pages)
    assert "non-dominated" in text and "Spearman" in text


def test_sweep_without_vary_entries_is_refused(tmp_path, capsys):
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2")))
    assert main(["check", str(path)]) == 0
    assert main(["sweep", str(path), "-o", str(tmp_path / "o")]) == 2
    assert "vary: no [[vary]] entries" in capsys.readouterr().err


# ---- keys and bad input ---------------------------------------------------------------------

TILE = '''
[[package]]
name = "p"
[[package.zone.wall.layer]]
type = "septum"
surface_density = "1 kg/m^2"
[[package.zone.wall.layer]]
type = "air"
thickness = "20 mm"
[[package.zone.wall.layer]]
type = "tile"
frame = "clamped"
pitch = "22 mm"
[[package.zone.wall.layer.cell]]
radius = "10 mm"
membrane_thickness = "0.25 mm"
membrane_density = "1000 kg/m^3"
@TENSION@
mass = "0.4 g"
mass_radius = "2 mm"
'''


def test_units_cells_and_prestress(tmp_path):
    tile = TILE.replace("@TENSION@", 'prestress = "320 kPa"')
    v = (vary(layer=3, cell=1, key="membrane_thickness", values=["0.2 mm", "0.3 mm"])
         + vary(layer=3, cell=1, key="mass", values=["300 mg"]))
    loaded = nb.load_study(write(tmp_path, study(tile, v)))
    p = loaded.trade.parameters
    assert p[0].values == pytest.approx((2e-4, 3e-4)) and p[1].values == pytest.approx((3e-4,))
    from noisebudget.trade.variants import apply_variant, design

    pkg = loaded.inputs.packages[0]
    x = design(loaded.trade)
    variant = apply_variant(pkg, p, x[1])
    cell = variant.stacks["wall"].layers[2].cells[0]
    # a cell given by prestress keeps it: tension = 320 kPa x 0.3 mm = 96 N/m
    assert cell.tension == pytest.approx(96.0) and cell.mass == pytest.approx(3e-4)
    assert pkg.stacks["wall"].layers[2].cells[0].tension == pytest.approx(80.0)  # unchanged
    assert variant.stacks["wall"].layers[:2] == pkg.stacks["wall"].layers[:2]


def test_a_varied_key_replaces_its_alternatives(tmp_path, capsys):
    # a cell gives tension or prestress (T = sigma h): varying one replaces the other
    from noisebudget.trade.variants import apply_variant, design

    tile = TILE.replace("@TENSION@", 'tension = "80 N/m"')
    v = vary(layer=3, cell=1, key="prestress", values=["200 kPa", "400 kPa"])
    loaded = nb.load_study(write(tmp_path, study(tile, v)))
    pkg, spec = loaded.inputs.packages[0], loaded.trade
    cells = [apply_variant(pkg, spec.parameters, x).stacks["wall"].layers[2].cells[0]
             for x in design(spec)]
    assert [c.tension for c in cells] == pytest.approx([50.0, 100.0])  # sigma x 0.25 mm
    # the sweep's reference is the tension as written, as a prestress: 80 N/m / 0.25 mm
    from noisebudget.trade.variants import as_written

    assert as_written(spec.parameters, pkg) == pytest.approx([320e3])
    # both at once cannot be: one would be ignored
    both = v + vary(layer=3, cell=1, key="tension", values=["60 N/m"])
    assert main(["check", str(write(tmp_path, study(tile, both)))]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].endswith(
        "vary[2]: varies tension, which replaces vary[1]'s prestress: vary one of them")


def test_physical_bounds_are_the_ranges_the_schemas_declare():
    # the layers' declared ranges (layers/*.py schema) within units.LIMITS
    from noisebudget.layers import AirGap, Plate, Porous
    from noisebudget.layers.resonators import CELL_SCHEMA
    from noisebudget.trade.variants import physical_bounds, within
    from noisebudget.tradefile import varied_field

    def b(spec):
        return physical_bounds(varied_field(spec))

    assert b(Porous.schema["porosity"]) == (0.0, False, 1.0, True)
    assert b(Porous.schema["tortuosity"]) == (1.0, True, 20.0, True)
    assert b(Plate.schema["poisson_ratio"]) == (0.0, True, 0.5, False)
    assert b(CELL_SCHEMA["share"]) == (0.0, False, 1.0, True)
    assert b(Plate.schema["thickness"]) == (1e-7, True, 1e5, True)  # LIMITS["length"]
    assert b(AirGap.schema["thickness"]) == (0.0, True, 1e5, True)  # a gap may be 0
    assert not within(0.5, b(Plate.schema["poisson_ratio"]))
    assert within(1.0, b(Porous.schema["porosity"])) and not within(0.0, b(
        Porous.schema["porosity"]))


BAD = [
    (vary(package="q", key="surface_density", values=["1 kg/m^2"]), "vary[1].package",
     "no package"),
    (vary(zone="roof", key="surface_density", values=["1 kg/m^2"]), "vary[1].zone", "no zone"),
    (vary(layer=4, key="surface_density", values=["1 kg/m^2"]), "vary[1].layer", "no layer 4"),
    (vary(key="thickness_mm", values=["1 mm"]), "vary[1].key", "has no key"),
    (vary(cell=1, key="tension", values=["1 N/m"]), "vary[1].cell", "only a tile has"),
    (vary(key="surface_density", values=["-1 kg/m^2"]), "vary[1].values[1]",
     "must be > 0 kg/m^2"),
    (vary(key="surface_density", values=[]), "vary[1].values", "empty list"),
    (vary(key="surface_density", range=["1 kg/m^2", "2 kg/m^2"], steps=0), "vary[1].steps",
     "must lie in [2, 100000], got 0"),
    (vary(key="surface_density", values=["1 kg/m^2"]) + vary(
        key="installation_mass", zone=None, layer=None,
        range=["0 kg/m^2", "1 kg/m^2"], steps=100_001), "vary[2].steps",
     "must lie in [2, 100000]"),
    (vary(key="surface_density", range=["1 kg/m^2", "2 kg/m^2"], steps=400)
     + vary(key="installation_mass", zone=None, layer=None,
            range=["0 kg/m^2", "1 kg/m^2"], steps=400), "vary", "more than the maximum"),
    (vary(key="surface_density", distribution="normal", mean="1 kg/m^2", std="0.5 kg/m^2"),
     "vary[1].distribution", "needs [trade] mode"),
    ('[trade]\nmode = "monte-carlo"\n' + vary(key="surface_density", distribution="normal",
                                                mean="1 kg/m^2", std="0.5 kg/m^2"),
     "vary[1].low", "reaches values the key does not allow (it must be > 0 kg/m^2"),
    ('[trade]\nmode = "monte-carlo"\nsamples = 0\n' + vary(
        key="surface_density", distribution="uniform", low="1 kg/m^2", high="2 kg/m^2"),
     "trade.samples", "must lie in [1, 100000], got 0"),
    ('[trade]\nmode = "monte-carlo"\nsamples = 1000000\n' + vary(
        key="surface_density", distribution="uniform", low="1 kg/m^2", high="2 kg/m^2"),
     "trade.samples", "must lie in [1, 100000], got 1000000"),
    (vary(key="surface_density", values=["1 kg/m^2"], distribution="uniform"),
     "vary[1].distribution", "give values or distribution, not both"),
    (vary(key="surface_density", values=["1 kg"]), "vary[1].values[1]", "not a surface"),
]


@pytest.mark.parametrize("entry, key, reason", BAD)
def test_bad_vary_entries_one_line_exit_2(tmp_path, capsys, entry, key, reason):
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2"), entry))
    for argv in (["check", str(path)], ["sweep", str(path), "-o", str(tmp_path / "o")],
                 ["optimize", str(path), "-o", str(tmp_path / "o")]):
        assert main(argv) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1, err
        assert err[0].startswith(f"{path}: {key}: ") and reason in err[0], err[0]
    assert not (tmp_path / "o").exists()


def test_a_key_that_does_not_change_the_layer_is_refused(tmp_path, capsys):
    # this plate is given by its surface density and bending stiffness: its Poisson's
    # ratio (which only the material form uses) would be ignored
    direct = DOUBLE.replace('thickness = "1 mm"\ndensity = "2700 kg/m^3"\n'
                            'youngs_modulus = "70 GPa"\npoisson_ratio = 0.33',
                            'surface_density = "2.7 kg/m^2"\nbending_stiffness = "6.5 N*m"')
    v = vary(key="poisson_ratio", values=[0.2, 0.4])
    path = write(tmp_path, study(direct.replace("@T@", "45 mm"), v))
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "vary[1].key: varying 'poisson_ratio' does not change this " \
        "layer" in err[0]
    # a plate given by its material refuses a surface density: the two sets exclude
    # each other (the layer's own rule, reported at the value that breaks it)
    v = vary(key="surface_density", values=["2 kg/m^2", "3 kg/m^2"])
    path = write(tmp_path, study(DOUBLE.replace("@T@", "45 mm"), v))
    assert main(["check", str(path)]) == 2
    assert "vary[1]: at 2 kg/m^2: surface_density: give density and youngs_modulus, or " \
        "surface_density and bending_stiffness, not both" in capsys.readouterr().err


def test_clashing_values_of_one_layer_are_refused_by_check(tmp_path, capsys):
    tile = TILE.replace("@TENSION@", 'tension = "80 N/m"')
    v = (vary(layer=3, cell=1, key="radius", values=["5 mm", "10 mm"])
         + vary(layer=3, cell=1, key="mass_radius", values=["2 mm", "6 mm"]))
    path = write(tmp_path, study(tile, v))
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert "vary: a variant" in err and "mass_radius" in err


# ---- output sets: checked before computing, moved into place whole, checkpoint kept ----

SWEEP_DRIVER = r'''
import signal
import sys
# SIGINT as from a terminal, even where the test runner was started with it ignored
signal.signal(signal.SIGINT, signal.default_int_handler)
import noisebudget.cli as cli
import noisebudget.trade.sweep as sweep

class Hold:                    # after two chunks the sweep waits for a signal
    def __init__(self, total, initial):
        self.seen = 0
    def update(self, n):
        self.seen += 1
        if self.seen == 2:
            print("MARK computing", flush=True)
            sys.stdin.read()
            raise SystemExit("not interrupted")
    def close(self):
        pass

sweep._counter = lambda what: Hold
sys.exit(cli.main(sys.argv[1:]))
'''


@pytest.mark.parametrize("sig, code", [(signal.SIGINT, 130), (signal.SIGTERM, 143)])
def test_interrupted_sweep_keeps_its_checkpoint_beside_the_outputs(mc_study, tmp_path, sig,
                                                                   code):
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-c", SWEEP_DRIVER, "sweep", str(mc_study), "-o",
                             str(out), "--workers", "1"], stdin=subprocess.PIPE,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env={**os.environ, "MPLBACKEND": "Agg"})
    for line in proc.stdout:
        if line.startswith("MARK computing"):
            break
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == code, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    ck = out / "s-sweep.checkpoint.npz"
    from noisebudget.trade.execute import chunk_size
    kept = 2 * chunk_size(70)  # two finished chunks of the 70 variants
    assert lines[0] == (f"noisebudget: sweep interrupted ({sig.name}); {kept} finished "
                        f"variants kept in {ck}: continue with --resume")
    assert sorted(p.name for p in out.iterdir()) == [ck.name]  # no output, no staging
    # a new sweep does not silently discard it; --resume finishes it
    assert main(["sweep", str(mc_study), "-o", str(out), "-q"]) == 2
    assert main(["sweep", str(mc_study), "-o", str(out), "--resume", "--workers", "1",
                 "-q", "--only", "csv"]) == 0
    assert not ck.exists()
    fresh = sweep_study(mc_study)
    resumed = pd.read_csv(out / "s-sweep-variants.csv")
    np.testing.assert_allclose(resumed["max_interior_dba"], fresh.variants["max_interior_dba"],
                               rtol=1e-6)  # the CSV holds six significant figures


def test_sweep_outputs_refused_before_computing(tmp_path, monkeypatch, capsys):
    v = vary(key="surface_density", values=["1 kg/m^2", "3 kg/m^2"])
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2"), v))
    out = tmp_path / "out"
    out.mkdir()
    (out / "s-sweep.xlsx").write_text("an earlier workbook")

    def must_not_run(*args, **kwargs):
        raise AssertionError("computed although the outputs exist")

    monkeypatch.setattr("noisebudget.trade.sweep.sweep_study", must_not_run)
    monkeypatch.setattr("noisebudget.trade.optimize.run_optimization", must_not_run)
    for cmd in ("sweep", "optimize"):
        name = f"s-{cmd}.xlsx"
        (out / name).write_text("an earlier workbook")
        assert main([cmd, str(path), "-o", str(out)]) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert err == [f"{out / name}: exists; use --force to replace the outputs"]
        assert (out / name).read_text() == "an earlier workbook"


def test_force_replaces_the_whole_set_and_only_selects_outputs(tmp_path):
    v = vary(key="surface_density", values=["1 kg/m^2", "3 kg/m^2"])
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2"), v))
    out = tmp_path / "out"
    assert main(["sweep", str(path), "-o", str(out), "--workers", "1", "-q"]) == 0
    full = {p.name for p in out.iterdir()}
    assert full == {f"s-sweep-{t}.csv" for t in ("variants", "statistics", "front",
                                                 "sensitivities")} | {"s-sweep.pdf",
                                                                      "s-sweep.xlsx"}
    assert main(["sweep", str(path), "-o", str(out), "--workers", "1", "-q", "--force",
                 "--only", "xlsx"]) == 0
    assert {p.name for p in out.iterdir()} == {"s-sweep.xlsx"}  # never two runs mixed


def test_command_line_option_mistakes_are_one_line(tmp_path, capsys):
    v = vary(key="surface_density", values=["1 kg/m^2"])
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2"), v))
    out = str(tmp_path / "o")
    for argv, words in ((["sweep", str(path), "-o", out, "--workers", "0"],
                         "argument --workers: 0: must be at least 1"),
                        (["optimize", str(path), "-o", out, "--mass-budget", "-5"],
                         "argument --mass-budget: '-5': a mass must be > 0"),
                        (["optimize", str(path), "-o", out, "--mass-budget", "5 m"],
                         "is not a mass (expected units of kg"),
                        (["optimize", str(path), "-o", out, "--generations", "x"],
                         "argument --generations: 'x' is not a whole number")):
        assert main(argv) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and words in err[0], err
    assert not (tmp_path / "o").exists()


def test_mass_budget_takes_a_unit(tmp_path, monkeypatch):
    v = vary(key="surface_density", range=["0.5 kg/m^2", "20 kg/m^2"], steps=2)
    path = write(tmp_path, study(SEPTUM.replace("@SD@", "2 kg/m^2"), v))
    seen = {}

    def fake(path, **options):
        seen.update(options)
        raise KeyboardInterrupt

    monkeypatch.setattr("noisebudget.trade.optimize.run_optimization", fake)
    assert main(["optimize", str(path), "-o", str(tmp_path / "o"), "--mass-budget",
                 "0.5 t"]) == 130
    assert seen["mass_budget_kg"] == pytest.approx(500.0)


# ---- the trade reports follow the report model ---------------------------------------------

def test_trade_workbook_and_pdf_follow_the_report_conventions(mc_study, tmp_path):
    import openpyxl
    from pypdf import PdfReader

    from noisebudget.report import CAUTIONS
    from noisebudget.report.model import input_hash

    out = tmp_path / "out"
    assert main(["sweep", str(mc_study), "-o", str(out), "--workers", "1", "-q"]) == 0
    res = sweep_study(mc_study)
    digest = input_hash(res.files)
    wb = openpyxl.load_workbook(out / "s-sweep.xlsx")
    assert wb.sheetnames == ["Parameters", "Statistics", "Probabilities", "Non-dominated",
                             "Variants", "Sensitivities", "Sources", "Cautions"]
    for ws in wb:  # the title block with the input hash on every sheet
        assert ws["A1"].value == "trade check: trade sweep"
        assert digest in ws["A3"].value
        assert "varied package: p" in ws["A2"].value
    head = [c.value for c in wb["Variants"][5]]
    # units from the column names, varied lengths in mm like the layer tables
    assert head[:3] == ["variant", "wall layer 2: thickness (mm)",
                        "wall layer 3: surface density (kg/m²)"]
    assert "treatment mass per aircraft (kg)" in head
    assert "interior level, loudest condition (dBA)" in head
    assert "Rw, composite (dB)" in head and "interior level, cruise (dBA)" in head
    first = wb["Variants"][6]
    assert first[1].value == pytest.approx(res.variants.iloc[0, 1] * 1e3)
    assert first[1].number_format == "0.0"
    assert [r[0].value for r in wb["Cautions"].iter_rows(min_row=6)][:len(CAUTIONS)] == \
        list(CAUTIONS)
    text = " ".join(p.extract_text() for p in PdfReader(out / "s-sweep.pdf").pages)
    text = " ".join(text.split())
    assert digest in text and "package as written" in text
    assert text.count("Caution.") == 1 and CAUTIONS[0][:60] in text


def test_library_arguments_are_checked(mc_study):
    from noisebudget.checks import ArgumentError

    with pytest.raises(ArgumentError, match=r"^workers = 0: need at least 1"):
        sweep_study(mc_study, workers=0)
    with pytest.raises(ArgumentError, match=r"^resume=True needs checkpoint="):
        sweep_study(mc_study, resume=True)
    with pytest.raises(ArgumentError, match=r"^cluster = 'udp://x': expected tcp://"):
        sweep_study(mc_study, cluster="udp://x")
    with pytest.raises(ArgumentError, match=r"^generations = 0: must be a whole number"):
        nb.run_optimization(mc_study, generations=0)
    with pytest.raises(ArgumentError, match=r"^mass_budget_kg = -1 kg: must be > 0"):
        nb.run_optimization(mc_study, mass_budget_kg=-1.0)

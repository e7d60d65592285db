"""Properties of the file boundary (hypothesis): every generated stack or study file either
loads or raises the project's InputError, never anything else, and what loads also runs.

Files are generated two ways: random TOML values of random types at random keys, and
mutations of the valid files of the malformed-input corpus (a value replaced by one of
another type or a plausible one, a key dropped or added, an entry repeated). Each file is
written as TOML text and read back through the public loaders.
"""

import atexit
import copy
import datetime
import shutil
import tempfile
import tomllib
import warnings
from pathlib import Path

import numpy as np
import tomli_w
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_malformed import END, INSTALLATION, MC, NORMAL, PART, STACK, STUDY, VARY, WINDOW

import noisebudget as nb
from noisebudget.budget import compute_budget
from noisebudget.errors import InputError, InputNote, ModelRangeWarning

FOLDER = Path(tempfile.mkdtemp(prefix="nb-properties-"))
atexit.register(shutil.rmtree, FOLDER, True)
(FOLDER / "part.toml").write_text(PART)

KEYS = ["layer", "type", "use", "stack", "thickness", "name", "cell", "tension", "source_air",
        "temperature", "pressure", "model", "study", "cabin", "condition", "zone",
        "package", "bands_hz", "levels_db", "area", "volume", "tone", "frequency",
        "level_db", "based_on", "baseline", "theta_max_deg", "installation_mass",
        "reverberation_time", "targets", "dba", "air", "exterior", "altitude", "porosity",
        "loss_factor", "share", "frame", "pitch", "radius", "mass", "mass_radius",
        "exterior_offset_db", "offset_bands_hz", "flanking_tl_db", "flanking_bands_hz", "leak",
        "shape", "width", "length", "diameter", "depth", "count", "behind_layer",
        "interior_source", "conditions", "bandwidth", "structure", "bonding", "vary",
        "trade", "key", "values", "range", "steps", "distribution", "mean", "std", "low",
        "high", "mode", "samples", "seed", "junk"]
PLAUSIBLE = ["25 mm", "0 mm", "-1 mm", "1 kg/m^2", "2780 kg/m^3", "73 GPa", "20 degC",
             "80 N/m", "20 m^2", "0.5 s", "102 Hz", "1 g", "20000 Pa*s/m^2", "nan mm",
             "1e400 m", "plate", "air", "septum", "porous", "tile", "jca", "delany-bazley",
             "field", "diffuse", "floating", "clamped", "skin.al2024-t3-1.6mm",
             "tile.bpf-105-floating", "part.toml", "wall", "window", "bare", "cruise", "",
             "$x^2$", "a\x07b", [100, 125, 160, 200, 250], [100, 101, 102, 101, 100],
             ["0.5 s"] * 5, 0, 1, 0.3, 0.98, 78, 90, 91, -5, 1e6, True, False,
             "slit", "hole", "octave", "third", "1 mm", "3000 m", 2, [63, 125, 1000],
             [125], [1000, 100], ["cruise"], ["taxi"], "installation_mass",
             "poisson_ratio", "normal", "uniform", "triangular", "grid", "monte-carlo",
             ["30 mm", "70 mm"], ["1 kg/m^2"], [0.2, 0.4]]

scalars = st.one_of(
    st.booleans(), st.integers(-10**6, 10**6), st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=10), st.sampled_from([p for p in PLAUSIBLE if not isinstance(p, list)]),
    st.dates(min_value=datetime.date(1900, 1, 1), max_value=datetime.date(2100, 1, 1)))
values = st.recursive(scalars, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(st.sampled_from(KEYS), inner, max_size=4)),
    max_leaves=10)
replacement = st.one_of(values, st.sampled_from(PLAUSIBLE))


def _paths(obj, here=()):
    """Every place in a parsed TOML document: key paths of table values and list items."""
    items = obj.items() if isinstance(obj, dict) else enumerate(obj) \
        if isinstance(obj, list) else ()
    for k, v in items:
        yield (*here, k)
        yield from _paths(v, (*here, k))


def _at(doc, path):
    for k in path:
        doc = doc[k]
    return doc


@st.composite
def mutated(draw, base: str, within=()):
    """``base`` with one to three mutations (at paths under the sections ``within``, when
    given, and their own keys)."""
    doc = copy.deepcopy(tomllib.loads(base))
    for _ in range(draw(st.integers(1, 3))):
        paths = [p for p in _paths(doc) if not within or p[0] in within] or list(_paths(doc))
        path = draw(st.sampled_from(paths))
        parent, last = _at(doc, path[:-1]), path[-1]
        how = draw(st.sampled_from(["replace", "replace", "drop", "add", "repeat"]))
        if how == "replace":
            parent[last] = copy.deepcopy(draw(replacement))
        elif how == "drop":
            del parent[last]
        elif how == "add" and isinstance(parent, dict):
            parent[draw(st.sampled_from(KEYS))] = copy.deepcopy(draw(replacement))
        elif how == "repeat" and isinstance(parent, list):
            parent.append(copy.deepcopy(parent[last]))
    return doc


def _write(doc, name):
    path = FOLDER / name
    try:
        text = tomli_w.dumps(doc)
    except (TypeError, ValueError):  # a shape TOML cannot hold (e.g. an empty key path)
        text = "broken = [\n"
    path.write_text(text, encoding="utf-8")
    return path


def _stack_runs(path):
    try:
        stack = nb.load_stack(path)
    except InputError:
        return
    tl = stack.transmission_loss(np.array([63.0, 500.0, 4000.0]), "field")
    assert tl.shape == (3,)


def _study_runs(path):
    try:
        loaded = nb.load_study(path)
    except InputError:
        return
    result = compute_budget(loaded.inputs)
    assert len(result.summary) == len(loaded.inputs.packages) * len(loaded.inputs.conditions)


def _trade_runs(path):
    """A trade study that loads builds every variant it is asked for, and the first ones
    evaluate to finite masses and levels."""
    from noisebudget.trade.evaluate import build_model, evaluate
    from noisebudget.trade.variants import design

    try:
        loaded = nb.load_study(path)
    except InputError:
        return
    spec = loaded.trade
    if not spec.parameters:
        return
    assert spec.count <= 100_000
    ev = evaluate(build_model(loaded), design(spec)[:2])
    names = list(build_model(loaded).names)
    for m in ("treatment_mass_kg", "max_interior_dba"):
        assert np.all(np.isfinite(ev.metrics[:, names.index(m)]))


def _quiet(fn, path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        warnings.simplefilter("ignore", InputNote)
        fn(path)


FAST = settings(max_examples=60, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


def test_the_base_files_load_and_run():
    _quiet(_stack_runs, _write(tomllib.loads(STACK), "base-stack.toml"))
    _quiet(_study_runs, _write(tomllib.loads(STUDY), "base-study.toml"))
    assert nb.load_stack(FOLDER / "base-stack.toml").areal_mass > 0


@FAST
@given(mutated(STACK))
def test_mutated_stack_files_load_or_say_why(doc):
    _quiet(_stack_runs, _write(doc, "stack.toml"))


@FAST
@given(mutated(STUDY))
def test_mutated_study_files_load_or_say_why(doc):
    _quiet(_study_runs, _write(doc, "study.toml"))


TRADE_STUDY = STUDY.replace(END, END + MC + NORMAL + WINDOW.replace(
    "values = [0.3, 0.6]", 'distribution = "uniform"\nlow = 0.3\nhigh = 0.4'))
GRID_STUDY = STUDY.replace(END, END + VARY + INSTALLATION)


def test_the_trade_base_files_sweep():
    _quiet(_trade_runs, _write(tomllib.loads(TRADE_STUDY), "base-trade.toml"))
    _quiet(_trade_runs, _write(tomllib.loads(GRID_STUDY), "base-grid.toml"))
    assert nb.load_study(FOLDER / "base-trade.toml").trade.count == 20


@settings(max_examples=30, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(st.one_of(mutated(TRADE_STUDY, ("vary", "trade")),
                 mutated(GRID_STUDY, ("vary", "trade"))))
def test_mutated_trade_studies_load_or_say_why(doc):
    # what check accepts, sweep computes: every accepted [[vary]] makes valid variants
    _quiet(_trade_runs, _write(doc, "trade.toml"))


@settings(max_examples=40, deadline=None)
@given(st.dictionaries(st.sampled_from(KEYS), values, max_size=6))
def test_random_files_load_or_say_why(doc):
    path = _write(doc, "random.toml")
    _quiet(_stack_runs, path)
    _quiet(_study_runs, path)

"""The trade-study sections of a study file: ``[[vary]]`` entries and ``[trade]``.

The keys are declared in :data:`noisebudget.study.VARY` and :data:`~noisebudget.study.TRADE`
and read by the schema like every other section. The rules that a ``Field`` cannot state
live here and record their problems on the same :class:`~noisebudget.schema.Reader`, one
line each naming the file and key path:

* the address exists: the package, the zone, the layer (1-based, in the zone's stack as
  built: inserted stack files and ``based_on`` zones included), the tile cell, and a
  numeric key of that layer or cell (or ``installation_mass``, which names no zone);
* ``values``, ``range``, ``mean``, ``low``, ``high`` and ``mode`` are read against the
  varied key's own field, so they take its unit and its range (``std`` its unit, > 0);
* the spread suits ``[trade] mode`` (values or a range for ``grid``, a distribution for
  ``monte-carlo``), a distribution has its keys and no others, and a normal without
  ``low`` and ``high`` stays :data:`~noisebudget.trade.variants.NORMAL_CLEARANCE`
  standard deviations clear of the key's physical bounds;
* one package, each value varied once, at most
  :data:`~noisebudget.checks.MAX_VARIANTS` variants, and every variant a valid layer
  (each value alone; every combination where two entries vary one layer).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .schema import INVALID, Reader, Values, join, range_text, read_value, suggest

__all__ = ["read_trade", "varied_field"]

_NUMERIC = ("number", "db", "deg")


def varied_field(spec):
    """The field one varied value is read against: the key's kind and range, one value."""
    return replace(spec, shape="one", required=False, default=None, group="", needs=(),
                   length=None)


def _numeric(spec) -> bool:
    from .units import QUANTITIES

    return spec.shape != "list" and (spec.kind in QUANTITIES or spec.kind in _NUMERIC)


def _si(kind: str) -> str:
    from .trade.variants import UNITS

    unit = UNITS.get(kind, ("", ""))[1]
    return f" {unit}" if unit else ""


def read_trade(data, v, packages, layer_entries, own, package_names, zone_names,
               reader: Reader):
    """The ``[[vary]]`` entries and ``[trade]`` table of a study file read by the schema
    (``v``, the file's values) as a :class:`~noisebudget.trade.variants.TradeSpec`.

    Parameters
    ----------
    data : dict
        The study file as parsed from TOML (to tell a key given from its default).
    v : Values
        The study file's values (``v["vary"]``, ``v["trade"]``).
    packages : list of Package
        The packages that were built.
    layer_entries : dict
        Package name -> zone -> tuple of :class:`~noisebudget.layerfile.LayerEntry`.
    own : dict
        Package name -> the zones the package gives itself.
    package_names, zone_names : list of str
        Every name given in the file, valid or not (a reference to a name whose table
        had problems is not reported again).
    reader : Reader
        Receives every problem.
    """
    from .study import TRADE
    from .trade.variants import TradeSpec

    settings = v.get("trade") or Values({k: f.default for k, f in TRADE.items()})
    mode = None if "mode" in settings.bad else settings["mode"]  # None: unreadable
    spec = TradeSpec((), mode or "grid", settings.get("samples", 1000),
                     settings.get("seed", 0))
    raw = data.get("trade")
    if mode == "grid" and isinstance(raw, dict) and "samples" in raw:
        reader.problem("trade.samples", 'samples apply to mode = "monte-carlo" only (grid '
                                        "variants are every combination of the values)")
    entries = v.get("vary")
    if not isinstance(entries, list):
        return spec
    by_name = {p.name: p for p in packages}
    context = (by_name, layer_entries, own, package_names, zone_names, mode)
    params, seen = [], {}
    before = len(reader.problems)
    for i, t in enumerate(entries, start=1):
        where = f"vary[{i}]"
        if t is INVALID:
            continue
        p = _entry(t, where, context, reader)
        if p is None:
            continue
        if params and p.package != params[0].package:
            reader.problem(join(where, "package"), f"a trade study varies one package: "
                                                   f"{params[0].where} varies "
                                                   f"{params[0].package!r}")
            continue
        address = (p.zone, p.layer, p.cell, p.key)
        clash = next((seen[a] for a in [address, *((p.zone, p.layer, p.cell, g)
                                                   for g in p.group)] if a in seen), None)
        if clash is not None:
            same = clash.key == p.key
            reader.problem(where, f"varies the same value as {clash.where}" if same else
                           f"varies {p.key}, which replaces {clash.where}'s {clash.key}: "
                           f"vary one of them")
            continue
        if p.column in {q.column for q in params}:
            other = next(q for q in params if q.column == p.column)
            reader.problem(join(where, "name"), f"label {p.label!r} is also "
                                                f"{other.where}'s: give each entry its own "
                                                "name")
            continue
        seen[address] = p
        params.append(p)
    spec = replace(spec, parameters=tuple(params))
    if len(reader.problems) > before or not params or mode is None:
        return spec
    if mode == "grid" and spec.count > _max():
        reader.problem("vary", f"the grid has {spec.count} variants (the product of the "
                               f"entries' value counts), more than the maximum of {_max()}")
        return spec
    _check_combinations(spec, by_name[spec.package], reader)
    return spec


def _max() -> int:
    from .checks import MAX_VARIANTS

    return MAX_VARIANTS


def _check_combinations(spec, package, reader) -> None:
    """Where two entries vary one layer, every variant must be a valid layer."""
    from .layers import LayerValueError
    from .trade.variants import apply_variant, design

    layers = [(p.zone, p.layer) for p in spec.parameters if p.zone is not None]
    if len(set(layers)) == len(layers):
        return  # each value alone was checked already
    for row in design(spec):
        try:
            apply_variant(package, spec.parameters, row)
        except LayerValueError as exc:
            values = ", ".join(f"{p.label} = {x:g}{_si(p.kind)}"
                               for p, x in zip(spec.parameters, row, strict=True))
            first = getattr(exc, "errors", [exc])[0]
            reader.problem("vary", f"a variant is not a valid layer ({values}): "
                                   f"{first.key}: {first.reason}")
            return


def _entry(t, where, context, reader):
    """One ``[[vary]]`` entry as a :class:`~noisebudget.trade.variants.Parameter`, or None
    after recording its problems."""
    from .trade.variants import Parameter

    by_name, layer_entries, own, package_names, zone_names, mode = context
    if any(k in t.bad for k in ("package", "zone", "layer", "cell", "key")):
        return None  # the address itself is unreadable (reported)
    if not all(k in t for k in ("package", "key")):
        return None  # missing (reported)
    name = t["package"]
    if name not in package_names:
        reader.problem(join(where, "package"), f"no package {name!r}"
                                               f"{suggest(name, package_names)} (packages: "
                                               f"{', '.join(package_names)})")
        return None
    if name not in by_name:
        return None  # the package had problems (reported)
    address = _address(t, where, name, layer_entries, own, zone_names, reader)
    if address is None:
        return None
    zone, layer, cell, spec, target, zones, group = address
    key = t["key"]
    got = _spread(t, where, spec, mode, reader)
    if got is None:
        return None
    values, distribution, bounds = got
    if "name" in t:
        label = t["name"]
    elif zone is None:
        label = key
    else:
        label = f"{zone}.layer{layer}" + (f".cell{cell}" if cell else "") + f".{key}"
    p = Parameter(label, where, name, zone, layer, cell, key, spec.kind, values,
                  distribution, bounds, target, zones, group)
    if zone is not None and not _valid_layers(p, by_name[name], where, reader):
        return None
    return p


def _address(t, where, name, layer_entries, own, zone_names, reader):
    """``(zone, layer, cell, field, target, zones, group)`` of an entry, or None."""
    from .study import PACKAGE
    from .trade.variants import LayerTarget

    key = t["key"]
    if key == "installation_mass":
        given = [k for k in ("zone", "layer", "cell") if t.given(k)]
        if given:
            reader.problem(join(where, given[0]), "installation_mass belongs to the whole "
                                                  "package: give no zone, layer or cell")
            return None
        return None, None, None, PACKAGE[key], None, tuple(own.get(name, ())), ()
    if "zone" not in t or "layer" not in t:
        missing = "zone" if "zone" not in t else "layer"
        reader.problem(join(where, missing), f"missing: give the zone and the layer whose "
                                             f"{key!r} to vary (or key = "
                                             "\"installation_mass\")")
        return None
    zone, index, cell = t["zone"], t["layer"], t.get("cell")
    if zone not in zone_names:
        reader.problem(join(where, "zone"), f"no zone {zone!r}{suggest(zone, zone_names)} "
                                            f"(zones: {', '.join(zone_names)})")
        return None
    entries = layer_entries.get(name, {}).get(zone)
    if entries is None:
        return None  # the zone's stack had problems (reported)
    if index > len(entries):
        n = len(entries)
        reader.problem(join(where, "layer"), f"no layer {index}: package {name!r} has "
                                             f"{n} layer{'s' * (n != 1)} in zone {zone!r}")
        return None
    entry = entries[index - 1]
    cls = type(entry.layer)
    schema = cls.schema
    kind = f"{'an' if cls.type_name[0] in 'aeiou' else 'a'} {cls.type_name} layer"
    what = (f"layer {index} ({kind})" if entry.label == cls.type_name else
            f"layer {index} ({entry.label}, {kind})")
    if cell is not None:
        cells = entry.values.get("cell")
        if "cell" not in schema or not isinstance(cells, list):
            reader.problem(join(where, "cell"), f"{what} has no cells: only a tile has")
            return None
        if cell > len(cells):
            reader.problem(join(where, "cell"), f"no cell {cell}: the tile has {len(cells)} "
                                                f"cell kind{'s' * (len(cells) != 1)}")
            return None
        schema = schema["cell"].schema
        what = f"cell {cell} of {what}"
    spec = schema.get(key)
    if spec is None or not _numeric(spec):
        numeric = [k for k, f in schema.items() if _numeric(f)]
        hint = ""
        if cell is None and "cell" in schema and key in schema["cell"].schema:
            hint = "; it is a key of the tile's cells: give cell as well"
        reason = "has no key" if spec is None else "has no numeric key"
        reader.problem(join(where, "key"), f"{what} {reason} {key!r}"
                                           f"{suggest(key, numeric) if not hint else hint} "
                                           f"(numeric keys: {', '.join(numeric)})")
        return None
    # the value as written is the reference the variants are compared with: one number
    values = entry.values if cell is None else entry.values["cell"][cell - 1]
    written = values.get(key)
    if written is None:  # given by another key of its group (a tension by its prestress)
        written = getattr(entry.layer if cell is None else entry.layer.cells[cell - 1], key,
                          None)
    if written is None:
        reader.problem(join(where, "key"), f"{what} does not give {key!r} (the model "
                                           f"supplies it): write it in the layer, the value "
                                           f"the variants are compared with")
        return None
    if isinstance(written, tuple):
        reader.problem(join(where, "key"), f"{what} gives {key!r} as a pair of values: a "
                                           f"trade study varies one number; write one value "
                                           f"in the layer")
        return None
    group = tuple(k for k, f in schema.items() if spec.group and f.group == spec.group
                  and k != key)
    return zone, index, cell, spec, LayerTarget(cls, entry.values), (), group


def _spread(t, where, spec, mode, reader):
    """``(values, distribution, bounds)`` of an entry, its values read against the varied
    key's ``spec``; None after recording problems."""
    from .trade.variants import physical_bounds

    how = next((k for k in ("values", "range", "distribution") if k in t), None)
    if how is None:
        return None  # none given, or the one given unreadable (reported)
    if mode is None:
        pass  # the mode is unreadable (reported): the spread cannot be judged against it
    elif how == "distribution" and mode != "monte-carlo":
        reader.problem(join(where, "distribution"), 'a distribution needs [trade] mode = '
                                                    '"monte-carlo"')
        return None
    elif how != "distribution" and mode == "monte-carlo":
        reader.problem(join(where, how), 'mode "monte-carlo" draws from distributions: '
                                         'give distribution (or [trade] mode = "grid")')
        return None
    one = varied_field(spec)
    bounds = physical_bounds(one)
    if how == "values":
        values = [_read(x, one, join(join(where, "values"), i), reader)
                  for i, x in enumerate(t["values"], start=1)]
        if any(x is None for x in values):
            return None
        return tuple(values), None, (min(values), max(values))
    if how == "range":
        if "steps" not in t:
            return None  # missing or unreadable (reported)
        lo, hi = (_read(x, one, join(join(where, "range"), i), reader)
                  for i, x in enumerate(t["range"], start=1))
        if lo is None or hi is None:
            return None
        if not lo < hi:
            reader.problem(join(where, "range"), "[low, high]: high must be greater than low")
            return None
        return tuple(np.linspace(lo, hi, t["steps"])), None, (lo, hi)
    dist = _distribution(t, where, one, bounds, reader)
    return (None, dist, (dist.low, dist.high)) if dist is not None else None


def _read(raw, spec, path, reader):
    got = read_value(raw, spec, path, reader)
    return None if got is INVALID else float(got)


def _distribution(t, where, one, bounds, reader):
    """A ``distribution`` entry as a :class:`~noisebudget.trade.variants.Distribution`."""
    from .trade.variants import DISTRIBUTIONS, NORMAL_CLEARANCE, Distribution

    kind = t["distribution"]
    needed = DISTRIBUTIONS[kind]
    allowed = set(needed) | ({"low", "high"} if kind == "normal" else set())
    ok = True
    for k in ("mean", "std", "low", "high", "mode"):
        if t.given(k) and k not in allowed:
            reader.problem(join(where, k), f"not a key of a {kind} distribution (its keys: "
                                           f"{', '.join(sorted(allowed))})")
            ok = False
    for k in needed:
        if not t.given(k):
            reader.problem(join(where, k), f"missing: a {kind} distribution needs "
                                           f"{' and '.join(needed)}")
            ok = False
    if not ok:
        return None
    scale = replace(one, positive=True, allow_zero=False, gt=None, ge=None, lt=None,
                    le=None)
    v = {k: _read(t[k], scale if k == "std" else one, join(where, k), reader)
         for k in allowed if k in t}
    if any(x is None for x in v.values()):
        return None
    lo_b, _, hi_b, _ = bounds
    low, high = v.get("low", lo_b), v.get("high", hi_b)
    if kind == "normal":
        mean, std = v["mean"], v["std"]
        for side, b in (("low", low), ("high", high)):
            if side not in v and abs(mean - b) < NORMAL_CLEARANCE * std:
                reader.problem(join(where, side),
                               f"missing: this normal distribution reaches values the key "
                               f"does not allow (it must be {range_text(one)}; the bound is "
                               f"{abs(mean - b) / std:.2g} std from the mean): give low and "
                               "high to truncate it")
                return None
        # without low/high, draws stop at the physical bound or 8 std, whichever is nearer
        low = low if "low" in v else max(low, mean - 2 * NORMAL_CLEARANCE * std)
        high = high if "high" in v else min(high, mean + 2 * NORMAL_CLEARANCE * std)
        if not low < mean < high:
            reader.problem(join(where, "mean"), "must lie between low and high")
            return None
        return Distribution("normal", low, high, mean=mean, std=std)
    if not low < high:
        reader.problem(join(where, "high"), "must be greater than low")
        return None
    if kind == "triangular" and not low <= v["mode"] <= high:
        reader.problem(join(where, "mode"), "must lie between low and high")
        return None
    return Distribution(kind, low, high, mode=v.get("mode"))


def _valid_layers(p, package, where, reader) -> bool:
    """Each value alone gives a valid layer that differs from the others."""
    from .layers import LayerValueError
    from .trade.variants import apply_variant

    probe = p.values if p.values is not None else (p.distribution.low, p.distribution.high)
    for x in probe:
        try:
            apply_variant(package, (p,), (x,))
        except LayerValueError as exc:
            first = getattr(exc, "errors", [exc])[0]
            reader.problem(where, f"at {x:g}{_si(p.kind)}: {first.key}: {first.reason}")
            return False
    lo, hi = min(probe), max(probe)
    other = hi if hi != lo else (lo * 0.9 if lo else 1.0)
    try:
        a, b = (apply_variant(package, (p,), (x,)).stacks[p.zone] for x in (lo, other))
    except LayerValueError:
        return True  # the other value is the file's own concern, not this entry's
    if a == b:
        reader.problem(join(where, "key"), f"varying {p.key!r} does not change this layer: "
                                           "its file gives the layer by other keys, which "
                                           "take precedence")
        return False
    return True

"""A corpus of malformed and edge-case stack and study files, each with its outcome.

Every refused case must give, through the Python API (``nb.load_stack``, ``nb.load_study``,
``nb.run_study``) and the command line (``tl``, ``check``, ``run``), an ``InputError`` whose
lines name the file and the key path, one line per problem, exit status 2, no traceback
and no output written; what ``check`` accepts, ``run`` completes. A case edits a small
valid file: ``old`` replaced by ``new`` (``old`` None: ``new`` is the whole file).
"""

import subprocess
import sys
from dataclasses import dataclass

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.cli import main
from noisebudget.errors import InputNote

STACK = '''title = "corpus stack"
[source_air]
temperature = "-40 degC"
pressure = "30 kPa"
[[layer]]
use = "skin.al2024-t3-1.6mm"
[[layer]]
type = "air"
thickness = "40 mm"
[[layer]]
type = "porous"
model = "jca"
thickness = "50 mm"
flow_resistivity = "20000 Pa*s/m^2"
porosity = 0.98
tortuosity = 1.05
viscous_length = "100 um"
thermal_length = "200 um"
[[layer]]
type = "plate"
name = "trim"
thickness = "3 mm"
density = "1500 kg/m^3"
youngs_modulus = "20 GPa"
poisson_ratio = 0.3
loss_factor = 0.02
[[layer]]
use = "tile.bpf-105-floating"
'''

BANDS = "[100, 125, 160, 200, 250]"
STUDY = f'''[study]
title = "corpus study"
baseline = "bare"
incidence = "field"
theta_max_deg = 78
exterior_level = "surface"
include_package_absorption = false
date = 2026-12-02
[air.exterior]
altitude = "7000 m"
[air.cabin]
pressure_altitude = "2400 m"
temperature = "22 degC"
[cabin]
volume = "40 m^3"
bands_hz = {BANDS}
reverberation_time = ["0.6 s", "0.6 s", "0.5 s", "0.5 s", "0.5 s"]
[[condition]]
name = "cruise"
bands_hz = {BANDS}
levels_db = [100, 101, 102, 101, 100]
[[condition.tone]]
name = "BPF"
frequency = "102 Hz"
level_db = 110
[[condition]]
name = "climb"
bands_hz = {BANDS}
levels_db = [103, 104, 104, 103, 102]
[[zone]]
name = "wall"
area = "20 m^2"
exterior_offset_db = [2, 4, 1]
offset_bands_hz = [63, 125, 1000]
flanking_tl_db = 45
[[zone]]
name = "window"
area = "2 m^2"
flanking_tl_db = [30, 40]
flanking_bands_hz = [100, 250]
[[interior_source]]
name = "air conditioning"
bandwidth = "octave"
bands_hz = [125]
levels_db = [60]
conditions = ["cruise"]
[targets]
dba = 80
sil4 = 60
[[package]]
name = "bare"
installation_mass = "0.2 kg/m^2"
[package.zone.wall]
stack = "part.toml"
[[package.zone.wall.leak]]
name = "joint"
shape = "slit"
width = "1 mm"
length = "2 m"
depth = "5 mm"
behind_layer = 1
[package.zone.window]
layer = [{{ type = "plate", thickness = "8 mm", density = "1190 kg/m^3", youngs_modulus = "3 GPa"}}]
[[package]]
name = "septum"
based_on = "bare"
[package.zone.wall]
layer = [{{ stack = "part.toml", structure = true }}, {{ use = "septum.elastomer-1.5" }}]
flanking_tl_db = 50
[[package.zone.wall.leak]]
shape = "hole"
diameter = "3 mm"
depth = "2 mm"
count = 4
behind_layer = 2
'''

PART = '[[layer]]\ntype = "plate"\nthickness = "1.6 mm"\ndensity = "2780 kg/m^3"\n' \
       'youngs_modulus = "73 GPa"\n[[layer]]\ntype = "air"\nthickness = "50 mm"\n'
AIRY = '[receiver_air]\ntemperature = "30 degC"\n' + PART
LOOP = '[[layer]]\ntype = "septum"\nsurface_density = "1 kg/m^2"\n[[layer]]\nstack = "loop.toml"\n'


END = "behind_layer = 2\n"  # the last line of STUDY: trade-study tables go after it
VARY = '[[vary]]\npackage = "septum"\nzone = "wall"\nlayer = 2\nkey = "thickness"\n' \
       'values = ["30 mm", "70 mm"]\n'
INSTALLATION = '[[vary]]\npackage = "septum"\nkey = "installation_mass"\n' \
               'values = ["0.1 kg/m^2", "0.3 kg/m^2"]\n'
WINDOW = '[[vary]]\npackage = "septum"\nzone = "window"\nlayer = 1\n' \
         'key = "poisson_ratio"\nvalues = [0.3, 0.6]\n'
NORMAL = '[[vary]]\npackage = "septum"\nzone = "wall"\nlayer = 2\nkey = "thickness"\n' \
         'distribution = "normal"\nmean = "50 mm"\nstd = "2 mm"\n'
MC = '[trade]\nmode = "monte-carlo"\nsamples = 20\nseed = 3\n'


@dataclass(frozen=True)
class Case:
    """One corpus file: which base it edits and how, and the line it must give."""

    id: str
    base: str           # "stack" or "study"
    old: str | None
    new: str | bytes
    key: str            # the key path the first matching line must name ("" for the file)
    words: str          # a fragment of that line's reason
    in_file: str = ""   # the file the line names, when not the case's own (an inserted one)

    def text(self):
        base = STACK if self.base == "stack" else STUDY
        if self.old is None:
            return self.new
        assert self.old in base, f"{self.id}: {self.old!r} is not in the base file"
        return base.replace(self.old, self.new, 1)


S, T = "stack", "study"
REFUSED = [
    # wrong TOML types, named instead of crashing
    Case("thickness-boolean", S, 'thickness = "40 mm"', "thickness = true", "layer[2].thickness",
         "got boolean true"),
    Case("thickness-array", S, 'thickness = "40 mm"', 'thickness = ["40 mm"]',
         "layer[2].thickness", "got array ['40 mm']"),
    Case("thickness-table", S, 'thickness = "40 mm"', "thickness = { value = 40 }",
         "layer[2].thickness", "got table {value}"),
    Case("thickness-bare", S, 'thickness = "40 mm"', "thickness = 40", "layer[2].thickness",
         "bare number 40"),
    Case("type-integer", S, 'type = "air"', "type = 5", "layer[2].type", "unknown layer type 5"),
    Case("use-boolean", S, 'use = "skin.al2024-t3-1.6mm"', "use = true", "layer[1].use",
         "expected a catalog entry name"),
    Case("layer-string", S, None, 'layer = "skin"\n', "layer", "expected an array of layer"),
    Case("layer-numbers", S, None, "layer = [1, 2]\n", "layer[1]",
         "expected a layer table, got integer 1"),
    Case("no-layers", S, None, 'title = "nothing"\n', "layer",
         "missing: need at least one [[layer]]"),
    Case("cell-string", S, 'use = "tile.bpf-105-floating"',
         'type = "tile"\npitch = "22 mm"\nframe = "clamped"\ncell = "round"', "layer[5].cell",
         "expected an array of tables ([[cell]]), got string"),
    Case("cell-number", S, 'use = "tile.bpf-105-floating"',
         'type = "tile"\npitch = "22 mm"\nframe = "clamped"\ncell = [1]', "layer[5].cell[1]",
         "expected a table, got integer 1"),
    Case("air-string", S, '[source_air]\ntemperature = "-40 degC"\npressure = "30 kPa"\n',
         'source_air = "cold"\n', "source_air", "expected a table, got string 'cold'"),
    Case("air-array-of-tables", S, "[source_air]", "[[source_air]]", "source_air",
         "expected a table, got array of tables"),
    Case("title-number", S, 'title = "corpus stack"', "title = 3", "title",
         "expected text (a string), got integer 3"),
    Case("cabin-array", T, "[cabin]", "[[cabin]]", "cabin",
         "expected a table, got array of tables"),
    Case("condition-table", T, None, STUDY.replace("[[condition]]\nname = \"climb\"",
                                                   "[other]\nname = \"climb\"")
         .replace("[[condition]]", "[condition]").replace("[[condition.tone]]",
                                                          "[[condition.tone]]"),
         "condition", "got a single table ([condition])"),
    Case("levels-number", T, "levels_db = [100, 101, 102, 101, 100]", "levels_db = 100",
         "condition[1].levels_db", "expected a list (array) of values, got integer 100"),
    Case("levels-empty", T, "levels_db = [100, 101, 102, 101, 100]", "levels_db = []",
         "condition[1].levels_db", "empty list"),
    Case("levels-string", T, "levels_db = [100, 101, 102, 101, 100]",
         'levels_db = ["100 dB", 101, 102, 101, 100]', "condition[1].levels_db[1]",
         "the unit is dB: give the number alone"),
    Case("bands-string", T, f"bands_hz = {BANDS}\nlevels_db = [100", "bands_hz = \"100\"\n"
         "levels_db = [100", "condition[1].bands_hz", "expected a list of nominal band"),
    Case("package-zone-string", T, "[package.zone.window]\nlayer",
         "[package.zone2]\nlayer", "package[1].zone2", "unknown key; did you mean 'zone'?"),
    Case("zone-layer-string", T, "layer = [{ type = \"plate\"", "layer = \"plate\"\nx = [{ type "
         "= \"plate\"", "package[1].zone.window.layer", "expected an array of layer tables"),
    Case("size-slip", T, 'area = "20 m^2"', 'area = "20 km^2"', "zone[1].area",
         "outside the range of an area that noisebudget handles"),
    Case("thickness-tiny", S, 'thickness = "3 mm"', 'thickness = "3e-300 mm"',
         "layer[4].thickness", "outside the range of a length"),
    Case("date-number", T, "date = 2026-12-02", "date = 5", "study.date",
         "expected text (a string), got integer 5"),
    Case("study-array", T, "[study]", "[[study]]", "study", "expected a table, got array"),
    # booleans are never numbers, the string "false" is never true
    Case("bool-string-false", T, "include_package_absorption = false",
         'include_package_absorption = "false"', "study.include_package_absorption",
         "expected true or false, got string 'false'"),
    Case("bool-integer", T, "include_package_absorption = false",
         "include_package_absorption = 1", "study.include_package_absorption",
         "expected true or false, got integer 1"),
    Case("target-boolean", T, "dba = 80", "dba = true", "targets.dba",
         "expected a plain number in dB, got boolean true"),
    Case("tone-level-boolean", T, "level_db = 110", "level_db = false",
         "condition[1].tone[1].level_db", "got boolean false"),
    Case("level-boolean", T, "levels_db = [100, 101,", "levels_db = [true, 101,",
         "condition[1].levels_db[1]", "got boolean true"),
    Case("poisson-boolean", S, "poisson_ratio = 0.3", "poisson_ratio = false",
         "layer[4].poisson_ratio", "expected a plain number, got boolean false"),
    Case("loss-string", S, "loss_factor = 0.02", 'loss_factor = "0.02"', "layer[4].loss_factor",
         "no unit: this value is dimensionless"),
    # NaN and infinite values
    Case("level-nan", T, "levels_db = [100, 101, 102,", "levels_db = [100, 101, nan,",
         "condition[1].levels_db[3]", "nan is not a finite number"),
    Case("tone-inf", T, "level_db = 110", "level_db = inf", "condition[1].tone[1].level_db",
         "inf is not a finite number"),
    Case("target-nan", T, "sil4 = 60", "sil4 = -nan", "targets.sil4", "not a finite number"),
    Case("loss-nan", S, "loss_factor = 0.02", "loss_factor = nan", "layer[4].loss_factor",
         "nan is not a finite number"),
    Case("area-inf", T, 'area = "20 m^2"', 'area = "inf m^2"', "zone[1].area", "cannot read"),
    Case("thickness-overflow", S, 'thickness = "40 mm"', 'thickness = "1e400 mm"',
         "layer[2].thickness", "is not a finite number"),
    Case("theta-nan", T, "theta_max_deg = 78", "theta_max_deg = nan", "study.theta_max_deg",
         "not a finite number"),
    Case("level-huge", T, "levels_db = [100, 101,", "levels_db = [1e6, 101,",
         "condition[1].levels_db[1]", "must lie in [-50 dB, 200 dB]"),
    # meaningless values
    Case("installation-negative", T, 'installation_mass = "0.2 kg/m^2"',
         'installation_mass = "-0.2 kg/m^2"', "package[1].installation_mass", "must be >= 0"),
    Case("zone-stack-and-layer", T, 'stack = "part.toml"',
         'stack = "part.toml"\nlayer = [{ type = "air", thickness = "1 mm" }]',
         "package[1].zone.wall.stack", "give layer or stack, not both"),
    Case("duplicate-condition", T, 'name = "climb"', 'name = "cruise"', "condition[2].name",
         "duplicate name 'cruise' (also condition[1])"),
    Case("duplicate-zone", T, 'name = "window"', 'name = "wall"', "zone[2].name",
         "duplicate name 'wall' (also zone[1])"),
    Case("duplicate-package", T, 'name = "septum"', 'name = "bare"', "package[2].name",
         "duplicate name 'bare' (also package[1])"),
    Case("theta-zero", T, "theta_max_deg = 78", "theta_max_deg = 0", "study.theta_max_deg",
         "must lie in (0, 90], got 0"),
    Case("theta-above-90", T, "theta_max_deg = 78", "theta_max_deg = 90.5",
         "study.theta_max_deg", "must lie in (0, 90], got 90.5"),
    Case("theta-with-unit", T, "theta_max_deg = 78", 'theta_max_deg = "78 deg"',
         "study.theta_max_deg", "the unit is degrees: give the number alone"),
    Case("air-kelvin-slip", T, 'temperature = "22 degC"', 'temperature = "22 K"',
         "air.cabin.temperature", "must lie in [150 K, 400 K]"),
    Case("pressure-unit-slip", S, 'pressure = "30 kPa"', 'pressure = "30 Pa"',
         "source_air.pressure", "must lie in [1000 Pa, 1e+06 Pa]"),
    Case("altitude-too-high", T, 'altitude = "7000 m"', 'altitude = "30 km"',
         "air.exterior.altitude", "must lie in [-1000 m, 20000 m]"),
    Case("altitude-and-pressure", T, 'altitude = "7000 m"', 'altitude = "7000 m"\n'
         'pressure = "40 kPa"', "air.exterior.altitude", "give pressure or altitude, not both"),
    Case("porosity-above-1", S, "porosity = 0.98", "porosity = 1.5", "layer[3].porosity",
         "must lie in (0, 1]"),
    Case("volume-negative", T, 'volume = "40 m^3"', 'volume = "-40 m^3"', "cabin.volume",
         "must be > 0"),
    Case("reverberation-zero", T, 'reverberation_time = ["0.6 s",', 'reverberation_time = '
         '["0 s",', "cabin.reverberation_time[1]", "must be > 0"),
    Case("plate-both-sets", S, "poisson_ratio = 0.3", 'poisson_ratio = 0.3\nsurface_density = '
         '"4 kg/m^2"', "layer[4].surface_density", "not both"),
    # names: control characters refused
    Case("name-bell", T, 'name = "septum"', 'name = "sep\\u0007tum"', "package[2].name",
         "must not hold control characters (U+0007)"),
    Case("name-newline", T, 'name = "window"', 'name = "win\\ndow"', "zone[2].name",
         "must not hold control characters (U+000A)"),
    Case("name-bidi", T, 'name = "climb"', 'name = "\\u202eclimb"', "condition[2].name",
         "U+202E"),
    Case("layer-name-tab", S, 'name = "trim"', 'name = "tr\\tim"', "layer[4].name", "U+0009"),
    Case("zone-key-control", T, "[package.zone.window]", '[package.zone."win\\u0001dow"]',
         'package[1].zone."win\\x01dow"', "must not hold control characters"),
    Case("name-empty", T, 'name = "bare"', 'name = " "', "package[1].name", "must not be empty"),
    # other things check must refuse because run cannot do them
    Case("unknown-key", T, 'volume = "40 m^3"', 'volum = "40 m^3"', "cabin.volum",
         "did you mean 'volume'?"),
    Case("bands-not-iso", T, f"bands_hz = {BANDS}\nlevels_db = [100",
         "bands_hz = [100, 120, 160, 200, 250]\nlevels_db = [100", "condition[1].bands_hz",
         "consecutive ISO 266 one-third-octave"),
    Case("bands-beyond-20k", T, f"bands_hz = {BANDS}\nlevels_db = [100",
         "bands_hz = [16000, 20000, 25000]\nlevels_db = [100", "condition[1].bands_hz",
         "between 10 Hz and 20000 Hz"),
    Case("levels-count", T, "levels_db = [100, 101, 102, 101, 100]",
         "levels_db = [100, 101, 102, 101]", "condition[1].levels_db",
         "4 values for 5 bands: the bands do not match"),
    Case("tone-outside", T, 'frequency = "102 Hz"', 'frequency = "1 kHz"',
         "condition[1].tone[1].frequency", "lies outside the condition's bands"),
    Case("baseline-unknown", T, 'baseline = "bare"', 'baseline = "bear"', "study.baseline",
         "did you mean 'bare'?"),
    Case("based-on-later", T, '[[package]]\nname = "bare"', '[[package]]\nname = "bare"\n'
         'based_on = "septum"', "package[1].based_on", "comes later"),
    Case("zone-unknown", T, "[package.zone.window]", "[package.zone.windows]",
         "package[1].zone.windows", "no such zone; did you mean 'window'?"),
    Case("zone-missing", T, '[package.zone.window]\nlayer = [{ type = "plate", thickness = "8 mm",'
         ' density = "1190 kg/m^3", youngs_modulus = "3 GPa"}]\n', "",
         "package[1].zone.window", "missing: every package needs a stack for every zone"),
    Case("cabin-missing", T, 'volume = "40 m^3"', 'volume = "40 m^3"\n[cabin2]', "cabin2",
         "unknown key"),
    Case("no-packages", T, None, STUDY.split("[[package]]")[0], "package",
         "missing: need at least one [[package]]"),
    Case("mean-absorption-alone", T, 'reverberation_time = ["0.6 s", "0.6 s", "0.5 s", "0.5 s",'
         ' "0.5 s"]', "mean_absorption = 0.2", "cabin.mean_absorption",
         "needs surface_area as well"),
    Case("incidence-case", T, 'incidence = "field"', 'incidence = "Field"', "study.incidence",
         "did you mean 'field'?"),
    Case("area-no-unit", T, 'area = "20 m^2"', 'area = "4.5"', "zone[1].area",
         "'4.5' has no unit: an area needs one"),
    Case("quantity-arithmetic", S, 'thickness = "40 mm"', 'thickness = "2*20 mm"',
         "layer[2].thickness", "cannot read '2*20 mm' as a quantity"),
    Case("quantity-power-tower", S, 'thickness = "40 mm"', 'thickness = "10**10**10 mm"',
         "layer[2].thickness", "cannot read"),
    Case("use-material", S, 'use = "skin.al2024-t3-1.6mm"', 'use = "membrane.latex"',
         "layer[1].use", "'membrane.latex' is a membrane material, not a layer"),
    Case("use-contradicts-type", S, 'use = "skin.al2024-t3-1.6mm"',
         'use = "skin.al2024-t3-1.6mm"\ntype = "septum"', "layer[1].type", "contradicts"),
    Case("tile-tension-twice", S, 'use = "tile.bpf-105-floating"',
         'type = "tile"\npitch = "22 mm"\nframe = "clamped"\n[[layer.cell]]\nradius = "10 mm"\n'
         'membrane_thickness = "0.2 mm"\nmembrane_density = "1000 kg/m^3"\ntension = "80 N/m"\n'
         'prestress = "1 MPa"', "layer[5].cell[1].prestress", "give tension or prestress, "
         "not both"),
    Case("tile-shares", S, 'use = "tile.bpf-105-floating"',
         'type = "tile"\npitch = "22 mm"\nframe = "clamped"\n[[layer.cell]]\nradius = "10 mm"\n'
         'membrane_thickness = "0.2 mm"\nmembrane_density = "1000 kg/m^3"\ntension = "80 N/m"\n'
         "share = 0.5", "layer[5].cell", "shares must sum to 1"),
    Case("tile-disk-too-big", S, 'use = "tile.bpf-105-floating"',
         'use = "tile.bpf-105-floating"\ncell = [{ radius = "5 mm", membrane_thickness = '
         '"0.2 mm", membrane_density = "1000 kg/m^3", tension = "80 N/m", mass = "1 g", '
         'mass_radius = "6 mm" }]', "layer[5].cell[1].mass_radius", "must be smaller"),
    Case("include-missing", T, 'stack = "part.toml"', 'stack = "nope.toml"',
         "package[1].zone.wall.stack", "nope.toml: file not found"),
    Case("include-device", T, 'stack = "part.toml"', 'stack = "/dev/zero"',
         "package[1].zone.wall.stack", "/dev/zero: larger than 16 MB: not a file noisebudget "
         "reads"),
    Case("include-huge-file", T, 'stack = "part.toml"', 'stack = "huge.toml"',
         "package[1].zone.wall.stack", "huge.toml: larger than 16 MB"),
    Case("include-cycle", S, 'use = "tile.bpf-105-floating"', 'stack = "loop.toml"',
         "layer[2].stack", "include cycle: loop.toml -> loop.toml", "loop.toml"),
    Case("stack-given-to-check", T, None, STACK, "layer", "unknown key"),
    Case("study-given-to-tl", S, None, STUDY, "study", "unknown key"),
    # paths into the cabin: zone offsets and flanking (one value, or values at rising
    # frequencies), leaks, interior sources, octave input, structure flags
    Case("offset-count", T, "exterior_offset_db = [2, 4, 1]", "exterior_offset_db = [2, 4]",
         "zone[1].exterior_offset_db", "2 values for 3 frequencies of offset_bands_hz"),
    Case("offset-list-alone", T, "offset_bands_hz = [63, 125, 1000]\n", "",
         "zone[1].offset_bands_hz", "missing: a list of exterior_offset_db needs its "
         "frequencies in Hz"),
    Case("offset-one-with-frequencies", T, "exterior_offset_db = [2, 4, 1]",
         "exterior_offset_db = 2", "zone[1].offset_bands_hz", "takes no frequencies"),
    Case("offset-frequencies-falling", T, "offset_bands_hz = [63, 125, 1000]",
         "offset_bands_hz = [125, 63, 1000]", "zone[1].offset_bands_hz",
         "frequencies must rise"),
    Case("offset-frequency-with-unit", T, "offset_bands_hz = [63, 125, 1000]",
         'offset_bands_hz = ["63 Hz", 125, 1000]', "zone[1].offset_bands_hz[1]",
         "expected a frequency in Hz from 10 to 20000 (a plain number), got string"),
    Case("offset-frequency-beyond", T, "offset_bands_hz = [63, 125, 1000]",
         "offset_bands_hz = [63, 125, 40000]", "zone[1].offset_bands_hz[3]",
         "from 10 to 20000"),
    Case("offset-huge", T, "exterior_offset_db = [2, 4, 1]", "exterior_offset_db = [2, 4, 1e6]",
         "zone[1].exterior_offset_db[3]", "must lie in [-100 dB, 100 dB]"),
    Case("offset-nan", T, "exterior_offset_db = [2, 4, 1]", "exterior_offset_db = nan",
         "zone[1].exterior_offset_db", "nan is not a finite number"),
    Case("flanking-negative", T, "flanking_tl_db = 45", "flanking_tl_db = -3",
         "zone[1].flanking_tl_db", "must lie in [0 dB, 200 dB]"),
    Case("flanking-frequencies-alone", T, "flanking_tl_db = [30, 40]\n", "",
         "zone[2].flanking_bands_hz", "needs flanking_tl_db as well"),
    Case("flanking-with-unit", T, "flanking_tl_db = 45", 'flanking_tl_db = "45 dB"',
         "zone[1].flanking_tl_db", "the unit is dB: give the number alone"),
    Case("package-flanking-list-alone", T, "flanking_tl_db = 50", "flanking_tl_db = [50, 60]",
         "package[2].zone.wall.flanking_bands_hz", "missing: a list of flanking_tl_db"),
    Case("leak-shape-unknown", T, 'shape = "slit"', 'shape = "slot"',
         "package[1].zone.wall.leak[1].shape", "did you mean 'slit'?"),
    Case("leak-shape-missing", T, 'shape = "slit"\n', "",
         "package[1].zone.wall.leak[1].shape", "missing: give shape (slit or hole)"),
    Case("leak-single-table", T, "[[package.zone.wall.leak]]\nname", "[package.zone.wall.leak]"
         "\nname", "package[1].zone.wall.leak", "expected an array of tables ([[leak]])"),
    Case("leak-width-negative", T, 'width = "1 mm"', 'width = "-1 mm"',
         "package[1].zone.wall.leak[1].width", "must be > 0"),
    Case("leak-width-missing", T, 'width = "1 mm"\n', "",
         "package[1].zone.wall.leak[1].width", "missing required key"),
    Case("leak-slit-count", T, 'width = "1 mm"', 'width = "1 mm"\ncount = 2',
         "package[1].zone.wall.leak[1].count", "unknown key"),
    Case("leak-behind-too-far", T, "behind_layer = 1", "behind_layer = 2",
         "package[1].zone.wall.leak[1].behind_layer", "the stack has 2 layers: a leak "
         "behind layer 2 opens nowhere"),
    Case("leak-behind-negative", T, "behind_layer = 1", "behind_layer = -1",
         "package[1].zone.wall.leak[1].behind_layer", "must be >= 0"),
    Case("leak-behind-float", T, "behind_layer = 1", "behind_layer = 1.0",
         "package[1].zone.wall.leak[1].behind_layer", "expected an integer, got float"),
    Case("leak-larger-than-zone", T, 'length = "2 m"', 'length = "30 km"',
         "package[1].zone.wall.leak", "the leaks' open area (30 m^2) must be smaller than "
         "the zone's area (20 m^2)"),
    Case("leak-depth-huge", T, 'depth = "5 mm"', 'depth = "100 km"',
         "package[1].zone.wall.leak[1].depth", "must lie in [0 m, 1 m], got '100 km'"),
    Case("hole-depth-huge", T, 'depth = "2 mm"', 'depth = "2 m"',
         "package[2].zone.wall.leak[1].depth", "must lie in [0 m, 1 m]"),
    Case("hole-count-zero", T, "count = 4", "count = 0", "package[2].zone.wall.leak[1].count",
         "must be >= 1"),
    Case("hole-behind-too-far", T, "behind_layer = 2", "behind_layer = 3",
         "package[2].zone.wall.leak[1].behind_layer", "opens nowhere"),
    Case("source-unknown-condition", T, 'conditions = ["cruise"]', 'conditions = ["crusie"]',
         "interior_source[1].conditions[1]", "no condition 'crusie'; did you mean 'cruise'?"),
    Case("source-condition-twice", T, 'conditions = ["cruise"]',
         'conditions = ["cruise", "cruise"]', "interior_source[1].conditions[2]",
         "condition 'cruise' is listed twice"),
    Case("source-conditions-string", T, 'conditions = ["cruise"]', 'conditions = "cruise"',
         "interior_source[1].conditions", "expected a list (array) of values"),
    Case("source-name-of-zone", T, 'name = "air conditioning"', 'name = "wall"',
         "interior_source[1].name", "is the name of a zone"),
    Case("source-name-missing", T, 'name = "air conditioning"\n', "", "interior_source[1].name",
         "missing required key"),
    Case("source-duplicate", T, "[[interior_source]]", '[[interior_source]]\nname = "air '
         'conditioning"\nbands_hz = [100]\nlevels_db = [50]\n[[interior_source]]',
         "interior_source[2].name", "duplicate name 'air conditioning'"),
    Case("source-bands-outside", T, "bands_hz = [125]", "bands_hz = [250]",
         "interior_source[1].bands_hz", "bands do not fit: 200 .. 315 Hz reaches outside "
         "condition 'cruise'"),
    Case("source-bandwidth-unknown", T, 'bandwidth = "octave"', 'bandwidth = "half"',
         "interior_source[1].bandwidth", "one of third, octave"),
    Case("source-octave-bands-wrong", T, "bands_hz = [125]", "bands_hz = [160]",
         "interior_source[1].bands_hz", "consecutive ISO 266 octave"),
    Case("source-levels-count", T, "levels_db = [60]", "levels_db = [60, 58]",
         "interior_source[1].levels_db", "2 values for 1 bands"),
    Case("source-level-huge", T, "levels_db = [60]", "levels_db = [1e9]",
         "interior_source[1].levels_db[1]", "must lie in [-50 dB, 200 dB]"),
    Case("condition-octave-with-thirds", T, 'name = "cruise"\n', 'name = "cruise"\n'
         'bandwidth = "octave"\n', "condition[1].bands_hz", "consecutive ISO 266 octave"),
    Case("cabin-octave-with-thirds", T, 'volume = "40 m^3"', 'volume = "40 m^3"\nbandwidth = '
         '"octave"', "cabin.bands_hz", "consecutive ISO 266 octave"),
    Case("structure-string", T, 'structure = true', 'structure = "yes"',
         "package[2].zone.wall.layer[1].structure", "expected true or false, got string"),
    Case("structure-layer-number", S, 'name = "trim"', 'name = "trim"\nstructure = 1',
         "layer[4].structure", "expected true or false, got integer 1"),
    # trade studies: [[vary]] and [trade], read by the schema, each value against the
    # varied key's own field; the zone "wall" of "septum" is part.toml (plate, air)
    # inserted, then a septum
    *[Case(f"vary-{cid}", T, END, END + block, key, words) for cid, block, key, words in [
        ("package-unknown", VARY.replace('"septum"', '"sept"'), "vary[1].package",
         "no package 'sept'; did you mean 'septum'?"),
        ("zone-unknown", VARY.replace('zone = "wall"', 'zone = "wal"'), "vary[1].zone",
         "no zone 'wal'; did you mean 'wall'?"),
        ("layer-beyond", VARY.replace("layer = 2", "layer = 4"), "vary[1].layer",
         "no layer 4: package 'septum' has 3 layers in zone 'wall'"),
        ("layer-zero", VARY.replace("layer = 2", "layer = 0"), "vary[1].layer",
         "must be >= 1, got 0"),
        ("layer-without-zone", VARY.replace('zone = "wall"\n', ""), "vary[1].layer",
         "needs zone as well"),
        ("key-unknown", VARY.replace('key = "thickness"', 'key = "thicknes"'), "vary[1].key",
         "has no key 'thicknes'; did you mean 'thickness'?"),
        ("cell-not-tile", VARY.replace("layer = 2", "layer = 2\ncell = 1"), "vary[1].cell",
         "has no cells: only a tile has"),
        ("value-negative", VARY.replace('"30 mm"', '"-5 mm"'), "vary[1].values[1]",
         "must be >= 0 m"),
        ("value-wrong-unit", VARY.replace('"30 mm"', '"5 kg"'), "vary[1].values[1]",
         "'5 kg' is not a length"),
        ("value-bare", VARY.replace('"30 mm"', "5"), "vary[1].values[1]", "bare number 5"),
        ("value-slip", VARY.replace('"30 mm"', '"300 km"'), "vary[1].values[1]",
         "outside the range of a length"),
        ("values-empty", VARY.replace('["30 mm", "70 mm"]', "[]"), "vary[1].values",
         "empty list"),
        ("steps-one", VARY.replace('values = ["30 mm", "70 mm"]',
                                   'range = ["30 mm", "70 mm"]\nsteps = 1'),
         "vary[1].steps", "must lie in [2, 100000], got 1"),
        ("range-without-steps", VARY.replace('values = ["30 mm", "70 mm"]',
                                             'range = ["30 mm", "70 mm"]'),
         "vary[1].range", "needs steps as well"),
        ("range-reversed", VARY.replace('values = ["30 mm", "70 mm"]',
                                        'range = ["70 mm", "30 mm"]\nsteps = 3'),
         "vary[1].range", "high must be greater than low"),
        ("range-three", VARY.replace('values = ["30 mm", "70 mm"]',
                                     'range = ["30 mm", "50 mm", "70 mm"]\nsteps = 3'),
         "vary[1].range", "expected 2 values, got 3"),
        ("no-spread", VARY.replace('values = ["30 mm", "70 mm"]\n', ""), "vary[1].values",
         "missing: give values or range or distribution"),
        ("grid-too-big", VARY.replace('values = ["30 mm", "70 mm"]',
                                      'range = ["30 mm", "70 mm"]\nsteps = 400')
         + INSTALLATION.replace('values = ["0.1 kg/m^2", "0.3 kg/m^2"]',
                                'range = ["0.1 kg/m^2", "0.3 kg/m^2"]\nsteps = 400'),
         "vary", "the grid has 160000 variants"),
        ("same-value-twice", VARY + VARY.replace('"30 mm", "70 mm"', '"40 mm"'), "vary[2]",
         "varies the same value as vary[1]"),
        ("two-packages", VARY + INSTALLATION.replace('"septum"', '"bare"'),
         "vary[2].package", "a trade study varies one package: vary[1] varies 'septum'"),
        ("duplicate-name", VARY.replace("[[vary]]", '[[vary]]\nname = "gap"')
         + INSTALLATION.replace("[[vary]]", '[[vary]]\nname = "gap"'), "vary[2].name",
         "duplicate name 'gap' (also vary[1])"),
        ("installation-with-zone", INSTALLATION.replace("[[vary]]",
                                                        '[[vary]]\nzone = "wall"'),
         "vary[1].zone", "installation_mass belongs to the whole package"),
        ("installation-negative", INSTALLATION.replace('"0.1 kg/m^2"', '"-0.1 kg/m^2"'),
         "vary[1].values[1]", "must be >= 0 kg/m^2"),
        ("poisson-above-half", WINDOW, "vary[1].values[2]", "must lie in [0, 0.5), got 0.6"),
        ("plate-mixed-sets", WINDOW.replace('key = "poisson_ratio"',
                                            'key = "surface_density"').replace(
            "[0.3, 0.6]", '["10 kg/m^2"]'), "vary[1]", "at 10 kg/m^2: surface_density: give "
         "density and youngs_modulus, or surface_density and bending_stiffness, not both"),
        ("distribution-in-grid", NORMAL, "vary[1].distribution",
         'a distribution needs [trade] mode = "monte-carlo"'),
        ("values-in-monte-carlo", MC + VARY, "vary[1].values",
         'mode "monte-carlo" draws from distributions'),
        ("normal-unbounded", MC + NORMAL.replace('"2 mm"', '"20 mm"'), "vary[1].low",
         "reaches values the key does not allow (it must be >= 0 m"),
        ("normal-std-zero", MC + NORMAL.replace('std = "2 mm"', 'std = "0 mm"'),
         "vary[1].std", "must be > 0"),
        ("normal-missing-std", MC + NORMAL.replace('std = "2 mm"\n', ""), "vary[1].std",
         "missing: a normal distribution needs mean and std"),
        ("uniform-with-mean", MC + NORMAL.replace('"normal"', '"uniform"').replace(
            'std = "2 mm"', 'low = "30 mm"\nhigh = "60 mm"'), "vary[1].mean",
         "not a key of a uniform distribution (its keys: high, low)"),
        ("triangular-mode-outside", MC + NORMAL.replace('"normal"', '"triangular"').replace(
            'mean = "50 mm"\nstd = "2 mm"', 'low = "30 mm"\nmode = "80 mm"\nhigh = "60 mm"'),
         "vary[1].mode", "must lie between low and high"),
        ("distribution-unknown", MC + NORMAL.replace('"normal"', '"gaussian"'),
         "vary[1].distribution", "unknown value 'gaussian'"),
        ("mean-without-distribution", VARY.replace("[[vary]]", '[[vary]]\nmean = "1 mm"'),
         "vary[1].mean", "needs distribution as well"),
        ("samples-in-grid", "[trade]\nsamples = 10\n" + VARY, "trade.samples",
         'samples apply to mode = "monte-carlo" only'),
        ("samples-zero", MC.replace("samples = 20", "samples = 0") + NORMAL, "trade.samples",
         "must lie in [1, 100000], got 0"),
        ("samples-above-maximum", MC.replace("samples = 20", "samples = 100001") + NORMAL,
         "trade.samples", "must lie in [1, 100000], got 100001"),
        ("mode-unknown", '[trade]\nmode = "grd"\n' + VARY, "trade.mode",
         "did you mean 'grid'?"),
        ("vary-single-table", VARY.replace("[[vary]]", "[vary]"), "vary",
         "expected an array of tables ([[vary]]), got a single table"),
        # the value as written is the sweep's reference: one number the layer gives
        ("key-unwritten", WINDOW.replace('"poisson_ratio"', '"in_plane_tension"').replace(
            "[0.3, 0.6]", '["1 kN/m", "3 kN/m"]'), "vary[1].key",
         "layer 1 (a plate layer) does not give 'in_plane_tension' (the model supplies it)"),
    ]],
    Case("vary-key-pair", T, None, STUDY.replace(
        'youngs_modulus = "3 GPa"}', 'youngs_modulus = "3 GPa", in_plane_tension = ["1 kN/m", '
                                     '"2 kN/m"]}')
         + WINDOW.replace('"poisson_ratio"', '"in_plane_tension"').replace(
             "[0.3, 0.6]", '["1 kN/m", "3 kN/m"]'), "vary[1].key",
         "gives 'in_plane_tension' as a pair of values: a trade study varies one number"),
    # zone bays: both sides or neither, a length, no larger than the zone
    Case("bay-width-alone", T, "flanking_tl_db = 45", 'flanking_tl_db = 45\npanel_width = "1 m"',
         "zone[1].panel_width", "needs panel_height as well"),
    Case("bay-height-alone", T, "flanking_tl_db = 45",
         'flanking_tl_db = 45\npanel_height = "1.4 m"', "zone[1].panel_height",
         "needs panel_width as well"),
    Case("bay-larger-than-zone", T, "flanking_tl_db = 45",
         'flanking_tl_db = 45\npanel_width = "5 m"\npanel_height = "4.5 m"',
         "zone[1].panel_width", "the bay (5 m x 4.5 m = 22.5 m^2) is larger than the zone "
         "(20 m^2)"),
    Case("bay-no-unit", T, "flanking_tl_db = 45",
         'flanking_tl_db = 45\npanel_width = "1"\npanel_height = "1.4 m"',
         "zone[1].panel_width", "has no unit"),
    Case("bay-negative", T, "flanking_tl_db = 45",
         'flanking_tl_db = 45\npanel_width = "1 m"\npanel_height = "-1.4 m"',
         "zone[1].panel_height", "must lie in (0 m, 10 m]"),
    # a bay beyond 10 m a side would take hours (the radiation table grows as (k D)^2):
    # refused in a zone and in a stack file's [panel]
    Case("bay-huge", T, 'area = "20 m^2"', 'area = "1e6 m^2"\npanel_width = "1 km"\n'
         'panel_height = "1 km"', "zone[1].panel_width", "must lie in (0 m, 10 m], got '1 km'"),
    Case("stack-panel-huge", S, 'title = "corpus stack"', 'title = "corpus stack"\n[panel]\n'
         'width = "100 km"\nheight = "1 m"', "panel.width", "must lie in (0 m, 10 m]"),
    # files that are not TOML text
    Case("binary", T, None, b"\x00\x01\xff\xfe garbage \x80", "", "not UTF-8 text"),
    Case("latin-1", S, None, 'title = "caf\xe9"\n'.encode("latin-1"), "", "not UTF-8 text"),
    Case("malformed", T, "[cabin]", "[cabin", "", "malformed TOML"),
    Case("empty", T, None, "", "cabin", "missing required key"),
    Case("duplicate-key", T, 'volume = "40 m^3"', 'volume = "40 m^3"\nvolume = "41 m^3"', "",
         "malformed TOML"),
]


def _write(tmp_path, case):
    (tmp_path / "part.toml").write_text(PART)
    (tmp_path / "loop.toml").write_text(LOOP)
    if "huge" in case.id:
        (tmp_path / "huge.toml").write_text("# padding\n" * (2 * 2**20))  # 20 MB of comments
    path = tmp_path / f"{case.id}.toml"
    text = case.text()
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return path


def _expected(lines, path, case):
    path = path.with_name(case.in_file) if case.in_file else path
    head = f"{path}: {case.key}: " if case.key else f"{path}: "
    return [line for line in lines if line.startswith(head) and case.words in line]


@pytest.mark.parametrize("case", REFUSED, ids=[c.id for c in REFUSED])
def test_refused_through_the_python_api(tmp_path, case):
    path = _write(tmp_path, case)
    loaders = [nb.load_stack] if case.base == S else [nb.load_study, nb.run_study]
    for load in loaders:
        with pytest.raises(nb.InputError) as exc:
            load(path)
        lines = exc.value.lines()
        assert _expected(lines, path, case), "\n".join(lines)
        assert all("\n" not in line for line in lines)


@pytest.mark.parametrize("case", REFUSED, ids=[c.id for c in REFUSED])
def test_refused_through_the_command_line(tmp_path, capsys, case):
    path = _write(tmp_path, case)
    out = str(tmp_path / "out")
    commands = [["tl", str(path)]] if case.base == S else [
        ["check", str(path)], ["run", str(path), "-o", out], ["sweep", str(path), "-o", out],
        ["optimize", str(path), "-o", out]]
    for argv in commands:
        assert main(argv) == 2
        err = capsys.readouterr().err.splitlines()
        assert err and all(line.startswith(str(tmp_path)) for line in err), err
        assert _expected(err, path, case), "\n".join(err)
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())


def test_a_sample_of_the_corpus_in_a_fresh_process(tmp_path):
    # the installed command: exit status 2 and one line per problem, never a traceback
    for case in [c for c in REFUSED if c.id in ("binary", "name-bell", "include-cycle")]:
        path = _write(tmp_path, case)
        cmd = "tl" if case.base == S else "check"
        r = subprocess.run([sys.executable, "-m", "noisebudget", cmd, str(path)],
                           capture_output=True, text=True, check=False)
        assert r.returncode == 2 and "Traceback" not in r.stderr, r.stderr
        assert _expected(r.stderr.splitlines(), path, case), r.stderr


# ------------------------------------------------------------------ accepted edge cases

ACCEPTED = [
    Case("byte-order-mark", T, None, "\ufeff" + STUDY, "", ""),
    Case("crlf", T, None, STUDY.replace("\n", "\r\n"), "", ""),
    Case("markup-names", T, None, STUDY.replace('"bare"', '"$x^2$ \\\\ a_b_c"')
         .replace('"cruise"', '"^_^ cruise"').replace('"wall"', '"_wall"')
         .replace("zone.wall", 'zone."_wall"').replace('"septum"', '"=SUM(A1) @x"'), "", ""),
    Case("any-script", T, None, STUDY.replace('"window"', '"Fenster ü"')
         .replace("zone.window", 'zone."Fenster ü"'), "", ""),
    Case("theta-limits", T, "theta_max_deg = 78", "theta_max_deg = 90", "", ""),
    Case("zero-installation", T, 'installation_mass = "0.2 kg/m^2"',
         'installation_mass = "0 kg/m^2"', "", ""),
    Case("date-text", T, "date = 2026-12-02", 'date = "2 December 2026"', "", ""),
    Case("multi-line-notes", T, 'title = "corpus study"',
         'title = "corpus study"\nnotes = """two\n\tlines"""', "", ""),
    Case("stack-bom", S, None, "\ufeff" + STACK, "", ""),
    Case("octave-condition", T, f'name = "climb"\nbands_hz = {BANDS}\nlevels_db = [103, 104, '
         '104, 103, 102]', 'name = "climb"\nbandwidth = "octave"\nbands_hz = [125]\n'
         'levels_db = [108]', "", ""),
    Case("octave-cabin", T, f'bands_hz = {BANDS}\nreverberation_time = ["0.6 s", "0.6 s", '
         '"0.5 s", "0.5 s", "0.5 s"]', 'bandwidth = "octave"\nbands_hz = [125, 250]\n'
         'reverberation_time = ["0.6 s", "0.5 s"]', "", ""),
    Case("leak-zero-depth", T, 'depth = "5 mm"', 'depth = "0 mm"', "", ""),
    Case("source-every-condition", T, 'conditions = ["cruise"]\n', "", "", ""),
    Case("zone-bay", T, "flanking_tl_db = 45",
         'flanking_tl_db = 45\npanel_width = "1.0 m"\npanel_height = "1.4 m"', "", ""),
    Case("one-offset", T, "exterior_offset_db = [2, 4, 1]\noffset_bands_hz = [63, 125, 1000]",
         "exterior_offset_db = -3", "", ""),
    # a grid over a layer of an inserted stack file and the installation mass, and a
    # Monte Carlo study: they load, run, and sweep
    Case("vary-grid", T, END, END + VARY + INSTALLATION, "", ""),
    Case("vary-monte-carlo", T, END, END + MC + NORMAL + WINDOW.replace(
        "values = [0.3, 0.6]", 'distribution = "uniform"\nlow = 0.3\nhigh = 0.4'), "", ""),
]


@pytest.mark.parametrize("case", ACCEPTED, ids=[c.id for c in ACCEPTED])
def test_accepted_edge_cases_load_and_run(tmp_path, case):
    path = _write(tmp_path, case)
    if case.base == S:
        stack = nb.load_stack(path)
        tl = stack.transmission_loss(np.array([100.0, 1000.0, 5000.0]), "field")
        assert np.all(np.isfinite(tl))
        return
    res = nb.run_study(path)
    assert np.all(np.isfinite(res.summary["interior_dba"]))
    assert len(res.summary) == 4


@pytest.mark.parametrize("case", [c for c in ACCEPTED if c.id.startswith("vary-")],
                         ids=lambda c: c.id)
def test_accepted_trade_studies_sweep(tmp_path, case):
    # what check accepts, sweep completes: every variant's metrics finite
    from noisebudget.trade.sweep import sweep_study

    res = sweep_study(_write(tmp_path, case), workers=1)
    assert len(res.variants) == (4 if case.id == "vary-grid" else 20)
    assert np.all(np.isfinite(res.variants["max_interior_dba"]))
    assert np.all(np.isfinite(res.variants["treatment_mass_kg"]))


def test_edge_case_names_run_through_every_report(tmp_path, capsys):
    # names with markup characters, a byte-order mark and CRLF line ends: what check
    # accepts, run completes, tables, PDF and workbook
    case = Case("all", T, None, "\ufeff" + ACCEPTED[2].text().replace("\n", "\r\n"), "", "")
    path = _write(tmp_path, case)
    assert main(["check", str(path)]) == 0
    assert "OK" in capsys.readouterr().out
    out = tmp_path / "out"
    assert main(["run", str(path), "-o", str(out)]) == 0
    assert {p.name for p in out.iterdir()} >= {"all.pdf", "all.xlsx", "all-summary.csv"}
    import openpyxl

    wb = openpyxl.load_workbook(out / "all.xlsx")
    cells = {c.value for ws in wb for row in ws.iter_rows() for c in row}
    assert {"$x^2$ \\ a_b_c", "=SUM(A1) @x", "^_^ cruise"} <= cells


def test_inserted_stack_with_its_own_air_gives_a_note(tmp_path, capsys):
    (tmp_path / "airy.toml").write_text(AIRY)
    path = _write(tmp_path, Case("uses-airy", T, 'stack = "part.toml"', 'stack = "airy.toml"', "",
                                 ""))
    with pytest.warns(InputNote, match="its receiver_air ignored"):
        nb.load_study(path)
    assert main(["check", str(path)]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("note: ") and "airy.toml" in err[0]

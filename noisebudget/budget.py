"""The noise and mass budget: every path into the cabin, as array algebra.

Pure functions on arrays; no file parsing here. Tables are built once, at the end, by
:mod:`noisebudget.budget_tables`.

Interior level in the cabin's reverberant field (ISO 10140-2 / ISO 16283-1 relation
``R = L1 - L2 + 10 lg(S / A)`` rearranged). For package p, condition c, zone z and band
b, each path k (``wall``, ``leak``, ``flanking``) carries the mean-square pressure::

    E[k, p, c, z, b] = 10^((L[c, b] + O[z, b]) / 10) tau[k, p, z, b] S_z / A[p, b]

where ``L`` is the incident diffuse-field level (the exterior level as given, or the
blocked surface pressure level minus 6.02 dB), ``O`` the zone's exterior offset, ``S_z``
the zone's area and ``A`` the cabin's absorption area (Sabine, ``A = 0.161 V / T60``).
The zone's transmission coefficient is split by path::

    tau_wall = (S_z - sum S_l) tau_package / S_z,   tau_leak = sum S_l tau_l / S_z,
    tau_flanking = 10^(-F_z / 10)

(composite TL, Bies & Hansen, Engineering Noise Control, ch. 7; flanking in parallel
with the package). Tones are transmitted with the narrowband transmission coefficients
at their own frequencies (and the offset there) and added as energy to the band they
fall in (``np.add.at``). Interior sources (air conditioning, structure-borne noise) are
sound pressure levels in the cabin, added as energy. Interior levels are ``10 lg`` of
sums over these axes. A turbulent boundary layer is not an acoustic field: a
diffuse-field TL applied to it is an engineering approximation.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from .bands import Bands, energy_sum, log_interp
from .errors import ModelRangeWarning

__all__ = ["PATHS", "Condition", "Curve", "InteriorSource", "Leak", "Package", "StudyInputs",
           "StudyResult", "Zone", "add_tone_energy", "compute_budget", "interior_levels",
           "path_energy", "sabine_area"]

#: paths through a zone's wall, in the order of the budget's first axis
PATHS = ("wall", "leak", "flanking")
SOURCE_PATH = "interior source"
SURFACE_TO_INCIDENT_DB = 20 * np.log10(2.0)  # 6.02 dB: blocked surface pressure doubling


def sabine_area(volume_m3: float, t60_s) -> np.ndarray:
    """Sabine absorption area ``A = 0.161 V / T60`` in m^2 (Sabine; ISO 3382-2)."""
    return 0.161 * volume_m3 / np.asarray(t60_s, dtype=float)


@dataclass(frozen=True)
class Curve:
    """A quantity in dB given at a few frequencies (Hz): linear in lg f between them,
    constant outside; with no frequencies, one value everywhere."""

    points_hz: tuple = ()
    values_db: tuple = (0.0,)

    def at(self, f_hz) -> np.ndarray:
        """Values at ``f_hz`` (see :func:`noisebudget.bands.log_interp`)."""
        return log_interp(f_hz, self.points_hz or (1.0,), self.values_db)


@dataclass(frozen=True)
class Condition:
    """A flight condition: one-third-octave exterior levels and discrete tones.

    ``input_bandwidth`` records whether the file gave octave levels (split into thirds).
    """

    name: str
    bands: Bands
    levels_db: np.ndarray
    tones_hz: np.ndarray = field(default_factory=lambda: np.empty(0))
    tone_levels_db: np.ndarray = field(default_factory=lambda: np.empty(0))
    tone_names: tuple = ()
    input_bandwidth: str = "third"


@dataclass(frozen=True)
class Zone:
    """A part of the cabin wall: area (m^2), exterior offset (dB added to the condition's
    levels and tones), an optional flanking path around the packages (its TL), and an
    optional bay ``panel = (width, height)`` in m: the panel that radiates into the cabin,
    which every package's stack on the zone fills
    (:meth:`~noisebudget.stack.Stack.with_panel`, applied by the kernel)."""

    name: str
    area: float
    exterior_offset: Curve = field(default_factory=Curve)
    flanking_tl: Curve | None = None
    panel: tuple | None = None


@dataclass(frozen=True)
class Leak:
    """An aperture (:class:`~noisebudget.apertures.Slit` or ``Hole``) in a zone's package.

    ``behind_layer`` = k > 0 puts the leak behind the package's first k layers (counted
    from the exterior): they transmit to it, and it bypasses the layers after them. The
    path is then the product of the two transmission coefficients, an engineering
    approximation that neglects the build-up of sound in the cavity. 0: through all.
    """

    aperture: object
    behind_layer: int = 0
    name: str = ""

    @property
    def area(self) -> float:
        """Open area in m^2."""
        return self.aperture.area


@dataclass(frozen=True)
class Package:
    """A treatment package.

    Parameters
    ----------
    name : str
    stacks : dict
        Zone name -> :class:`~noisebudget.stack.Stack`.
    installation_mass : float
        kg/m^2 of the zones the package defines itself.
    notes : str
    leaks : dict
        Zone name -> tuple of :class:`Leak`.
    flanking : dict
        Zone name -> :class:`Curve` overriding the zone's flanking TL.
    structure : dict
        Zone name -> tuple of bool, one per layer: True where the layer belongs to the
        airframe (its mass is not the package's).
    installation : dict
        Zone name -> installation mass in kg/m^2 where it differs from
        ``installation_mass`` (zones taken over from another package keep that
        package's installation).
    """

    name: str
    stacks: dict
    installation_mass: float = 0.0
    notes: str = ""
    leaks: dict = field(default_factory=dict)
    flanking: dict = field(default_factory=dict)
    structure: dict = field(default_factory=dict)
    installation: dict = field(default_factory=dict)


@dataclass(frozen=True)
class InteriorSource:
    """A sound already inside the cabin (air conditioning, structure-borne noise):
    interior one-third-octave levels, for the named conditions (None: all)."""

    name: str
    bands: Bands
    levels_db: np.ndarray
    conditions: tuple | None = None
    input_bandwidth: str = "third"


@dataclass(frozen=True)
class StudyInputs:
    """Everything the budget needs, in SI, already validated."""

    title: str
    conditions: tuple
    zones: tuple
    packages: tuple
    baseline: str
    cabin_area_m2: np.ndarray  # absorption area per band of ``cabin_bands``
    cabin_bands: Bands
    exterior_convention: str = "diffuse"  # or "surface"
    incidence: str = "field"
    theta_max_deg: float | None = None
    include_package_absorption: bool = False
    targets: dict = field(default_factory=dict)
    meta: dict = field(default_factory=dict)
    interior_sources: tuple = ()


@dataclass
class StudyResult:
    """Result tables (pandas DataFrames, units in column names)."""

    inputs: StudyInputs
    summary: object
    bands: object
    contributions: object
    tl: object
    mass: object
    ratings: object
    tones: object

    def tables(self) -> dict:
        """All tables by name."""
        return {"summary": self.summary, "bands": self.bands,
                "contributions": self.contributions, "tl": self.tl, "mass": self.mass,
                "ratings": self.ratings, "tones": self.tones}


def interior_levels(incident_db, tl_by_zone_db, areas, absorption_m2):
    """Per-zone interior levels and their energy sum.

    Parameters
    ----------
    incident_db : (nb,) incident diffuse-field levels
    tl_by_zone_db : (nz, nb) band TL of each zone
    areas : (nz,) zone areas, m^2
    absorption_m2 : (nb,) cabin absorption area

    Returns
    -------
    per_zone : (nz, nb) dB; total : (nb,) dB
    """
    per_zone = (np.asarray(incident_db)[None, :] - np.asarray(tl_by_zone_db)
                + 10 * np.log10(np.asarray(areas)[:, None] / np.asarray(absorption_m2)[None, :]))
    return per_zone, energy_sum(per_zone, axis=0)


def path_energy(incident_db, tau, areas, absorption) -> np.ndarray:
    """Mean-square pressure (re p0^2) each path brings into the cabin.

    Parameters
    ----------
    incident_db : (..., C, Z, B)
        Incident level of each condition on each zone.
    tau : (K, ..., P, Z, B)
        Transmission coefficient of each path, per zone area.
    areas : (Z,)
        Zone areas in m^2.
    absorption : (..., P, B)
        Cabin absorption area in m^2.

    Returns
    -------
    (K, ..., P, C, Z, B) : ``10^(L/10) tau S / A``

    Leading axes (e.g. variants of a trade study) broadcast.
    """
    inc = 10 ** (np.asarray(incident_db, dtype=float) / 10)
    tau = np.asarray(tau, dtype=float)
    share = np.asarray(areas, dtype=float)[:, None] / np.asarray(absorption)[..., :, None, None, :]
    return inc[..., None, :, :, :] * tau[..., :, None, :, :] * share


def add_tone_energy(energy, tone_incident_db, tone_tau, areas, tone_absorption, condition,
                    band) -> np.ndarray:
    """Tone energies, also added in place to ``energy`` at (condition, band) of each tone.

    Parameters
    ----------
    energy : (K, P, C, Z, B)
    tone_incident_db : (Z, T)
        Incident level of each tone on each zone.
    tone_tau : (K, P, Z, T)
        Narrowband transmission coefficients at the tones' frequencies.
    areas : (Z,)
    tone_absorption : (P, T)
        Cabin absorption area in the band of each tone.
    condition, band : (T,) int
        Where each tone goes.

    Returns
    -------
    (K, P, Z, T) tone energies.
    """
    e = (10 ** (np.asarray(tone_incident_db) / 10))[None, None] * tone_tau * (
        np.asarray(areas)[:, None] / tone_absorption[:, None, :])[None]
    np.add.at(energy, (slice(None), slice(None), condition, slice(None), band),
              np.moveaxis(e, -1, 0))
    return e


def compute_budget(inp: StudyInputs, rtol: float | None = None) -> StudyResult:
    """Run the budget for every package and condition.

    Three stages: transmission coefficients of every distinct stack and leak (the
    physics kernel, :func:`noisebudget.zone_paths.zone_transmissions`), the energy
    arrays (:func:`budget_arrays`), and the tables (:mod:`noisebudget.budget_tables`).
    ``rtol`` is the walls' estimated relative accuracy (default
    :data:`noisebudget.zone_paths.WALL_RTOL`, 2e-2: 0.086 dB estimated); a trade study
    passes its own (:data:`noisebudget.trade.evaluate.TRADE_RTOL`, the same).
    """
    from .budget_tables import build_tables
    from .zone_paths import WALL_RTOL, zone_transmissions

    bands = _union_bands(inp)
    tones = _tones(inp, bands)
    trans = zone_transmissions(inp, bands, np.unique(tones["hz"]),
                               WALL_RTOL if rtol is None else rtol)
    arrays = budget_arrays(inp, bands, tones, trans)
    return build_tables(inp, arrays)


def _tones(inp: StudyInputs, bands: Bands) -> dict:
    """Every tone of every condition as flat arrays (condition index, Hz, level, band)."""
    conds = inp.conditions
    n = [len(c.tones_hz) for c in conds]
    hz = np.concatenate([np.asarray(c.tones_hz, dtype=float) for c in conds])
    names = [name for c in conds for name in
             (list(c.tone_names) or [""] * len(c.tones_hz))]
    return {"condition": np.repeat(np.arange(len(conds)), n), "hz": hz,
            "level_db": np.concatenate([np.asarray(c.tone_levels_db, dtype=float)
                                        for c in conds]),
            "band": bands.containing(hz).astype(int) if hz.size else np.empty(0, int),
            "name": np.array(names, dtype=object)}


def budget_arrays(inp: StudyInputs, bands: Bands, tones: dict, trans) -> dict:
    """The budget's arrays: path transmission, energies of paths, tones and sources.

    Returns a dict of plain arrays and coordinates (see the keys); no loop over
    packages, conditions, zones or bands.
    """
    zones, conds = inp.zones, inp.conditions
    areas = np.array([z.area for z in zones])
    nom = bands.nominal
    shift = -SURFACE_TO_INCIDENT_DB if inp.exterior_convention == "surface" else 0.0
    # exterior levels on the study's bands (conditions differ in range: mask)
    ext = np.full((len(conds), len(bands)), -np.inf)
    for i, c in enumerate(conds):  # conditions: a handful; rows of one array
        ext[i, bands.index(c.bands.nominal)] = c.levels_db
    in_cond = np.isfinite(ext)
    offset = np.stack([z.exterior_offset.at(nom) for z in zones])            # (Z, B)
    incident = ext[:, None, :] + shift + offset[None]                        # (C, Z, B)
    # path transmission coefficients per zone area
    flank_tl = _flanking(inp, nom)                                            # (P, Z, B)
    tau = _path_tau(trans["wall"], trans["leak_area"], trans["open_area"], areas, flank_tl)
    over = (trans["leak_area"] / areas[:, None] + 10 ** (-flank_tl / 10) > 1).any(axis=(0, 2))
    if over.any():
        names = ", ".join(z.name for z, o in zip(zones, over, strict=True) if o)
        warnings.warn(f"zone {names}: leaks and flanking pass more than falls on the zone; "
                      "its transmission is capped at 1 (apertures so large are outside the "
                      "leak model)", ModelRangeWarning, stacklevel=2)
    energy = path_energy(np.where(in_cond[:, None, :], incident, -np.inf), tau, areas,
                         trans["absorption"])
    # tones
    t_hz = tones["hz"]
    pick = np.searchsorted(trans["tone_hz"], t_hz)
    t_tau = _path_tau(trans["wall_tone"][..., pick], trans["leak_tone_area"][..., pick],
                      trans["open_area"], areas, _flanking(inp, t_hz))
    t_offset = np.stack([z.exterior_offset.at(t_hz) for z in zones]) if t_hz.size else \
        np.zeros((len(zones), 0))
    t_inc = tones["level_db"][None, :] + shift + t_offset
    tone_energy = add_tone_energy(energy, t_inc, t_tau, areas,
                                  trans["absorption"][:, tones["band"]], tones["condition"],
                                  tones["band"])
    return {"bands": bands, "areas": areas, "exterior_db": ext, "in_condition": in_cond,
            "tau": tau, "energy": energy, "tone_tau": t_tau, "tone_energy": tone_energy,
            "tones": tones, "source_energy": _source_energy(inp, bands),
            "source_names": [s.name for s in inp.interior_sources],
            "wall_tau": trans["wall"], "wall_tone_tau": trans["wall_tone"][..., pick],
            "has_leak": trans["open_area"] > 0, "has_flanking": np.isfinite(flank_tl).any(-1),
            "absorption": trans["absorption"]}


def _path_tau(wall, leak_area, open_area, areas, flank_tl) -> np.ndarray:
    """(3, P, Z, n) transmission per zone area of the wall, leak and flanking paths.

    A zone cannot pass more power than falls on it: where the paths add up to more than
    1 (leaks covering much of a zone, outside the leak model's validity of apertures
    far apart), all three are scaled down to a total of 1.
    """
    s = areas[None, :, None]
    with np.errstate(over="ignore"):
        flank = np.where(np.isfinite(flank_tl), 10 ** (-flank_tl / 10), 0.0)
    tau = np.stack([(1 - open_area[..., None] / s) * wall, leak_area / s, flank])
    return tau / np.maximum(tau.sum(axis=0), 1.0)


def _flanking(inp: StudyInputs, f_hz) -> np.ndarray:
    """(P, Z, n) flanking TL at ``f_hz`` (inf where a zone has no flanking path)."""
    from .zone_paths import distinct_items

    f_hz = np.asarray(f_hz, dtype=float)
    curves, index = distinct_items([[pkg.flanking.get(z.name, z.flanking_tl)
                                     for z in inp.zones] for pkg in inp.packages], repr)
    values = np.stack([np.full(f_hz.shape, np.inf) if c is None or not f_hz.size
                       else c.at(f_hz) for c in curves])   # distinct curves: a handful
    return values[index]


def _source_energy(inp: StudyInputs, bands: Bands) -> np.ndarray:
    """(S, C, B) interior sources' mean-square pressure in each condition."""
    names = [c.name for c in inp.conditions]
    out = np.zeros((len(inp.interior_sources), len(names), len(bands)))
    for s, src in enumerate(inp.interior_sources):  # sources: a handful
        applies = np.array([src.conditions is None or n in src.conditions for n in names])
        out[s, :, bands.index(src.bands.nominal)] = (
            applies[:, None] * 10 ** (np.asarray(src.levels_db) / 10)).T
    return out


def _union_bands(inp: StudyInputs) -> Bands:
    lo = min(c.bands.centre[0] for c in inp.conditions)
    hi = max(c.bands.centre[-1] for c in inp.conditions)
    from .bands import third_octave_bands

    return third_octave_bands(lo, hi)

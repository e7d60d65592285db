"""Membrane-mass resonator cells and tile arrays as locally reacting impedance sheets.

Time convention ``exp(+j omega t)``; the membrane's loss enters as a complex tension
``T (1 + j eta)``.

Cell (exact axisymmetric solution). A circular membrane of radius ``a``, surface density
``rho_s`` and tension ``T`` is clamped at ``r = a`` to the grid; a rigid disk of radius
``r0`` and mass ``M`` is bonded at its centre. Under a uniform pressure ``p_m`` on the
membrane and a force ``F_d`` on the disk the membrane obeys
``T (w'' + w'/r) + omega^2 rho_s w = -p_m`` on ``r0 < r < a``, so with
``k^2 = omega^2 rho_s / T`` and ``q = p_m / (k^2 T)``::

    w(r) = A J0(kr) + B Y0(kr) - q

with ``w(a) = 0``, the disk moving as ``W = w(r0)`` and obeying
``-omega^2 M_d W = F_d + 2 pi r0 T w'(r0)`` (``M_d`` = disk plus the membrane under it).
Area integrals use ``int r J0(kr) dr = r J1(kr) / k`` (likewise Y). The bare membrane
(``r0 = 0``, ``M = 0``) keeps only ``J0``: ``m_eff = rho_s / [1 - 2 J1(ka) / (ka J0(ka))]``,
zero at ``J0(ka) = 0`` (the first TL dip, f01 = 2.4048 / (2 pi a) sqrt(T / rho_s); Rayleigh,
Theory of Sound) and infinite where the area-averaged displacement vanishes (total
reflection; Yang et al., Phys. Rev. Lett. 101, 204301, 2008; Chen et al., JASA 136
(2014) 969). The effective surface mass is ``m_eff = p / (-omega^2 <w>)``, negative where
the cell is stiffness-like; ``Z = j omega m_eff``.

Tile. Cells sit on a square grid of pitch ``P``; each unit of area ``P^2`` holds one cell
(kinds mixed by ``share``). With a *clamped* grid the tile's mean displacement is the sum
of the cells' volume displacements per ``P^2`` (admittances add in proportion to area).
With a *floating* grid of mass ``m_f`` per tile area, the grid moves by ``U``; in its frame
each cell sees the extra inertial loads ``omega^2 rho_s U`` (membrane) and
``omega^2 M_d U`` (disk), and the unit's momentum balance
``-omega^2 [m_f P^2 U + sum_k s_k (rho_s V_k + M_d W_k + (rho_s pi (a^2 - r0^2) + M_d) U)]
= p P^2`` fixes ``U``. At low frequency the whole tile then moves as one mass.
Cells are small against the wavelength, so the tile is a locally reacting sheet whose
impedance does not depend on the angle of incidence.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .base import Field, Layer, LayerValueError, LayerValueErrors, SheetElement

__all__ = ["Cell", "Tile"]


@dataclass(frozen=True)
class Cell:
    """One kind of membrane-mass cell.

    Parameters
    ----------
    radius : float
        Membrane radius a in m.
    membrane_thickness, membrane_density : float
        m and kg/m^3; rho_s is their product.
    tension : float
        In-plane tension per unit length T in N/m.
    mass, mass_radius : float
        Central disk mass M in kg and radius r0 in m (both 0 for a bare membrane).
    loss_factor : float
        eta of the complex tension T (1 + j eta).
    share : float
        Fraction of the tile's cells that are of this kind.
    """

    radius: float
    membrane_thickness: float
    membrane_density: float
    tension: float
    mass: float = 0.0
    mass_radius: float = 0.0
    loss_factor: float = 0.05
    share: float = 1.0

    def __post_init__(self):
        if self.mass_radius >= self.radius:
            raise LayerValueError("mass_radius", "must be smaller than radius")
        if self.mass > 0 and self.mass_radius == 0:
            raise LayerValueError("mass_radius", "a central mass needs a radius > 0")

    @property
    def surface_density(self) -> float:
        """rho_s = membrane density x thickness, kg/m^2."""
        return self.membrane_density * self.membrane_thickness

    @property
    def disk_mass(self) -> float:
        """Mass moving with the disk: M plus the membrane under it."""
        return self.mass + self.surface_density * np.pi * self.mass_radius**2

    @property
    def total_mass(self) -> float:
        """Membrane plus central mass, kg."""
        return self.surface_density * np.pi * self.radius**2 + self.mass

    def first_membrane_frequency(self) -> float:
        """f01 = j01 / (2 pi a) sqrt(T / rho_s) of the bare clamped membrane, Hz."""
        return 2.404825557695773 / (2 * np.pi * self.radius) * np.sqrt(
            self.tension / self.surface_density)

    def _bessel(self, omega):
        """k, complex tension and the Bessel values at ka and k r0, computed once."""
        from scipy import special  # imported on first use: keeps the package import fast

        omega = np.asarray(omega, dtype=float)
        t = self.tension * (1 + 1j * self.loss_factor)
        k = omega * np.sqrt(self.surface_density / t)
        ka, kr = k * self.radius, k * self.mass_radius
        b = {"j0a": special.jv(0, ka), "j1a": special.jv(1, ka)}
        if self.mass_radius > 0:
            b.update(y0a=special.yv(0, ka), y1a=special.yv(1, ka), j0r=special.jv(0, kr),
                     j1r=special.jv(1, kr), y0r=special.yv(0, kr), y1r=special.yv(1, kr))
        return omega, t, k, b

    def _solve(self, pre, p_m, f_d):
        """Coefficients A, B, q for membrane pressure p_m and disk force f_d."""
        omega, t, k, b = pre
        q = p_m / (k**2 * t)
        if self.mass_radius == 0.0:
            return q / b["j0a"], 0.0, q
        r0, md = self.mass_radius, self.disk_mass
        c1 = -(omega**2) * md * b["j0r"] + 2 * np.pi * r0 * t * k * b["j1r"]
        c2 = -(omega**2) * md * b["y0r"] + 2 * np.pi * r0 * t * k * b["y1r"]
        rhs = f_d - omega**2 * md * q
        det = b["j0a"] * c2 - b["y0a"] * c1
        return (q * c2 - b["y0a"] * rhs) / det, (b["j0a"] * rhs - q * c1) / det, q

    def response(self, omega, p_m, f_d, pre=None):
        """Annulus volume displacement and disk displacement for the loads.

        Returns ``(vol_annulus, disk)``: ``int w dA`` over ``r0 < r < a`` (m^3) and ``W``.
        ``pre`` reuses the Bessel values of :meth:`_bessel` for several load cases.
        """
        pre = pre or self._bessel(omega)
        _, _, k, b = pre
        a, r0 = self.radius, self.mass_radius
        amp_a, amp_b, q = self._solve(pre, p_m, f_d)
        if r0 == 0.0:
            vol = 2 * np.pi * amp_a * a * b["j1a"] / k - q * np.pi * a**2
            return vol, np.zeros_like(vol)
        vol = (2 * np.pi * (amp_a * (a * b["j1a"] - r0 * b["j1r"])
                            + amp_b * (a * b["y1a"] - r0 * b["y1r"])) / k
               - q * np.pi * (a**2 - r0**2))
        return vol, amp_a * b["j0r"] + amp_b * b["y0r"] - q

    def displacement_profile(self, omega: float, r, pressure: float = 1.0):
        """Radial displacement w(r) in m under a uniform pressure (clamped rim)."""
        r = np.asarray(r, dtype=float)
        from scipy import special

        pre = self._bessel(np.asarray(omega, dtype=float))
        amp_a, amp_b, q = self._solve(pre, pressure, pressure * np.pi * self.mass_radius**2)
        k, b = pre[2], pre[3]
        w = amp_a * special.jv(0, k * r) - q
        if self.mass_radius > 0:
            w = w + amp_b * special.yv(0, k * np.maximum(r, self.mass_radius))
            disk = amp_a * b["j0r"] + amp_b * b["y0r"] - q
            w = np.where(r < self.mass_radius, disk, w)
        return w

    def effective_mass(self, omega):
        """m_eff = p / (-omega^2 <w>) of the clamped cell, <w> over the area pi a^2."""
        omega = np.asarray(omega, dtype=float)
        vol, disk = self.response(omega, 1.0, np.pi * self.mass_radius**2)
        mean = (vol + disk * np.pi * self.mass_radius**2) / (np.pi * self.radius**2)
        return 1.0 / (-(omega**2) * mean)


@dataclass(frozen=True)
class Tile(Layer):
    """Array of membrane-mass cells on a square grid, as an impedance sheet.

    Parameters
    ----------
    cells : tuple of Cell
        Cell kinds; their ``share`` values sum to 1.
    pitch : float
        Grid pitch P in m (cell centre spacing), >= every cell's diameter.
    frame : str
        ``"clamped"`` (the grid does not move) or ``"floating"`` (a limp grid mass).
    frame_areal_mass : float
        Grid mass per tile area, kg/m^2.
    tile_thickness : float
        m, for drawings and totals.
    """

    cells: tuple = ()
    pitch: float = 0.0
    frame: str = "floating"
    frame_areal_mass: float = 0.0
    tile_thickness: float = 0.0
    type_name = "tile"

    def __post_init__(self):
        if not self.cells:
            raise LayerValueError("cell", "a tile needs at least one [[layer.cell]]")
        if self.frame not in ("clamped", "floating"):
            raise LayerValueError("frame", f"must be 'clamped' or 'floating', got "
                                           f"{self.frame!r}")
        total = sum(c.share for c in self.cells)
        if abs(total - 1.0) > 1e-6:
            raise LayerValueError("cell", f"shares must sum to 1, got {total:g}")
        for i, c in enumerate(self.cells):
            if 2 * c.radius > self.pitch * (1 + 1e-9):
                raise LayerValueError(f"cell[{i + 1}].radius",
                                      f"cell diameter {2e3 * c.radius:g} mm exceeds the "
                                      f"pitch {1e3 * self.pitch:g} mm")
        if self.frame == "floating" and self.frame_areal_mass <= 0:
            raise LayerValueError("frame_areal_mass", "a floating grid needs its mass > 0")

    @property
    def thickness(self):
        return self.tile_thickness

    @property
    def areal_mass(self):
        cells = sum(c.share * c.total_mass for c in self.cells)
        return self.frame_areal_mass + cells / self.pitch**2

    def mean_displacement(self, omega, pressure=1.0):
        """Tile-averaged displacement per unit pressure, shape of omega (complex)."""
        omega = np.asarray(omega, dtype=float)
        area = self.pitch**2
        rel = 0.0
        inertia_u = self.frame_areal_mass * area
        coupling = 0.0
        unit = []
        shared = {}  # kinds that differ only in mass share their Bessel values
        for c in self.cells:  # loop over cell kinds, not frequencies
            r0a = np.pi * c.mass_radius**2
            key = (c.surface_density, c.tension, c.loss_factor, c.radius, c.mass_radius)
            pre = shared.get(key) or shared.setdefault(key, c._bessel(omega))
            vp, wp = c.response(omega, pressure, pressure * r0a, pre)  # pressure load
            vu, wu = c.response(omega, omega**2 * c.surface_density, omega**2 * c.disk_mass,
                                pre)  # inertial load of a unit grid displacement
            unit.append((c, vp, wp, vu, wu, r0a))
            rel = rel + c.share * (vp + wp * r0a)
            inertia_u = inertia_u + c.share * (c.surface_density * np.pi
                                               * (c.radius**2 - c.mass_radius**2) + c.disk_mass)
            coupling = coupling + c.share * (c.surface_density * vp + c.disk_mass * wp)
        if self.frame == "clamped":
            return rel / area
        # momentum balance of a unit: -w^2 [I U + sum s (rho_s V + M_d W)] = p P^2,
        # where V = vp + U vu and W = wp + U wu
        extra = sum(c.share * (c.surface_density * vu + c.disk_mass * wu)
                    for c, vp, wp, vu, wu, r0a in unit)
        u = -(pressure * area / omega**2 + coupling) / (inertia_u + extra)
        rel_u = sum(c.share * (vu + wu * r0a) for c, vp, wp, vu, wu, r0a in unit)
        return (u * area + rel + u * rel_u) / area

    def effective_mass(self, omega):
        """m_eff = p / (-omega^2 <w>) of the tile, kg/m^2 (negative: stiffness-like)."""
        omega = np.asarray(omega, dtype=float)
        return 1.0 / (-(omega**2) * self.mean_displacement(omega))

    def impedance(self, omega):
        """Sheet impedance ``Z = p / (j omega <w>)``."""
        omega = np.asarray(omega, dtype=float)
        return 1.0 / (1j * omega * self.mean_displacement(omega))

    def element(self, omega, kt, air):
        return SheetElement(self.impedance(omega))

    def with_cell(self, index: int = 0, **changes) -> Tile:
        """A copy with cell ``index`` changed (e.g. ``tension=...``)."""
        cells = list(self.cells)
        cells[index] = replace(cells[index], **changes)
        return replace(self, cells=tuple(cells))

    @classmethod
    def from_values(cls, values):
        """Build from the file schema's SI values; ``values["cell"]`` is a list of dicts
        keyed as :data:`CELL_SCHEMA` (a cell's ``prestress`` sigma gives T = sigma h)."""
        cells, errors = [], []
        for i, v in enumerate(values["cell"], start=1):
            tension = v["tension"] if "tension" in v else v["prestress"] * v["membrane_thickness"]
            try:
                cells.append(Cell(v["radius"], v["membrane_thickness"], v["membrane_density"],
                                  tension, v["mass"], v["mass_radius"], v["loss_factor"],
                                  v["share"]))
            except LayerValueError as exc:
                errors.append(LayerValueError(f"cell[{i}].{exc.key}", exc.reason))
        if errors:
            raise LayerValueErrors(errors)
        return cls(cells=tuple(cells), pitch=values["pitch"], frame=values["frame"],
                   frame_areal_mass=values["frame_areal_mass"],
                   tile_thickness=values.get("thickness", 0.0))


CELL_SCHEMA = {
    "share": Field("number", le=1.0, default=1.0, doc="fraction of the cells of this kind "
                                                      "(the shares sum to 1)"),
    "radius": Field("length", required=True, doc="membrane radius a"),
    "membrane_thickness": Field("length", required=True, doc="membrane thickness h"),
    "membrane_density": Field("density", required=True, doc="membrane material density"),
    "tension": Field("tension", group="tension", required=True,
                     doc="membrane tension per unit length T"),
    "prestress": Field("pressure", group="tension", required=True,
                       doc="membrane stress sigma (T = sigma h)"),
    "mass": Field("mass", allow_zero=True, default=0.0, doc="central disk mass M"),
    "mass_radius": Field("length", allow_zero=True, default=0.0,
                         doc="central disk radius r0 (< radius; > 0 with a mass)"),
    "loss_factor": Field("number", allow_zero=True, le=2.0, default=0.05,
                         doc="loss factor eta of the complex tension T (1 + j eta)"),
    "name": Field("name", doc="label of the cell kind"),
}

Tile.schema = {
    "frame": Field("choice", choices=("clamped", "floating"), default="floating",
                   doc="the grid: clamped (does not move) or floating (a limp mass)"),
    "pitch": Field("length", required=True, doc="grid pitch (cell centre spacing)"),
    "frame_areal_mass": Field("surface_density", allow_zero=True, default=0.0,
                              doc="grid mass per tile area (> 0 for a floating grid)"),
    "thickness": Field("length", doc="tile thickness, for drawings and totals"),
    "cell": Field("tables", required=True, schema=CELL_SCHEMA,
                  doc="the cell kinds, one [[layer.cell]] table each"),
}

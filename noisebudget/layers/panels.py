"""Thin panels as impedance sheets: the limp septum, the plate (isotropic or stiffened,
flat or curved, with or without in-plane tension) and the symmetric sandwich.

Time convention ``exp(+j omega t)``; a loss factor enters as ``D (1 + j eta)``.

Direction. A trace wave ``exp(-j kt (x cos phi + y sin phi))`` runs at azimuth ``phi``
from the axial direction ``x`` (a curved skin's cylinder axis); ``y`` is the hoop
direction. Layers whose impedance depends on ``phi`` say so with ``isotropic = False``
and take ``azimuth`` in :meth:`~noisebudget.layers.base.Layer.element`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .base import Field, Layer, LayerValueError, SheetElement, require

__all__ = ["Plate", "Sandwich", "Septum"]


def series_impedance(series, kt):
    """A sheet's impedance ``A + B s + C s^2 + E s^2 / (1 + F s)``, ``s = kt^2``, from
    ``series = (A, B, C, E, F)`` (a layer's ``kt_series``)."""
    a, b, c, e, f = series
    s = kt * kt
    return a + s * (b + s * c) + e * (s * s) / (1.0 + f * s)


@dataclass(frozen=True)
class Septum(Layer):
    """Limp mass sheet (barrier vinyl, loaded film, foil).

    Parameters
    ----------
    surface_density : float
        kg/m^2.
    sheet_thickness : float
        m, for drawings and totals only.

    Notes
    -----
    ``Z = j omega m``; between equal half-spaces
    ``tau(theta) = |1 + j omega m cos(theta) / (2 rho c)|^-2``
    (Vigran, Building Acoustics, 2008, eq. 6.109).
    """

    surface_density: float = 0.0
    sheet_thickness: float = 0.0
    type_name = "septum"

    @property
    def thickness(self):
        return self.sheet_thickness

    @property
    def areal_mass(self):
        return self.surface_density

    def __post_init__(self):
        require("surface_density", self.surface_density)
        require("thickness", self.sheet_thickness)

    def element(self, omega, kt, air):
        return SheetElement(1j * omega * self.surface_density)

    @classmethod
    def from_values(cls, values):
        return cls(surface_density=values["surface_density"],
                   sheet_thickness=values.get("thickness", 0.0))


Septum.schema = {
    "surface_density": Field("surface_density", required=True, doc="mass per unit area m"),
    "thickness": Field("length", doc="sheet thickness, for drawings and totals"),
}


def _pair(value, key):
    """One value or ``(axial, hoop)`` as a tuple of two floats.

    A batch of variants (:mod:`noisebudget.batch`) holds per-row arrays shaped (n, 1)
    instead of numbers: one such array is one value, a tuple of two is a pair.
    """
    if value is None:
        return None
    if np.ndim(value) == 0:
        return (float(value), float(value))
    if isinstance(value, np.ndarray) and value.ndim == 2:
        return (value, value)
    if len(value) != 2:
        raise LayerValueError(key, f"give one value or two [axial, hoop], got {len(value)}")
    if np.ndim(value[0]) or np.ndim(value[1]):
        return (value[0], value[1])
    return (float(value[0]), float(value[1]))


@dataclass(frozen=True)
class Plate(Layer):
    """Thin plate (Kirchhoff bending and mass) as a locally reacting sheet, flat or curved.

    Optionally stiffened (orthotropic), tensioned in its plane and curved (a cylinder's
    skin).

    Parameters
    ----------
    surface_density : float
        m in kg/m^2.
    bending_stiffness : float or (float, float)
        D in N m, or ``(D_axial, D_hoop)`` of a skin with smeared stringers and frames;
        for a homogeneous plate ``D = E h^3 / (12 (1 - nu^2))``.
    loss_factor : float
        eta, the structural loss factor (complex stiffnesses ``D (1 + j eta)``, and the
        membrane stiffness of a curved skin likewise).
    plate_thickness : float
        h in m.
    in_plane_tension : float or (float, float) or None
        Membrane tension N in N/m, or ``(N_axial, N_hoop)``. ``None`` (not given): zero
        for a flat plate; for a curved plate the stack sets it from its pressure
        difference (see :meth:`pressurised`).
    curvature_radius : float
        R in m of the cylinder whose axis is the axial direction; ``inf`` when flat.
    youngs_modulus, poisson_ratio : float
        E (Pa) and nu of the skin material, for a curved skin's membrane stiffness.

    Notes
    -----
    Impedance at trace wavenumber kt and azimuth phi (``c = cos phi``, ``s = sin phi``)::

        Z = j omega m + [(1 + j eta) D(phi) kt^4 + N(phi) kt^2 + (1 + j eta) K(phi)] / (j omega)

    * Bending (Cremer, Heckl & Petersson, Structure-Borne Sound; Vigran 2008 eq. 6.108):
      isotropic ``D``; a stiffened skin's smeared orthotropic stiffness with Huber's
      torsional term ``H = sqrt(D_a D_h)``, ``D(phi) = (sqrt(D_a) c^2 + sqrt(D_h) s^2)^2``
      (Huber 1923; Heckl, Acustica 10 (1960) 109). Smeared stiffeners describe trace
      waves longer than the stiffener pitch (common practice); shorter waves see the skin
      between stiffeners, which this model does not.
    * Membrane tension: ``N(phi) = N_a c^2 + N_h s^2`` (the tensioned membrane's wave
      equation; Graff, Wave Motion in Elastic Solids, 1975, ch. 4).
    * Curvature: Donnell's shallow-shell theory with in-plane inertia neglected gives the
      hoop membrane stiffness weighted by the axial share of the trace wave,
      ``K(phi) = (E h / R^2) (kx / kt)^4 = (E h / R^2) c^4`` (Donnell 1933; Leissa,
      Vibration of Shells, NASA SP-288, 1973, ch. 2; the curved-panel impedance used by
      Koval, J. Acoust. Soc. Am. 59 (1976) 1379). At normal incidence (kt = 0) the ratio
      kx/kt is undefined; there the skin moves as the uniform breathing of the cylinder,
      whose axial strain vanishes by symmetry (plane strain), ``K = E h / ((1 - nu^2)
      R^2) = m omega_r^2``: ``Z = j omega m (1 - (f_r/f)^2)`` with the ring frequency
      ``f_r = c_L / (2 pi R)``, ``c_L = sqrt(E / (rho (1 - nu^2)))``. The step between the
      two (a factor 1 - nu^2) stands for the in-plane inertia the shallow-shell form
      drops, which matters only within ``kt < omega / c_L`` (about 4 deg of the normal
      for aluminium in air); every oblique angle uses Donnell's form.

    Validity: a locally reacting sheet; bending wavelengths long against h. The curved
    form is a shallow shell (trace wavelengths short against R, i.e. many
    circumferential waves), good below and above the ring frequency; it neglects the
    curvature coupling of in-plane waves and the stiffening of the internal pressure
    beyond the membrane tension. Zero tension and ``R = inf`` give the flat isotropic
    plate exactly.
    """

    surface_density: float = 0.0
    bending_stiffness: float | tuple = 0.0
    loss_factor: float = 0.01
    plate_thickness: float = 0.0
    in_plane_tension: float | tuple | None = None
    curvature_radius: float = np.inf
    youngs_modulus: float | None = None
    poisson_ratio: float = 0.3
    type_name = "plate"

    def __post_init__(self):
        require("surface_density", self.surface_density)
        require("loss_factor", self.loss_factor, high=2.0)
        require("thickness", self.plate_thickness)
        require("poisson_ratio", self.poisson_ratio, high=0.5, below=True)
        if self.youngs_modulus is not None:
            require("youngs_modulus", self.youngs_modulus)
        d = _pair(self.bending_stiffness, "bending_stiffness")
        for v in d:
            require("bending_stiffness", v)
        if d[0] == d[1]:
            d = d[0]
        elif min(d) <= 0:
            raise LayerValueError("bending_stiffness", "must be > 0")
        object.__setattr__(self, "bending_stiffness", d)
        n = _pair(self.in_plane_tension, "in_plane_tension")
        if n is not None and not (min(n) >= 0 and np.all(np.isfinite(n))):
            raise LayerValueError("in_plane_tension", f"must be >= 0 (finite), got {n}")
        object.__setattr__(self, "in_plane_tension", n)
        if not self.curvature_radius > 0:
            raise LayerValueError("curvature_radius", f"must be > 0, got "
                                                      f"{self.curvature_radius}")
        if np.isfinite(self.curvature_radius) and not (
                self.youngs_modulus and self.plate_thickness > 0):
            raise LayerValueError("curvature_radius", "a curved skin needs thickness and "
                                                      "youngs_modulus (its membrane "
                                                      "stiffness)")

    @classmethod
    def from_material(cls, thickness, density, youngs_modulus, poisson_ratio=0.3,
                      loss_factor=0.01, **options) -> Plate:
        """Homogeneous plate from its material constants; ``options`` are the other
        fields (``in_plane_tension``, ``curvature_radius``, ``bending_stiffness``)."""
        d = youngs_modulus * thickness**3 / (12.0 * (1.0 - poisson_ratio**2))
        options.setdefault("bending_stiffness", d)
        return cls(density * thickness, loss_factor=loss_factor, plate_thickness=thickness,
                   youngs_modulus=youngs_modulus, poisson_ratio=poisson_ratio, **options)

    @property
    def thickness(self):
        return self.plate_thickness

    @property
    def areal_mass(self):
        return self.surface_density

    @property
    def stiffnesses(self) -> tuple[float, float]:
        """``(D_axial, D_hoop)`` in N m (equal for an isotropic plate)."""
        return _pair(self.bending_stiffness, "bending_stiffness")

    @property
    def tensions(self) -> tuple[float, float]:
        """``(N_axial, N_hoop)`` in N/m; zero where not given."""
        return self.in_plane_tension or (0.0, 0.0)

    @property
    def isotropic(self) -> bool:
        """True unless stiffness or tension differ between the axes or the skin is
        curved."""
        da, dh = self.stiffnesses
        na, nh = self.tensions
        return bool(np.all(da == dh) and np.all(na == nh)
                    and not np.any(np.isfinite(self.curvature_radius)))

    def parameters(self) -> dict:
        """Plain SI floats for tables: axis pairs split into ``_axial`` and ``_hoop``
        entries, and curvature, tension and material constants only where they apply."""
        out = {"surface_density": self.surface_density}
        for name, pair in (("bending_stiffness", self.stiffnesses),
                           ("in_plane_tension", self.in_plane_tension)):
            if pair is None:
                continue
            a, h = pair
            if a == h:
                out[name] = a
            else:
                out[f"{name}_axial"], out[f"{name}_hoop"] = a, h
        out["loss_factor"] = self.loss_factor
        out["plate_thickness"] = self.plate_thickness
        if np.isfinite(self.curvature_radius):
            out.update(curvature_radius=self.curvature_radius,
                       youngs_modulus=self.youngs_modulus, poisson_ratio=self.poisson_ratio)
        return out

    def ring_frequency(self) -> float:
        """``f_r = c_L / (2 pi R)``, ``c_L = sqrt(E / (rho (1 - nu^2)))`` in Hz (inf when
        flat)."""
        if not np.isfinite(self.curvature_radius):
            return np.inf
        return np.sqrt(self._breathing_stiffness() / self.surface_density) / (2 * np.pi)

    def _breathing_stiffness(self) -> float:
        """``E h / ((1 - nu^2) R^2)``: uniform breathing in plane strain, N/m^3."""
        return (self.youngs_modulus * self.plate_thickness
                / ((1 - self.poisson_ratio**2) * self.curvature_radius**2))

    def coincidence_frequency(self, sound_speed: float, azimuth: float = 0.0) -> float:
        """``fc = (c^2 / 2 pi) sqrt(m / D(phi))`` in Hz (bending alone, flat)."""
        da, dh = self.stiffnesses
        d = (np.sqrt(da) * np.cos(azimuth) ** 2 + np.sqrt(dh) * np.sin(azimuth) ** 2) ** 2
        return sound_speed**2 / (2.0 * np.pi) * np.sqrt(self.surface_density / d)

    def pressurised(self, delta_p: float) -> Plate:
        """The plate mounted where the receiving air is ``delta_p`` above the source air.

        A curved skin without a given tension carries the pressure difference as a
        thin-walled cylinder does (Timoshenko & Woinowsky-Krieger; Roark's Formulas):
        hoop ``N_h = Delta p R`` and axial ``N_a = Delta p R / 2``; none when
        ``Delta p <= 0`` (the curvature, cabin side concave, makes only an internal
        overpressure a tension). Flat plates and given tensions are unchanged.
        """
        if self.in_plane_tension is not None or not np.isfinite(self.curvature_radius):
            return self
        n = max(float(delta_p), 0.0) * self.curvature_radius
        # once per plate object and pressure (it is frozen): a trade study mounts the same
        # skin in every variant's stack
        known = self.__dict__.get("_mounted")
        if known is None or known[0] != n:
            known = (n, replace(self, in_plane_tension=(n / 2, n)))
            object.__setattr__(self, "_mounted", known)
        return known[1]

    def azimuth_series(self, omega):
        """Coefficients of :meth:`azimuth_polynomial` in ``s = kt^2`` per frequency.

        ``z0 = a00 + a01 s + a02 s^2``, ``z1 = a11 s + a12 s^2``, ``z2 = a22 s^2 + a20``
        for ``s > 0``, and at normal incidence (``s = 0``) ``z0 + b`` (the breathing mode,
        whatever the azimuth) with ``z2 = 0``: returns ``(a00, a01, a02, a11, a12, a20,
        a22, b)``, each broadcast from ``omega`` and the plate's numbers. With ``D_a``,
        ``D_h`` the axial and hoop stiffnesses (loss ``1 + j eta``), ``N_a``, ``N_h`` the
        tensions, ``m`` the surface density and ``E h / R^2`` the Donnell hoop stiffness
        (Koval 1976; see the class docstring), all over ``j omega`` but ``a00 = j omega m``.
        """
        loss = 1.0 + 1j * self.loss_factor
        da, dh = self.stiffnesses
        na, nh = self.tensions
        inv = 1.0 / (1j * omega)
        root_a, root_h = np.sqrt(da), np.sqrt(dh)
        zero = 0.0 * inv
        if np.any(np.isfinite(self.curvature_radius)):
            donnell = (loss * self.youngs_modulus * self.plate_thickness
                       / self.curvature_radius**2) * inv
            breathing = loss * self._breathing_stiffness() * inv
        else:
            donnell = breathing = zero
        return (self.surface_density / inv, nh * inv, loss * dh * inv, (na - nh) * inv,
                loss * 2 * root_h * (root_a - root_h) * inv, donnell,
                loss * (root_a - root_h) ** 2 * inv, breathing)

    def azimuth_polynomial(self, omega, kt, air):
        """Coefficients ``(z0, z1, z2)`` of ``Z = z0 + z1 x + z2 x^2``, ``x = cos^2 phi``.

        Shapes broadcast from ``omega`` and ``kt``; used by the stack's closed-form
        azimuth average (:func:`noisebudget.incidence.azimuth_mean_inverse_square`);
        the series in ``kt^2`` of :meth:`azimuth_series` evaluated.
        """
        a00, a01, a02, a11, a12, a20, a22, b = self.azimuth_series(omega)
        s = kt * kt
        z0 = a00 + s * (a01 + s * a02)
        z1 = s * (a11 + s * a12)
        z2 = a22 * (s * s)
        normal = s == 0
        if np.any(normal):  # normal incidence: the breathing mode, whatever the azimuth
            return z0 + np.where(normal, b, 0.0), z1, z2 + np.where(normal, 0.0, a20)
        return z0, z1, z2 + a20

    def kt_series(self, omega):
        """``(A, B, C, E, F)`` of the isotropic plate's impedance ``A + B s + C s^2 + E s^2
        / (1 + F s)`` in ``s = kt^2``: ``j omega m``, ``N / (j omega)``, ``D (1 + j eta) /
        (j omega)``, 0, 0 (thin-plate bending with in-plane tension N; Cremer, Heckl &
        Petersson, Structure-Borne Sound, 2005, ch. 3)."""
        inv = 1.0 / (1j * omega)
        zero = 0.0 * inv
        return (1j * omega * self.surface_density, self.tensions[0] * inv,
                self.bending_stiffness * (1.0 + 1j * self.loss_factor) * inv, zero, zero.real)

    def element(self, omega, kt, air, azimuth=None):
        if self.isotropic:
            return SheetElement(series_impedance(self.kt_series(omega), kt))
        x = np.cos(0.0 if azimuth is None else azimuth) ** 2
        z0, z1, z2 = self.azimuth_polynomial(omega, kt, air)
        return SheetElement(z0 + x * (z1 + x * z2))

    def trace_resonances(self, omega, azimuth=None):
        """Free trace wavenumber where ``Re Z = 0`` (coincidence), shape (nf, k).

        Solves ``D(phi) kt^4 + N(phi) kt^2 + K(phi) = m omega^2`` for kt; NaN where it has
        no root (a curved skin below its curvature-controlled range). Without
        ``azimuth``, direction-dependent plates give the roots along the axial and the
        hoop direction, where by symmetry the root's azimuth dependence is stationary
        (the azimuth-averaged tau has its sharpest features there).
        """
        omega = np.asarray(omega, dtype=float)
        if self.isotropic:
            na = self.tensions[0]
            if not np.any(na):
                return np.sqrt(omega) * (self.surface_density / self.bending_stiffness) ** 0.25
            azimuth = 0.0
        if azimuth is None:
            azimuth = np.array([0.0, np.pi / 2])
        x = np.cos(azimuth) ** 2
        da, dh = self.stiffnesses
        na, nh = self.tensions
        d = (np.sqrt(dh) + (np.sqrt(da) - np.sqrt(dh)) * x) ** 2
        n = nh + (na - nh) * x
        k = 0.0
        if np.any(np.isfinite(self.curvature_radius)):
            k = self.youngs_modulus * self.plate_thickness / self.curvature_radius**2 * x * x
        rest = self.surface_density * omega**2 - k
        with np.errstate(invalid="ignore"):
            s = 2 * rest / (n + np.sqrt(n * n + 4 * d * rest))
            return np.where(rest > 0, np.sqrt(s), np.nan)

    @classmethod
    def from_values(cls, values):
        material = ("density", "youngs_modulus")
        direct = ("surface_density", "bending_stiffness")
        if not all(k in values for k in direct):
            for k in ("thickness", *material):
                if k not in values:
                    raise LayerValueError(k, "missing: a plate needs thickness, density and "
                                             "youngs_modulus (or surface_density and "
                                             "bending_stiffness)")
            mixed = [k for k in direct if k in values]
            if mixed:  # half of the other set: which mass or stiffness was meant?
                raise LayerValueError(mixed[0], "give density and youngs_modulus, or "
                                                "surface_density and bending_stiffness, "
                                                "not both (a stiffened skin gives both of "
                                                "the latter with its skin's material)")
        nu = values.get("poisson_ratio", 0.3)
        if not 0.0 <= nu < 0.5:
            raise LayerValueError("poisson_ratio", f"must lie in [0, 0.5), got {nu}")
        h, e = values.get("thickness", 0.0), values.get("youngs_modulus")
        if "surface_density" in values:  # e.g. a skin with smeared stiffeners' mass
            m = values["surface_density"]
        elif h and "density" in values:
            m = values["density"] * h
        else:
            raise LayerValueError("density", "missing: a plate needs surface_density, or "
                                             "density and thickness")
        if "bending_stiffness" in values:
            d = values["bending_stiffness"]
        elif h and e:
            d = e * h**3 / (12.0 * (1.0 - nu**2))
        else:
            raise LayerValueError("youngs_modulus", "missing: a plate needs "
                                                    "bending_stiffness, or youngs_modulus "
                                                    "and thickness")
        return cls(m, d, values.get("loss_factor", 0.01), h,
                   in_plane_tension=values.get("in_plane_tension"),
                   curvature_radius=values.get("curvature_radius", np.inf),
                   youngs_modulus=e,
                   # without a Young's modulus the ratio enters nothing: keep the default
                   poisson_ratio=nu if e is not None else 0.3)


Plate.schema = {
    "thickness": Field("length", doc="plate thickness h"),
    "density": Field("density", doc="material density (with thickness and youngs_modulus)"),
    "youngs_modulus": Field("modulus", doc="Young's modulus E (with surface_density and "
                                           "bending_stiffness: the skin's, for a curved "
                                           "skin's membrane stiffness)"),
    "poisson_ratio": Field("number", allow_zero=True, lt=0.5, default=0.3,
                           doc="Poisson's ratio nu"),
    "loss_factor": Field("number", allow_zero=True, le=2.0, default=0.01,
                         doc="structural loss factor eta"),
    "surface_density": Field("surface_density",
                             doc="mass per unit area m (instead of density and thickness; "
                                 "with bending_stiffness)"),
    "bending_stiffness": Field("bending_stiffness", shape="one_or_list", length=2,
                               doc="bending stiffness D, or [D_axial, D_hoop] of a skin "
                                   "with smeared stiffeners (with surface_density)"),
    "in_plane_tension": Field("tension", allow_zero=True, shape="one_or_list", length=2,
                              doc="membrane tension N: one value, or [axial, hoop]; a "
                                  "curved skin without it takes the tension of the "
                                  "stack's pressure difference"),
    "curvature_radius": Field("length", doc="radius R of a curved skin (its cylinder's "
                                            "axis is the axial direction); needs thickness "
                                            "and youngs_modulus"),
}


@dataclass(frozen=True)
class Sandwich(Layer):
    """Symmetric sandwich panel (two equal faces on a shear-flexible core) as a sheet.

    Parameters
    ----------
    face_thickness, face_density, face_youngs_modulus, face_poisson_ratio : float
        t_f (m), rho_f (kg/m^3), E_f (Pa), nu_f of each face.
    core_thickness, core_density, core_shear_modulus : float
        h_c (m), rho_c (kg/m^3) and the transverse shear modulus G_c (Pa) of the core.
    loss_factor : float
        eta of the complex stiffnesses (faces and core alike).
    added_surface_density : float
        kg/m^2 carried without stiffness (decor film, adhesive).

    Notes
    -----
    Each face bends about its own mid-plane, ``D_1 = E_f t_f^3 / (12 (1 - nu_f^2))``; the
    two faces together, as membranes a distance ``d = h_c + t_f`` apart, give
    ``D_0 = E_f t_f d^2 / (2 (1 - nu_f^2))``, and the core resists their relative slip
    with the shear stiffness ``S = G_c d^2 / h_c`` (Allen, Analysis and Design of
    Structural Sandwich Panels, 1969; Zenkert, An Introduction to Sandwich
    Construction, 1995). For a trace wave of wavenumber kt the energy of face bending,
    sandwich bending and core shear, minimised over the rotation of the faces' normal,
    leaves the wavenumber-dependent bending stiffness (the sixth-order sandwich theory of
    Mead & Markus, J. Sound Vib. 10 (1969) 163, for plane waves)::

        D(kt) = 2 D_1 + D_0 S / (S + D_0 kt^2)
        Z = j omega m + (1 + j eta) D(kt) kt^4 / (j omega),  m = 2 rho_f t_f + rho_c h_c

    Long waves bend the whole sandwich (``D -> D_0 + 2 D_1``, the full sandwich
    stiffness); in between, the core's shear governs and the wave speed tends to
    ``sqrt(S / m)``; short waves bend the faces apart (``D -> 2 D_1``). These are the
    three regimes of Kurtze & Watters (J. Acoust. Soc. Am. 31 (1959) 739), whose
    design keeps ``sqrt(S / m)`` below the speed of sound so that the panel has no
    coincidence until the faces' own. The same apparent stiffness evaluated on the free
    bending wave is the frequency-dependent stiffness of Nilsson & Nilsson (J. Sound
    Vib. 251 (2002) 409).

    Validity: thin faces (t_f << h_c); the core carries shear only and is
    incompressible (the faces move together: below the core's thickness resonance, far
    above the audio range for honeycomb); an isotropic core shear modulus (a honeycomb's
    ribbon and transverse values differ; take one between them).
    """

    face_thickness: float = 0.0
    face_density: float = 0.0
    face_youngs_modulus: float = 0.0
    face_poisson_ratio: float = 0.3
    core_thickness: float = 0.0
    core_density: float = 0.0
    core_shear_modulus: float = 0.0
    loss_factor: float = 0.01
    added_surface_density: float = 0.0
    type_name = "sandwich"

    def __post_init__(self):
        for name in ("face_thickness", "face_density", "face_youngs_modulus",
                     "core_thickness", "core_shear_modulus"):
            require(name, getattr(self, name), above=True)
        for name in ("core_density", "added_surface_density"):
            require(name, getattr(self, name))
        require("loss_factor", self.loss_factor, high=2.0)
        if not 0.0 <= self.face_poisson_ratio < 0.5:
            raise LayerValueError("face_poisson_ratio", f"must lie in [0, 0.5), got "
                                                        f"{self.face_poisson_ratio}")

    @property
    def thickness(self):
        return 2 * self.face_thickness + self.core_thickness

    @property
    def areal_mass(self):
        return (2 * self.face_density * self.face_thickness
                + self.core_density * self.core_thickness + self.added_surface_density)

    @property
    def face_stiffness(self) -> float:
        """``D_1`` of one face in N m."""
        return (self.face_youngs_modulus * self.face_thickness**3
                / (12 * (1 - self.face_poisson_ratio**2)))

    @property
    def sandwich_stiffness(self) -> float:
        """``D_0`` of the faces as membranes about the mid-plane, N m."""
        d = self.core_thickness + self.face_thickness
        return (self.face_youngs_modulus * self.face_thickness * d**2
                / (2 * (1 - self.face_poisson_ratio**2)))

    @property
    def shear_stiffness(self) -> float:
        """``S = G_c d^2 / h_c`` in N/m."""
        d = self.core_thickness + self.face_thickness
        return self.core_shear_modulus * d**2 / self.core_thickness

    def bending_stiffness(self, kt):
        """``D(kt) = 2 D_1 + D_0 S / (S + D_0 kt^2)`` in N m (real)."""
        d0, s = self.sandwich_stiffness, self.shear_stiffness
        return 2 * self.face_stiffness + d0 * s / (s + d0 * kt * kt)

    def kt_series(self, omega):
        """``(A, B, C, E, F)`` of the impedance ``A + B s + C s^2 + E s^2 / (1 + F s)`` in
        ``s = kt^2``: with ``D(kt) kt^4 = 2 D_1 s^2 + D_0 s^2 / (1 + (D_0 / S) s)``,
        ``A = j omega m``, ``B = 0``, ``C = 2 D_1 (1 + j eta) / (j omega)``, ``E = D_0 (1 +
        j eta) / (j omega)``, ``F = D_0 / S``."""
        loss = (1.0 + 1j * self.loss_factor) / (1j * omega)
        d0 = self.sandwich_stiffness
        return (1j * omega * self.areal_mass, 0.0 * loss, 2 * self.face_stiffness * loss,
                d0 * loss, d0 / self.shear_stiffness + 0.0 * omega)

    def element(self, omega, kt, air):
        return SheetElement(series_impedance(self.kt_series(omega), kt))

    def trace_resonances(self, omega):
        """Free wavenumber ``kB`` of ``D(kB) kB^4 = m omega^2``, (nf, 1).

        ``D(k) k^4`` increases with k, so the root is unique; bisection in ``log k``
        between the faces-only and the full-stiffness roots, vectorised over frequency.
        """
        omega = np.asarray(omega, dtype=float)
        m = self.areal_mass
        lo = np.log(np.sqrt(omega) * (m / (self.sandwich_stiffness
                                           + 2 * self.face_stiffness)) ** 0.25)
        hi = np.log(np.sqrt(omega) * (m / (2 * self.face_stiffness)) ** 0.25)
        for _ in range(60):  # bisection steps, each over all frequencies
            mid = (lo + hi) / 2
            k = np.exp(mid)
            low = self.bending_stiffness(k) * k**4 < m * omega**2
            lo, hi = np.where(low, mid, lo), np.where(low, hi, mid)
        return np.exp((lo + hi) / 2)

    def coincidence_frequency(self, sound_speed: float) -> float:
        """Lowest frequency where the free bending wave runs at ``sound_speed``, Hz.

        With ``s = (omega / c)^2``, ``D(s) s = m c^2``:
        ``2 D_1 D_0 s^2 + (2 D_1 S + D_0 S - m c^2 D_0) s - m c^2 S = 0``.
        """
        d1, d0, sh = self.face_stiffness, self.sandwich_stiffness, self.shear_stiffness
        mc2 = self.areal_mass * sound_speed**2
        a, b, c = 2 * d1 * d0, 2 * d1 * sh + d0 * sh - mc2 * d0, -mc2 * sh
        s = 2 * -c / (b + np.sqrt(b * b - 4 * a * c))
        return sound_speed * np.sqrt(s) / (2 * np.pi)

    @classmethod
    def from_values(cls, values):
        return cls(**{k: v for k, v in values.items() if k != "thickness"})


Sandwich.schema = {
    "face_thickness": Field("length", required=True, doc="thickness t_f of each face"),
    "face_density": Field("density", required=True, doc="density of the faces"),
    "face_youngs_modulus": Field("modulus", required=True, doc="Young's modulus E_f of the "
                                                               "faces"),
    "face_poisson_ratio": Field("number", allow_zero=True, lt=0.5, default=0.3,
                                doc="Poisson's ratio nu_f of the faces"),
    "core_thickness": Field("length", required=True, doc="core thickness h_c"),
    "core_density": Field("density", required=True, allow_zero=True, doc="core density"),
    "core_shear_modulus": Field("modulus", required=True,
                                doc="transverse shear modulus G_c of the core (one value "
                                    "between a honeycomb's ribbon and cross values)"),
    "loss_factor": Field("number", allow_zero=True, le=2.0, default=0.01,
                         doc="loss factor eta of the stiffnesses"),
    "added_surface_density": Field("surface_density", allow_zero=True, default=0.0,
                                   doc="mass per unit area without stiffness (decor film, "
                                       "adhesive)"),
}

"""General solve of a stack with elastic solid and Biot layers, bonded or unbonded.

Time convention ``exp(+j omega t)``. Every medium carries the state vector of its kind
(fluid 2, elastic solid 4, Biot 6; :mod:`noisebudget.wavebasis`); the media meet at
interfaces whose conditions are linear relations between the states on either side
(Allard & Atalla, Propagation of Sound in Porous Media, 2nd ed. 2009, ch. 11; the
porous conditions after Deresiewicz & Skalak, Bull. Seismol. Soc. Am. 53 (1963) 783):

========  ==================================================================
fluid     ``v`` and ``p`` continuous
fluid |   ``v = v_z``, ``sigma_zz = -p``, ``sigma_xz = 0``
 solid
fluid |   ``v = (1 - phi) v_z^s + phi v_z^f``, ``sigma_zz^s = -(1 - phi) p``,
 Biot     ``sigma_zz^f = -phi p``, ``sigma_xz^s = 0``
solid |   frame velocities ``v_x, v_z`` continuous, fluid velocity ``v_z^f = v_z``,
 Biot     total normal stress and shear stress continuous
Biot |    ``v_x^s, v_z^s``, relative flux ``phi (v_z^f - v_z^s)``, total normal stress,
 Biot     shear stress and pore pressure continuous
========  ==================================================================

An unbonded contact between two framed media (``bonding = "unbonded"``) is a film of
air of no thickness between them (Allard & Atalla 2009, ch. 11): both faces carry the
film's pressure and no shear. Sheets are interface relations: between two fluids the
series impedance ``p1 - p2 = Z v``; a plate or septum bonded to a framed medium is an
impervious sheet moving with normal velocity ``w`` and in-plane velocity ``u`` (Kirchhoff
plate; faces at ``-+h/2`` move in-plane with ``u -+ j kt (h/2) w``)::

    sigma_zz(below) - sigma_zz(above) = Z w + j kt (h/2) (sigma_xz(above) + sigma_xz(below))
    (j omega m + C kt^2 / (j omega)) u = sigma_xz(below) - sigma_xz(above)

with ``Z`` the sheet's impedance and ``C = E h / (1 - nu^2) = 12 D / h^2`` its membrane
stiffness (derived from the plate's resultant equations, Cremer, Heckl & Petersson,
Structure-Borne Sound; Allard & Atalla 2009, ch. 11). Other sheets (screens, tiles,
sandwich panels) touch framed media through an air film.

A direction-dependent plate (curved, stiffened or unequally tensioned skin) passes its
impedance at the trace wave's azimuth, ``Z(phi)``, through the same relations. Its
in-plane motion along the trace wave keeps the flat, isotropic membrane stiffness: for a
scalar ``D``, ``12 D / h^2`` as above; for a stiffened skin (``[D_axial, D_hoop]``) the
skin's own ``E h / (1 - nu^2)`` where its Young's modulus is given (the stiffeners'
membrane share neglected), else ``12 D(phi) / h^2``. The curvature term of ``Z(phi)``
is Donnell's for a skin free in its plane; the shear of a bonded frame on the curved
skin's membrane is neglected, which holds while the frame is soft against the skin's
membrane stiffness (foams, damping layers; a stiff solid bonded to a curved skin makes a
shell of its own, which this is not).

Stable solve (recursive reflection matrices; Kennett, Seismic Wave Propagation in
Stratified Media, 1983): starting from the receiving half-space (or a rigid wall), each
interface gives the reflection matrix of the up-going waves of the medium above for its
down-going waves, and the transmission matrix into the medium below; crossing a layer
multiplies by ``exp(-j kz d)`` only (decaying factors), never by its inverse. Every step is
a batched solve of at most 8 x 8 over all frequencies and angles; a thick Biot layer at
high frequency cannot overflow, and the transmitted amplitude at worst underflows to 0.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .layers.base import FluidElement, SheetElement
from .layers.elastic import BiotElement, SolidElement
from .layers.panels import Plate, Septum
from .wavebasis import (
    Medium,
    biot_medium,
    film_medium,
    fluid_medium,
    half_space,
    solid_medium,
)

__all__ = ["BONDING", "Response", "needs_general_solve", "sheet_between_fluids", "solve",
           "solve_angles"]

BONDING = ("bonded", "unbonded")


def needs_general_solve(layers) -> bool:
    """True when any layer is elastic (a solid or a Biot porous layer)."""
    return any(getattr(layer, "elastic", False) for layer in layers)


def sheet_between_fluids(layers, bonding, index: int) -> bool:
    """True when the sheet ``layers[index]`` meets fluid media on both faces in the chain
    of :func:`solve` (a half-space, a fluid or limp layer, or the air film that an
    unbonded contact, a neighbouring sheet or a non-plate sheet puts in between).

    Such a sheet enters the solve only through ``p_above - p_below = Z v``. Whatever the
    media further on (solids, Biot layers), the part in front of it is a linear two-port
    ``L`` between fluid states and the part behind it an input impedance ``Zr`` with a
    fixed ratio ``G = t / v`` to the transmitted wave; so the velocity through the sheet is
    ``v = 2 Y1 p_i / (alpha + (L11 Y1 + L21) Z)`` (``alpha`` free of Z), the transmitted
    amplitude ``t(Z) = t0 / (1 + kappa Z)`` and the reflection factor
    ``(r0 + b Z) / (1 + kappa Z)``: Moebius functions of Z with one shared pole (used by
    :meth:`noisebudget.stack.Stack._tau_azimuth_mean`). A plate or septum bonded to a
    framed medium is not such a sheet (its in-plane motion couples to the frame).
    """
    if not isinstance(layers[index], (Plate, Septum)):
        return True   # other sheets always touch frames through an air film
    bonded = [True] + [b != "unbonded" for b in tuple(bonding)[1:]]
    bonded += [True] * (len(layers) - len(bonded))
    for j, contact in ((index - 1, index), (index + 1, index + 1)):
        if 0 <= j < len(layers) and getattr(layers[j], "elastic", False) and bonded[contact]:
            return False
    return True


@dataclass(frozen=True)
class Response:
    """Plane-wave response of a stack, arrays shaped like the broadcast of omega and kt.

    ``reflection`` is the pressure reflection coefficient at the source face;
    ``transmission`` the transmitted pressure amplitude (None against a rigid wall);
    ``tau`` the power transmission coefficient (intensity ratio along z).
    """

    reflection: np.ndarray
    transmission: np.ndarray | None
    tau: np.ndarray | None


# ----------------------------------------------------------------------------- interfaces

def _unit(n, *idx, weights=None):
    row = np.zeros(n)
    for i, w in zip(idx, weights or [1.0] * len(idx), strict=True):
        row[i] = w
    return row


def _rows(m: Medium) -> dict:
    """Named linear functionals of a face state (see the module docstring)."""
    if m.kind == "F":
        return {"vn": _unit(2, 1), "vs": _unit(2, 1), "tau": _unit(2, 0, weights=[-1.0]),
                "p": _unit(2, 0), "shear": np.zeros(2), "normal": ["vn"]}
    if m.kind == "S":
        return {"ut": _unit(4, 0), "vs": _unit(4, 1), "vn": _unit(4, 1), "tau": _unit(4, 2),
                "shear": _unit(4, 3), "normal": ["vs"]}
    phi = m.porosity
    return {"ut": _unit(6, 0), "vs": _unit(6, 1), "vf": _unit(6, 2),
            "vn": _unit(6, 1, 2, weights=[1 - phi, phi]), "tau": _unit(6, 3, 5),
            "shear": _unit(6, 4), "szzs": _unit(6, 3), "szzf": _unit(6, 5),
            "p": _unit(6, 5, weights=[-1 / phi]), "wrel": _unit(6, 1, 2, weights=[-phi, phi]),
            "normal": ["vs", "vf"]}


def _contact(a: Medium, b: Medium):
    """Conditions of a direct contact: ``(GA, GB)`` with ``GA S_above + GB S_below = 0``."""
    ra, rb = _rows(a), _rows(b)
    kinds = a.kind + b.kind

    def same(*names):
        return [(ra[n], -rb[n]) for n in names]

    if kinds == "FF":
        pairs = same("vn", "p")
    elif "F" in kinds:
        fluid_above = a.kind == "F"
        rf, rs = (ra, rb) if fluid_above else (rb, ra)
        frame = b if fluid_above else a
        pairs = [(rf["vn"], -rs["vn"])]
        if frame.kind == "S":
            pairs.append((rf["tau"], -rs["tau"]))
        else:
            phi = frame.porosity
            pairs += [((1 - phi) * rf["tau"], -rs["szzs"]), (phi * rf["tau"], -rs["szzf"])]
        pairs.append((np.zeros_like(rf["vn"]), rs["shear"]))
        if not fluid_above:
            pairs = [(y, x) for x, y in pairs]
    elif kinds == "SS":
        pairs = same("ut", "vs", "tau", "shear")
    elif kinds == "PP":
        pairs = same("ut", "vs", "wrel", "tau", "shear", "p")
    else:  # solid against Biot: the fluid cannot enter the solid
        rs, rp = (ra, rb) if a.kind == "S" else (rb, ra)
        pairs = [(rs["ut"], -rp["ut"]), (rs["vs"], -rp["vs"]), (rs["vs"], -rp["vf"]),
                 (rs["tau"], -rp["tau"]), (rs["shear"], -rp["shear"])]
        if a.kind != "S":
            pairs = [(y, x) for x, y in pairs]
    return np.array([p[0] for p in pairs]), np.array([p[1] for p in pairs]), None


def _fluid_sheet(a: Medium, b: Medium, zn, zref):
    """A sheet between two fluids: ``v`` continuous, ``p_above - p_below = Z v``."""
    zn = np.asarray(zn) / zref
    shape = zn.shape
    ga = np.zeros(shape + (2, 2), complex)
    gb = np.zeros(shape + (2, 2), complex)
    ga[..., 0, 1], gb[..., 0, 1] = 1, -1
    ga[..., 1, 0], ga[..., 1, 1], gb[..., 1, 0] = 1, -zn, -1
    return ga, gb, None


def _mechanical_sheet(a: Medium, b: Medium, sheet, zref):
    """An impervious plate or septum between media of any kind (module docstring);
    unknowns ``(zref u, zref w)``."""
    zn, zm, jkh, sliding = sheet
    ra, rb = _rows(a), _rows(b)
    shape = np.broadcast_shapes(np.shape(zn), np.shape(zm), np.shape(jkh))
    na, nb = a.down.shape[-2], b.down.shape[-2]
    rows_a, rows_b, rows_x = [], [], []

    def eq(ga, gb, gx):
        rows_a.append(np.broadcast_to(ga, shape + (na,)))
        rows_b.append(np.broadcast_to(gb, shape + (nb,)))
        rows_x.append(np.stack(np.broadcast_arrays(*gx), -1).astype(complex))

    zero_a, zero_b = np.zeros(na), np.zeros(nb)
    zero, one = np.zeros(shape), np.ones(shape)
    for r, rr, sign in ((ra, True, -1.0), (rb, False, 1.0)):
        for name in r["normal"]:
            eq(r[name] if rr else zero_a, zero_b if rr else r[name], (zero, -one))
        if "ut" in r:
            if sliding:
                eq(r["shear"] if rr else zero_a, zero_b if rr else r["shear"], (zero, zero))
            else:
                eq(r["ut"] if rr else zero_a, zero_b if rr else r["ut"],
                   (-one, -sign * jkh * one))
    jkh_a = np.asarray(jkh)[..., None]
    eq(-ra["tau"] - jkh_a * ra["shear"], rb["tau"] - jkh_a * rb["shear"],
       (zero, -np.asarray(zn) / zref * one))
    eq(ra["shear"], -rb["shear"], (np.asarray(zm) / zref * one, zero))
    return np.stack(rows_a, -2), np.stack(rows_b, -2), np.stack(rows_x, -2)


def _membrane_stiffness(plate: Plate, azimuth):
    """Complex in-plane stiffness ``C (1 + j eta)`` of a plate along the trace wave, N/m
    (module docstring)."""
    loss = 1 + 1j * plate.loss_factor
    h = plate.plate_thickness
    da, dh = plate.stiffnesses
    if da == dh:
        return 12 * plate.bending_stiffness * loss / h**2
    if plate.youngs_modulus:
        return plate.youngs_modulus * h / (1 - plate.poisson_ratio**2) * loss
    x = np.cos(0.0 if azimuth is None else azimuth) ** 2
    d = (np.sqrt(dh) + (np.sqrt(da) - np.sqrt(dh)) * x) ** 2
    return 12 * d * loss / h**2


def _sheet_mechanics(layer, element: SheetElement, omega, kt, azimuth=None):
    """``(Z, Z_inplane, j kt h/2, sliding)`` of a plate or septum, None for other sheets;
    ``azimuth`` is the trace wave's for direction-dependent plates."""
    zn = element.impedance
    if isinstance(layer, Plate):
        m, h = layer.surface_density, layer.plate_thickness
        if h > 0:
            c = _membrane_stiffness(layer, azimuth)
            return zn, 1j * omega * m + c * kt**2 / (1j * omega), 0.5j * kt * h, False
        return zn, 1j * omega * m, 0.0, True
    if isinstance(layer, Septum):
        return zn, 1j * omega * layer.surface_density, 0.0, False
    return None


# ------------------------------------------------------------------------------ the chain

def _medium(element, omega, kt, zref) -> Medium:
    if isinstance(element, FluidElement):
        if element.thickness == 0.0:
            return film_medium(np.broadcast_shapes(np.shape(omega), np.shape(kt)))
        return fluid_medium(element.density, element.bulk_modulus, element.thickness,
                            omega, kt, zref)
    if isinstance(element, SolidElement):
        return solid_medium(element, omega, kt, zref)
    if isinstance(element, BiotElement):
        return biot_medium(element, omega, kt, zref)
    raise TypeError(f"unknown element {type(element).__name__}")


def _chain(layers, elements, bonded, omega, kt, zref, first, last, azimuth=None):
    """Media (source first) and the joints between them, air films inserted where a
    contact is unbonded, where two sheets touch, and where a sheet that cannot hold a
    frame (or an unbonded one) touches a framed medium."""
    shape = np.broadcast_shapes(np.shape(omega), np.shape(kt))
    tokens = []  # (medium or None, sheet or None, bonded to the previous token)
    for layer, el, bond in zip(layers, elements, bonded, strict=True):
        if isinstance(el, SheetElement):
            tokens.append((None, (layer, el), bond))
        else:
            tokens.append((_medium(el, omega, kt, zref), None, bond))
    if last is None:  # rigid wall: a sheet on the wall does not move
        while tokens and tokens[-1][0] is None:
            tokens.pop()
    else:
        tokens.append((last, None, True))
    seq = [(first, None, True)]
    for tok in tokens:
        prev = seq[-1]
        framed = [t[0] is not None and t[0].kind != "F" for t in (prev, tok)]
        sheets = [t[1] for t in (prev, tok)]
        if sheets[0] is not None and sheets[1] is not None:
            film = True
        elif sheets[0] is not None or sheets[1] is not None:
            sheet = sheets[0] if sheets[0] is not None else sheets[1]
            mechanical = isinstance(sheet[0], (Plate, Septum))
            film = any(framed) and not (mechanical and tok[2])
        else:
            film = all(framed) and not tok[2]
        if film:
            seq.append((film_medium(shape), None, True))
        seq.append(tok)
    media, joints, pending = [seq[0][0]], [], None
    for medium, sheet, _ in seq[1:]:
        if sheet is not None:
            pending = sheet
            continue
        above = media[-1]
        if pending is None:
            joints.append(_contact(above, medium))
        else:
            layer, el = pending
            if above.kind == "F" and medium.kind == "F":
                joints.append(_fluid_sheet(above, medium, el.impedance, zref))
            else:
                joints.append(_mechanical_sheet(above, medium, _sheet_mechanics(
                    layer, el, omega, kt, azimuth), zref))
        media.append(medium)
        pending = None
    return media, joints


# ------------------------------------------------------------------------------ the solve

def _batch(*arrays):
    shape = np.broadcast_shapes(*[np.shape(x)[:-2] for x in arrays])
    return [np.broadcast_to(x, shape + np.shape(x)[-2:]) for x in arrays]


def _solve_small(lhs, rhs, equilibrate=True):
    """Batched solve, rows equilibrated where a sheet's impedance makes them unequal
    (a contact's rows combine unit columns with weights of order one)."""
    if equilibrate:
        scale = np.max(np.abs(lhs), axis=-1, keepdims=True)
        scale = np.where(scale > 0, scale, 1.0)
        lhs, rhs = lhs / scale, rhs / scale
    try:
        return np.linalg.solve(lhs, rhs)
    except np.linalg.LinAlgError:  # an exactly degenerate point: least squares there
        return np.linalg.pinv(lhs) @ rhs


def _across(medium: Medium, refl):
    """Reflection matrix at the top face from the one at the bottom face."""
    if medium.decay is None:
        return refl
    e = medium.decay
    return e[..., :, None] * refl * e[..., None, :]


def _rigid_wall(medium: Medium):
    """Reflection matrix of a face fixed to a rigid wall: every velocity zero."""
    n = medium.down.shape[-2]
    vel = {"F": [1], "S": [0, 1], "P": [0, 1, 2]}[medium.kind]
    sel = np.eye(n)[vel]
    return -_solve_small(*_batch(sel @ medium.up, sel @ medium.down))


def solve(layers, bonding, elements, omega, kt, source, kz1, receiver=None, kz2=None,
          azimuth=None):
    """Reflection and transmission of plane waves by a stack, vectorised over omega, kt.

    Parameters
    ----------
    layers : sequence of Layer
        Source side first.
    bonding : sequence of str
        Per layer, ``"bonded"`` or ``"unbonded"`` to the previous layer (the first entry
        is not used); shorter sequences are padded with ``"bonded"``.
    elements : sequence
        The layers' elements at (omega, kt).
    omega : ndarray (nf, 1); kt : ndarray (nf, nth)
        Angular frequency and trace wavenumber (any broadcastable leading shape).
    source : Air
        Source half-space; ``kz1`` its normal wavenumber.
    receiver : Air or None
        Receiving half-space with normal wavenumber ``kz2``; None for a rigid wall behind
        the last layer (its frame fixed to the wall).
    azimuth : ndarray or float, optional
        The trace wave's azimuth (broadcasting against ``kt``) for direction-dependent
        plates bonded to a frame; their ``elements`` are already at that azimuth.

    Returns
    -------
    Response
    """
    bonded = [True] + [b != "unbonded" for b in tuple(bonding)[1:]]
    bonded += [True] * (len(layers) - len(bonded))
    zref = source.impedance
    first = half_space(source.density, kz1, omega, zref)
    last = None if receiver is None else half_space(receiver.density, kz2, omega, zref)
    media, joints = _chain(layers, elements, bonded[:len(layers)], omega, kt, zref, first,
                           last, azimuth)
    if last is None:
        refl = _across(media[-1], _rigid_wall(media[-1]))
        basis = media[-1].down + media[-1].up @ refl
    else:
        basis = last.down
    transfers = []
    for i in range(len(joints) - 1, -1, -1):  # loop over interfaces, receiver side first
        above = media[i]
        ga, gb, gx = joints[i]
        cols = [ga @ above.up, gb @ basis] + ([] if gx is None else [gx])
        cols = _batch(*cols)
        rhs = _batch(-(ga @ above.down), cols[0])[0]
        sol = _solve_small(np.concatenate(cols, axis=-1), rhs, gx is not None)
        m_a, m_b = above.size, basis.shape[-1]
        refl = sol[..., :m_a, :]
        transfers.append(sol[..., m_a:m_a + m_b, :])
        if i > 0:
            refl = _across(above, refl)
            basis = above.down + above.up @ refl
    r = refl[..., 0, 0]
    if last is None:
        return Response(r, None, None)
    amp = None
    for i, x in enumerate(reversed(transfers)):  # source side first
        if i > 0 and media[i].decay is not None:
            amp = media[i].decay[..., :, None] * amp
        with np.errstate(under="ignore"):
            amp = x if amp is None else x @ amp
    t = amp[..., 0, 0]
    y1 = kz1 / source.density
    y2 = kz2 / receiver.density
    with np.errstate(under="ignore", divide="ignore", invalid="ignore"):
        tau = np.where(y1.real > 0, np.abs(t) ** 2 * y2.real / y1.real, 0.0)
    return Response(r, t, tau)


def solve_angles(stack, omega, theta, backing="receiver", azimuth=None,
                 override=None) -> Response:
    """:func:`solve` for a :class:`~noisebudget.stack.Stack` at source-side angles theta.

    ``kz1 = k1 cos(theta)``; the receiving air's ``kz2 = sqrt(k2^2 - kt^2)``, negative
    imaginary where evanescent; ``backing`` is ``"receiver"`` or ``"rigid"``. The stack's
    layers as mounted; direction-dependent ones at ``azimuth`` (broadcasting).
    ``override`` maps a layer index to the element used in its place (a sheet's
    impedance set to chosen values, :func:`sheet_between_fluids`).
    """
    k1 = omega / stack.source_air.sound_speed
    kt = k1 * np.sin(theta)
    layers = stack.mounted_layers
    air = stack.cavity_air
    override = override or {}
    elements = [override[i] if i in override
                else layer.element(omega, kt, air) if layer.isotropic
                else layer.element(omega, kt, air, azimuth) for i, layer in enumerate(layers)]
    kz1 = k1 * np.cos(theta)
    bonding = getattr(stack, "bonding", ())
    if backing == "rigid":
        return solve(layers, bonding, elements, omega, kt, stack.source_air, kz1,
                     azimuth=azimuth)
    k2 = omega / stack.receiver_air.sound_speed
    arg2 = k2**2 - k1**2 + (k1 * np.cos(theta)) ** 2
    kz2 = np.where(arg2 >= 0, np.sqrt(np.abs(arg2)) + 0j, -1j * np.sqrt(np.abs(arg2)))
    return solve(layers, bonding, elements, omega, kt, stack.source_air, kz1,
                 stack.receiver_air, kz2, azimuth)

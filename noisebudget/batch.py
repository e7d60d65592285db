"""Transmission of many stacks of one structure at once: variants along a leading axis.

A trade study evaluates thousands of variants of one stack that differ in a few numbers
(a thickness, a tension, a density). Stacks whose layers are of the same classes with the
same non-numeric settings (:func:`structure`) form a batch; each layer's numbers become
arrays over the variants, gathered per *row*, a pair of variant and frequency, as
``(n, 1)`` arrays that broadcast against the angle axis. Layer models compute with those
arrays as with scalars (``tests/test_batch.py`` checks every registered layer type), so
the variants cost one vectorised evaluation instead of a loop over stacks.

Per row, once. The parts of the transfer matrices that depend on frequency only are built
once per row and reused at every angle and every adaptive pass: a fluid layer's ``omega^2
rho / K`` and its two matrix prefactors, the impedance of each sheet that does not depend
on the angle (a tile's Bessel functions, a septum's mass), and the coefficients of each
sheet that does as a series in ``s = kt^2`` (a plate's and a sandwich's ``kt_series``, a
direction-dependent skin's ``azimuth_series``): the rows' *program*. A sheet whose
impedance costs special functions and depends on the frequency only (a tile,
``remember_rows``) is remembered per variant layer and frequency while the layer lives:
a budget's wall and leak front start at the same band nodes.

Per point, one compiled pass (:func:`noisebudget.kernels.transmission`). The receiving
half-space's state ``(1, Y2)`` is carried back through the layers as a vector, ``(P, V) <-
M (P, V)`` (two complex numbers per point instead of a 2 x 2 product), and the denominator
of the transmission coefficient is ``den = Y1 P + V`` (the cascade's ``a Y1 + b Y1 Y2 + c
+ d Y2``). A fluid layer's entries use its scaled cosine and sine from the real ``cos``,
``sin`` and ``expm1`` of the real and imaginary parts of ``kz d`` (``exp(-|Im kz d|)``
factored out and its logarithm accumulated, as :func:`noisebudget.stack.cascade` does).
With one direction-dependent sheet, the layers in front of it carry the row vector ``(Y1,
1)`` forward and the layers behind it the vector ``(1, Y2)`` back, which gives the affine
``den = alpha + beta Z`` of the closed-form azimuth mean.

Per row, adaptive. Angle integrals use :func:`noisebudget.incidence.paris_average_critical`
(each row split at its own features: the layers' coincidences and, for nearly lossless
fluid layers between two masses, the estimated oblique mass-air-mass and cavity
resonances) and band integrals :func:`noisebudget.bands.band_average` with groups; each
row converges on its own, and a variant's numbers do not depend on which variants share
its batch, bit for bit (sums run in a fixed order per row, never through BLAS).

Stacks the batch cannot take (elastic layers, which need the general solve; several
direction-dependent layers, whose azimuth average is nested) are evaluated one by one by
their own :class:`~noisebudget.stack.Stack` methods.

Time convention ``exp(+j omega t)``.
"""

from __future__ import annotations

import threading
import weakref
from dataclasses import fields, is_dataclass
from typing import NamedTuple

import numpy as np

from .bands import Bands, band_average
from .incidence import (
    INCIDENCE,
    CriticalMap,
    paris_average_critical,
)
from .layers.base import FluidElement, SheetElement

__all__ = ["average_rows", "average_transmissions", "band_transmissions", "batchable",
           "structure"]

_BLOCK = 8192        # points per block of the integrand: temporaries stay in the cache
_ROWS = 4096         # rows (variant, frequency) per angle-quadrature call: bounded memory
_FEATURE_STEPS = 3   # linear extrapolations towards a feature's pole
_KNEE_STEPS = 1     # ... and towards the knee at the range's end
_INNER = 3.0        # angle tolerance inside band averages, per unit of the band tolerance
_LOW_LOSS = 0.1      # |Im| / |Re| of rho and K below which a fluid layer resonates sharply


# ---- structure and stacked parameters ----------------------------------------------------

def _number(v) -> bool:
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(
        v, (bool, np.bool_))


def _signature(v):
    """What must be equal for two values to share a batch: everything but the numbers,
    and of a number whether it is zero or infinite (models branch on those)."""
    if _number(v):
        v = float(v)
        return ("number", v == 0.0, v == np.inf, v == -np.inf, v != v)
    if isinstance(v, tuple):
        return ("tuple", tuple(_signature(x) for x in v))
    if is_dataclass(v) and not isinstance(v, type):
        return (type(v), tuple(_signature(getattr(v, f.name)) for f in fields(v)))
    try:
        hash(v)
    except TypeError:
        return ("object", id(v))
    return ("value", v)


def structure(stack) -> tuple:
    """A hashable key: stacks with equal keys can be evaluated as one batch.

    The airs, the bay, the bonding and, per mounted layer, its class and every setting
    that is not a number (and which numbers are zero or infinite) must agree.
    """
    key = stack.__dict__.get("_structure")
    if key is None:  # once per stack object (a stack is frozen): the budget asks often
        key = (stack.source_air, stack.receiver_air, stack.cavity_air, stack.panel,
               stack.bonding, tuple(layer.isotropic for layer in stack.mounted_layers),
               tuple(_signature(layer) for layer in stack.mounted_layers))
        object.__setattr__(stack, "_structure", key)
    return key


def batchable(stack) -> bool:
    """True when the batch computes this stack: no elastic layer (general solve) and at
    most one direction-dependent layer, a sheet with a closed-form azimuth mean."""
    if stack._general:
        return False
    return stack.isotropic or stack._azimuth_sheet() is not None


def _gather(objs):
    """The objects' numbers as arrays over the objects, the rest as it is."""
    first = objs[0]
    if _number(first):
        return np.array(objs, dtype=float)
    if isinstance(first, tuple):
        return tuple(_gather([o[i] for o in objs]) for i in range(len(first)))
    if is_dataclass(first) and not isinstance(first, type):
        return (type(first), {f.name: _gather([getattr(o, f.name) for o in objs])
                              for f in fields(first)})
    return first


def _build(gathered, index, template):
    """An object like ``template`` whose numbers are ``gathered[index]`` as (n, 1) arrays.

    Built without ``__init__``: each variant's own object was validated when it was made.
    """
    if _number(template):
        return gathered[index][:, None]
    if isinstance(template, tuple):
        return tuple(_build(g, index, t) for g, t in zip(gathered, template, strict=True))
    if is_dataclass(template) and not isinstance(template, type):
        cls, values = gathered
        obj = object.__new__(cls)
        for f in fields(template):
            object.__setattr__(obj, f.name, _build(values[f.name], index,
                                                   getattr(template, f.name)))
        return obj
    return template


class _Batch:
    """Stacks of one structure: their layers' numbers gathered per variant."""

    def __init__(self, stacks):
        self.stacks = list(stacks)
        first = self.stacks[0]
        self.first = first
        self.layers = [_gather([s.mounted_layers[i] for s in self.stacks])
                       for i in range(len(first.mounted_layers))]
        self.sheet = None if first.isotropic else first._azimuth_sheet()
        c1, c2 = first.source_air.sound_speed, first.receiver_air.sound_speed
        self.u_critical = (c1 / c2) ** 2
        # per layer, a class per variant: variants whose numbers of that layer are equal
        # share one (a sweep that leaves a tile alone computes its Bessel functions once
        # per frequency, not once per variant)
        self.classes = [_classes(g, len(self.stacks)) for g in self.layers]

    def layers_at(self, var):
        """Each layer with its numbers as (n, 1) arrays for the rows' variants ``var``."""
        return [_build(g, var, t) for g, t in zip(self.layers, self.first.mounted_layers,
                                                  strict=True)]


def _numbers(gathered) -> list:
    """The per-variant number arrays of a gathered layer, flat."""
    if isinstance(gathered, np.ndarray):
        return [gathered]
    if isinstance(gathered, tuple) and len(gathered) == 2 and isinstance(gathered[0], type):
        return [a for v in gathered[1].values() for a in _numbers(v)]
    if isinstance(gathered, tuple):
        return [a for v in gathered for a in _numbers(v)]
    return []


def _classes(gathered, nv: int) -> np.ndarray:
    """Class of each variant (nv,): equal numbers, equal class."""
    cols = _numbers(gathered)
    if not cols:
        return np.zeros(nv, dtype=np.intp)
    back = np.unique(np.column_stack(cols), axis=0, return_inverse=True)[1]
    return back.reshape(-1).astype(np.intp)


def _take(x, back, m):
    """An element's per-row value ``x`` (first axis of the ``m`` distinct rows, or
    broadcast) spread back to all rows."""
    if np.ndim(x) >= 1 and np.shape(x)[0] == m:
        return np.asarray(x)[back]
    return x


def _element_once(layer, cls, om, probe, air):
    """``layer.element`` at the rows, computed once per distinct pair of variant class
    ``cls`` and frequency (each row's value is its own, bit for bit: the models compute
    row by row)."""
    n = om.shape[0]
    # each (class, frequency) as one complex number: a 1-D unique, far faster than one by
    # rows, in the same lexicographic order
    pair = np.empty(n, complex)
    pair.real, pair.imag = cls, om[:, 0]
    first, back = np.unique(pair, return_index=True, return_inverse=True)[1:]
    if first.size == n:
        return layer.element(om, probe, air)
    back = back.reshape(-1)
    el = _rows_of(layer, first).element(om[first], probe[first], air)
    m = first.size
    values = {f.name: _take(getattr(el, f.name), back, m) for f in fields(el)}
    return type(el)(**values)


# per mounted layer (while it lives; equal layers share), its impedance per frequency:
# the walls and the leak fronts of a budget evaluate a tile at the same band nodes
_ROW_MEMO: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()
_ROW_MEMO_LOCK = threading.Lock()
_MEMO_ROWS = 4096   # frequencies remembered per layer at most: bounded memory


def _remembered_sheet(batch, i, layer, var, om, probe, air):
    """The element of layer ``i`` (a sheet whose impedance depends on the frequency only,
    ``remember_rows``) at the rows, each (variant layer, frequency) computed once while
    that layer lives (up to ``_MEMO_ROWS`` frequencies a layer): bit for bit the value of
    a computation of its own (the models compute row by row)."""
    n = var.size
    objs = [s.mounted_layers[i] for s in batch.stacks]
    z = np.empty(n, complex)
    have = np.zeros(n, bool)
    order = np.argsort(var, kind="stable")
    cuts = np.flatnonzero(np.diff(var[order])) + 1
    groups = np.split(order, cuts)
    with _ROW_MEMO_LOCK:
        memos = [_ROW_MEMO.get(objs[var[g[0]]]) for g in groups]
    for g, memo in zip(groups, memos, strict=True):  # a loop over variants
        if memo:
            for r in g:  # dictionary look-ups, row by row
                hit = memo.get(om[r, 0])
                if hit is not None:
                    z[r], have[r] = hit, True
    todo = np.flatnonzero(~have)
    if todo.size:
        el = _rows_of(layer, todo).element(om[todo], probe[todo], air)
        z[todo] = np.broadcast_to(el.impedance, (todo.size, 1))[:, 0]
        with _ROW_MEMO_LOCK:
            for g in groups:  # remember the new rows, per variant layer
                new = g[~have[g]]
                memo = _ROW_MEMO.setdefault(objs[var[g[0]]], {})
                if new.size and len(memo) + new.size <= _MEMO_ROWS:
                    memo.update(zip(om[new, 0].tolist(), z[new].tolist(), strict=True))
    return SheetElement(z[:, None])


class _FluidRows(NamedTuple):
    """A fluid layer's numbers per row, as :func:`noisebudget.kernels.fluid_back` takes
    them: ``q = omega^2 rho / K`` (real and imaginary parts), whether the layer is
    lossless everywhere, the prefactors ``j omega rho d`` and ``j / (omega rho)``, and d."""

    q_re: np.ndarray
    q_im: np.ndarray
    real: bool
    c12: np.ndarray
    c21: np.ndarray
    d: np.ndarray


# ---- the rows: a variant and a frequency each ----------------------------------------------

class _Rows:
    """The frequency-only parts of every layer for rows (variant ``var``, ``omega``)."""

    def __init__(self, batch: _Batch, var, omega, umax=0.0):
        s = batch.first
        self.batch = batch
        self.var = np.asarray(var, dtype=np.intp)
        self.omega = np.asarray(omega, dtype=float)
        n = self.omega.size
        self.k1 = self.omega / s.source_air.sound_speed
        self.z1 = s.source_air.impedance
        self.rho2 = s.receiver_air.density
        self.z2 = s.receiver_air.impedance
        self.air = s.cavity_air
        layers = batch.layers_at(self.var)
        self.layers = layers
        om = self.omega[:, None]
        probe = self.k1[:, None] * np.array([[0.0, 0.5]])
        self.steps = []     # per layer: ("fluid", ...), ("sheet", Z), ("angle", layer)
        self.mass = []      # per layer: Im Z / omega at normal incidence (sheets), or None
        for i, layer in enumerate(layers):
            if i == batch.sheet:
                self.steps.append(("azimuth", layer))
                self.mass.append(None)
                continue
            cls = batch.classes[i]
            if cls.size > 1 and cls.max() + 1 < cls.size:  # variants that share this layer
                el = _element_once(layer, cls[self.var], om, probe, self.air)
            elif getattr(layer, "remember_rows", False):  # each variant its own, costly
                el = _remembered_sheet(batch, i, layer, self.var, om, probe, self.air)
            else:  # each variant's own numbers: a row per (variant, frequency) already
                el = layer.element(om, probe, self.air)
            if isinstance(el, FluidElement):
                rho = np.broadcast_to(el.density, (n, 1))[:, 0]
                bulk = np.broadcast_to(el.bulk_modulus, (n, 1))[:, 0]
                d = np.broadcast_to(el.thickness, (n, 1))[:, 0].astype(float)
                if not np.any(d):
                    self.steps.append(None)
                    self.mass.append(None)
                    continue
                q = self.omega**2 * rho / bulk + 0j
                real = not (np.any(np.imag(rho)) or np.any(np.imag(bulk)))
                self.steps.append(("fluid", _FluidRows(
                    np.ascontiguousarray(q.real), np.ascontiguousarray(q.imag), real,
                    np.ascontiguousarray(1j * self.omega * rho * d, dtype=complex),
                    np.ascontiguousarray(1j / (self.omega * rho), dtype=complex),
                    np.ascontiguousarray(d, dtype=float)), rho, bulk))
                self.mass.append(None)
            elif isinstance(el, SheetElement):
                z = np.asarray(el.impedance)
                zb = np.broadcast_to(z, (n, 2))
                if z.ndim < 2 or z.shape[-1] == 1:
                    self.steps.append(("sheet", zb[:, 0] + 0j))
                else:
                    self.steps.append(("angle", layer))
                self.mass.append(zb[:, 0].imag / self.omega)
            else:
                raise TypeError(f"{type(el).__name__}: not a fluid or sheet element")
        self.table = None
        if s.panel is not None:
            self.table = s.panel.radiation_table(self.omega / s.receiver_air.sound_speed,
                                                 self.k1 * np.sqrt(umax))
        self.program = self._program()

    def _program(self):
        """The steps as :func:`noisebudget.kernels.transmission` takes them: kinds,
        lossless flags, real and complex numbers per (layer, row), the direction-dependent
        sheet's series per row and its index (-1: none)."""
        from . import kernels  # numba loads with the first batch computed

        n, nst = self.omega.size, len(self.steps)
        kind = np.zeros(nst, dtype=np.int64)
        real = np.zeros(nst, dtype=bool)
        rpar = np.zeros((nst, n, 3))
        cpar = np.zeros((nst, n, 4), dtype=complex)
        az = np.zeros((n, 8), dtype=complex)
        om = self.omega[:, None]

        def per_row(x):
            return np.broadcast_to(x, (n, 1))[:, 0]

        for i, step in enumerate(self.steps):  # a loop over the layers
            if step is None:
                continue
            if step[0] == "fluid":
                fr = step[1]
                kind[i], real[i] = kernels.FLUID, fr.real
                rpar[i, :, 0], rpar[i, :, 1], rpar[i, :, 2] = fr.q_re, fr.q_im, fr.d
                cpar[i, :, 0], cpar[i, :, 1] = fr.c12, fr.c21
            elif step[0] == "sheet":
                kind[i] = kernels.SHEET
                cpar[i, :, 0] = step[1]
            elif step[0] == "angle":
                if not hasattr(step[1], "kt_series"):
                    raise TypeError(f"{type(step[1]).__name__}: an angle-dependent sheet "
                                    "needs kt_series to be batched")
                *coef, f = step[1].kt_series(om)
                kind[i] = kernels.SERIES
                for k, c in enumerate(coef):  # the four complex coefficients
                    cpar[i, :, k] = per_row(c)
                rpar[i, :, 0] = per_row(f)
            else:
                kind[i] = kernels.AZIMUTH
                for k, c in enumerate(step[1].azimuth_series(om)):  # eight coefficients
                    az[:, k] = per_row(c)
        sheet = -1 if self.batch.sheet is None else self.batch.sheet
        return kind, real, rpar, cpar, az, sheet

    # features in u = sin^2 theta, NaN where absent ---------------------------------------

    def sharp_u(self):
        """The layers' sharp trace wavenumbers (coincidence) as ``u``, (n, p)."""
        om = self.omega[:, None]
        freqs = back = None
        parts = []
        for i, (layer, t) in enumerate(zip(self.layers, self.batch.first.mounted_layers,
                                           strict=True)):
            cls = self.batch.classes[i]
            if cls.size > 1 and not cls.any():  # every variant's the same: once a frequency
                if freqs is None:
                    freqs, back = np.unique(self.omega, return_inverse=True)
                r = (t.trace_resonances(freqs[:, None]) if t.isotropic
                     else t.trace_resonances(freqs[:, None], None))
                if r is not None:
                    r = np.broadcast_to(r, (freqs.size, np.shape(r)[-1]))[back.reshape(-1)]
            else:
                r = (layer.trace_resonances(om) if t.isotropic
                     else layer.trace_resonances(om, None))
            if r is not None:
                parts.append(np.broadcast_to(r, (om.shape[0], np.shape(r)[-1])))
        if not parts:
            return None
        return (np.concatenate(parts, axis=1) / self.k1[:, None]) ** 2

    def resonance_u(self):
        """Estimated oblique resonances of nearly lossless fluid layers between two masses,
        as ``u``, (n, p).

        A fluid layer of thickness d between masses M1 and M2 (the sheets up to the next
        fluid layer on either side) resonates where ``kz^2 = rho / (d M)``, ``M = M1 M2 /
        (M1 + M2)`` (the lumped mass-air-mass resonance at oblique incidence: the layer's
        stiffness ``K / (d cos^2 theta_layer)``; Fahy & Gardonio, Sound and Structural
        Vibration, 2007, sec. 6.x, double-leaf partitions) and, between heavy sheets, near
        its cavity modes ``kz d = n pi``. With ``kz^2 = omega^2 rho / K - k1^2 u`` each gives
        ``u`` directly; those outside the range are dropped by the quadrature.
        """
        n = self.omega.size
        k1sq = self.k1**2
        out = []
        for i, step in enumerate(self.steps):
            if step is None or step[0] != "fluid":
                continue
            rho, bulk, d = step[2], step[3], step[1].d
            lossy = ((np.abs(np.imag(rho)) > _LOW_LOSS * np.abs(np.real(rho)))
                     | (np.abs(np.imag(bulk)) > _LOW_LOSS * np.abs(np.real(bulk))))
            m1, m2 = self._side_mass(i, -1), self._side_mass(i, 1)
            ok = ~lossy & (m1 > 0) & (m2 > 0)
            if not ok.any():
                continue
            rho, kf2 = np.real(rho), np.real(self.omega**2 * rho / bulk)
            with np.errstate(divide="ignore", invalid="ignore"):
                m = m1 * m2 / (m1 + m2)
                out.append(np.where(ok, (kf2 - rho / (d * m)) / k1sq, np.nan)[:, None])
                modes = np.floor(np.sqrt(np.maximum(kf2, 0.0)) * d / np.pi)
                top = int(np.max(np.where(ok, modes, 0.0), initial=0.0))
                if top:
                    k = np.arange(1, top + 1)[None, :]
                    u = (kf2[:, None] - (k * np.pi / d[:, None]) ** 2) / k1sq[:, None]
                    out.append(np.where(ok[:, None] & (k <= modes[:, None]), u, np.nan))
        if not out:
            return None
        return np.concatenate([np.broadcast_to(o, (n, o.shape[1])) for o in out], axis=1)

    def _side_mass(self, i, direction):
        """Mass per area of the sheets next to layer i on one side, up to the next fluid
        layer (NaN-free; 0 where there are none)."""
        total = np.zeros(self.omega.size)
        j = i + direction
        while 0 <= j < len(self.steps):
            step = self.steps[j]
            if step is not None and step[0] == "fluid":
                break
            if self.mass[j] is not None:
                total = total + self.mass[j]
            j += direction
        return total

    # the integrand ------------------------------------------------------------------------

    def tau(self, rows, u, q):
        """tau at rows ``rows`` (index array), ``u = sin^2 theta`` and ``q = u_c - u``,
        each (len(rows), m); evaluated in blocks of points."""
        m = u.shape[1]
        step = max(1, _BLOCK // max(m, 1))
        if len(rows) <= step:
            return self._tau(rows, u, q)
        out = np.empty(u.shape)
        for i in range(0, len(rows), step):  # blocks of rows: cache-sized temporaries
            out[i:i + step] = self._tau(rows[i:i + step], u[i:i + step], q[i:i + step])
        return out

    def den(self, rows, t, cmap):
        """The denominator ``Y1 P + V`` (scaled by the fluid layers' ``exp(-|Im kz d|)``,
        which has no zeros) at one real point ``t`` of ``cmap`` per row (isotropic
        stacks): the receiving state ``(P, V) = (1, Y2)`` carried back to the front, as
        :func:`noisebudget.kernels.transmission` does."""
        from . import kernels

        u, q, _ = cmap(t[:, None])
        k1 = self.k1[rows][:, None]
        om = self.omega[rows][:, None]
        kt2 = k1 * k1 * u
        y2abs = k1 * np.sqrt(np.abs(q)) / (om * self.rho2)   # |Y2| = |kz2| / (omega rho2)
        scale = np.zeros(u.shape)
        p = np.ones(u.shape, complex)
        v = np.where(q >= 0, y2abs + 0j, -1j * y2abs)
        for step in reversed(self.steps):  # a loop over the layers, back to front
            if step is None:
                continue
            if step[0] == "sheet":
                p += step[1][rows][:, None] * v
            elif step[0] == "angle":
                layer = _rows_of(step[1], rows)
                p += layer.element(om, np.sqrt(kt2), self.air).impedance * v
            else:  # a fluid layer (an isotropic stack has no azimuth step)
                kernels.fluid_back(*step[1], rows, kt2, p, v, scale)
        return (np.sqrt(1.0 - u) / self.z1 * p + v)[:, 0]

    def poles(self, t0, cmap, steps: int = 2):
        """Complex zeros of the denominator next to the real points ``t0`` (n, p) of
        ``cmap`` (NaN: none): ``steps`` linear extrapolations from real points, each
        from the real part of the last estimate (the local Lorentzian fit of the
        integrand's peak; the layers are evaluated at real angles only). They only
        shape the first panels: the adaptive quadrature does the rest.
        """
        n, k = t0.shape
        r = np.repeat(np.arange(n), k)
        t = t0.ravel()
        ok = np.isfinite(t)
        r, t = r[ok], t[ok]
        lo = np.where(t >= 0, cmap.segments[0][0], -np.inf)
        hi = np.where(t >= 0, 1.0, 0.0)
        if len(cmap.segments) > 1:
            lo = np.where(t >= 0, lo, cmap.segments[1][0])
        h = 1e-7
        est = t + 0j
        with np.errstate(all="ignore"):
            for _ in range(steps):  # each over all rows and guesses
                base = np.clip(np.where(np.isfinite(est.real), est.real, t), lo, hi - h)
                d0 = self.den(r, base, cmap)
                d1 = self.den(r, base + h, cmap)
                est = base - d0 * h / (d1 - d0)
        out = np.full(n * k, np.nan + 0j)
        out[np.flatnonzero(ok)] = np.where(np.isfinite(est), est, np.nan)
        return out.reshape(n, k)

    def _tau(self, rows, u, q):
        from . import kernels

        kind, real, rpar, cpar, az, sheet = self.program
        if self.table is None:
            sigma = np.empty((0, 0))
        else:
            k1 = self.k1[rows][:, None]
            sigma = self.table(rows, np.sqrt(k1 * k1 * u))
        out = np.empty(u.shape)
        kernels.transmission(kind, real, rpar, cpar, az, sheet, self.k1, self.omega,
                             self.z1, self.rho2, self.z2, rows, u, q, sigma, out)
        return out


def _rows_of(obj, rows):
    """The layer with its (n, 1) numbers taken at ``rows``."""
    if isinstance(obj, np.ndarray):
        return obj[rows]
    if isinstance(obj, tuple):
        return tuple(_rows_of(x, rows) for x in obj)
    if is_dataclass(obj) and not isinstance(obj, type):
        new = object.__new__(type(obj))
        for f in fields(obj):
            object.__setattr__(new, f.name, _rows_of(getattr(obj, f.name), rows))
        return new
    return obj


# ---- averages ------------------------------------------------------------------------

def _theta_max(incidence, theta_max_deg):
    from . import checks
    from .incidence import default_theta_max_deg

    if incidence not in INCIDENCE:
        raise ValueError(f"incidence must be one of {INCIDENCE}, got {incidence!r}")
    if theta_max_deg is None:
        theta_max_deg = default_theta_max_deg(incidence)
    if incidence != "normal" and not 0.0 < theta_max_deg <= 90.0:
        raise checks.ArgumentError(f"theta_max_deg = {theta_max_deg}: must lie in (0, 90]")
    return np.radians(theta_max_deg)


def _average_rows(batch: _Batch, var, f, incidence, theta_max, rtol, atol=None,
                  rtol_max=None):
    """Incidence-averaged tau at rows (variant ``var``, frequency ``f``), 1-D arrays;
    ``atol`` (per row) and ``rtol_max`` as :func:`noisebudget.incidence.adaptive_panels`
    takes them."""
    out = np.empty(f.size)
    for i in range(0, f.size, _ROWS):  # blocks of rows: bounded memory; rows independent
        sl = slice(i, i + _ROWS)
        out[sl] = _average_block(batch, var[sl], f[sl], incidence, theta_max, rtol,
                                 None if atol is None else atol[sl], rtol_max)
    return out


def _average_block(batch, var, f, incidence, theta_max, rtol, atol=None, rtol_max=None):
    omega = 2 * np.pi * f
    umax = 0.0 if incidence == "normal" else float(np.sin(theta_max) ** 2)
    rows = _Rows(batch, var, omega, umax)
    n = f.size
    if incidence == "normal":
        zero = np.zeros((n, 1))
        tau = rows.tau(np.arange(n), zero, zero + batch.u_critical)[:, 0]
    else:
        cmap = CriticalMap(batch.u_critical, umax, beyond=rows.table is not None)
        feats = [x for x in (rows.sharp_u(), rows.resonance_u()) if x is not None]
        t_feats = cmap.to_t(np.concatenate(feats, axis=1)) if feats else np.empty((n, 0))
        if batch.sheet is None:
            # the features' poles and the knee at the critical angle (or grazing)
            ends = [np.full((n, 1), a if a > 0 else 0.0) for a, _ in cmap.segments]
            poles = np.concatenate([rows.poles(t_feats, cmap, _FEATURE_STEPS),
                                    rows.poles(np.concatenate(ends, axis=1), cmap,
                                               _KNEE_STEPS)], axis=1)
            tau = paris_average_critical(rows.tau, n, cmap, poles=poles, rtol=rtol,
                                         atol=atol, rtol_max=rtol_max)
        else:
            tau = paris_average_critical(rows.tau, n, cmap, splits=t_feats, rtol=rtol,
                                         atol=atol, rtol_max=rtol_max)
    # a bay's radiation efficiency can exceed 1: a nearly transparent stack is held at 1
    return tau if rows.table is None else np.minimum(tau, 1.0)


def _groups(stacks):
    """Indices of the stacks by structure (batchable ones), and the others."""
    groups, others = {}, []
    for i, s in enumerate(stacks):  # grouping by key: one dictionary look-up per stack
        if batchable(s):
            groups.setdefault(structure(s), []).append(i)
        else:
            others.append(i)
    return list(groups.values()), others


def average_transmissions(stacks, f_hz, incidence: str = "field",
                          theta_max_deg: float | None = None, rtol: float = 3e-3,
                          warn: bool = True) -> np.ndarray:
    """Incidence-averaged transmission coefficients of many stacks, shape (nv, nf).

    Each row equals ``stacks[i].average_transmission(f_hz, incidence, theta_max_deg,
    rtol)``, bit for bit. Stacks of one :func:`structure` are computed together.
    """
    from . import checks

    f = checks.frequencies(f_hz)
    theta_max = _theta_max(incidence, theta_max_deg)
    stacks = list(stacks)
    if warn:
        for s in dict.fromkeys(stacks):  # range warnings, once per distinct stack
            s._warn_ranges(f)
    out = np.empty((len(stacks), f.size))
    groups, others = _groups(stacks)
    for idx in groups:  # a loop over structures, each a batch of variants
        batch = _Batch([stacks[i] for i in idx])
        var = np.repeat(np.arange(len(idx)), f.size)
        out[idx] = _average_rows(batch, var, np.tile(f, len(idx)), incidence, theta_max,
                                 rtol).reshape(len(idx), f.size)
    for i in others:  # stacks the batch cannot take: their own nested or general route
        out[i] = stacks[i]._average_nested(f, incidence, theta_max_deg, rtol)
    return out


def average_rows(stacks, index, f_hz, incidence: str = "field",
                 theta_max_deg: float | None = None, rtol: float = 3e-3,
                 warn: bool = True, atol=None, rtol_max: float | None = None) -> np.ndarray:
    """Incidence-averaged tau of ``stacks[index[i]]`` at ``f_hz[i]``, per point (1-D).

    Each value equals the stack's own :meth:`~noisebudget.stack.Stack.average_transmission`
    at that frequency, bit for bit; points of stacks of one :func:`structure` are
    computed together. With ``atol`` (per point) and ``rtol_max``, a point of a batch
    has converged where its estimated error is at most ``max(rtol tau, min(atol,
    rtol_max tau))`` (:func:`noisebudget.incidence.adaptive_panels`); stacks the batch
    cannot take keep ``rtol``.
    """
    from . import checks

    f = checks.frequencies(f_hz)
    index = np.asarray(index, dtype=np.intp)
    theta_max = _theta_max(incidence, theta_max_deg)
    stacks = list(stacks)
    if warn:
        for s in dict.fromkeys(stacks):
            s._warn_ranges(f)
    out = np.empty(f.size)
    groups, others = _groups(stacks)
    for idx in groups:  # a loop over structures, each a batch of variants
        local = np.full(len(stacks), -1)
        local[idx] = np.arange(len(idx))
        sel = np.flatnonzero(local[index] >= 0)
        if sel.size:
            out[sel] = _average_rows(_Batch([stacks[i] for i in idx]), local[index[sel]],
                                     f[sel], incidence, theta_max, rtol,
                                     None if atol is None else np.asarray(atol)[sel],
                                     rtol_max)
    for i in others:
        sel = np.flatnonzero(index == i)
        if sel.size:
            out[sel] = stacks[i]._average_nested(f[sel], incidence, theta_max_deg, rtol)
    return out


def band_transmissions(stacks, bands: Bands, incidence: str = "field",
                       theta_max_deg: float | None = None, rtol: float = 3e-3,
                       warn: bool = True) -> np.ndarray:
    """Band-averaged transmission coefficients of many stacks, shape (nv, nb).

    Each row equals ``10 ** (-stacks[i].band_transmission_loss(bands, incidence,
    theta_max_deg, rtol) / 10)`` before its 300 dB cap, bit for bit: energy averages
    over each band (:func:`noisebudget.bands.band_average`, one group per stack), of the
    incidence average at ``3 rtol``.
    """
    from . import checks

    edges = checks.frequencies(np.concatenate([bands.lower, bands.upper]), "band edges")
    theta_max = _theta_max(incidence, theta_max_deg)
    stacks = list(stacks)
    if warn:
        for s in dict.fromkeys(stacks):
            s._warn_ranges(edges)
    out = np.empty((len(stacks), len(bands)))
    groups, others = _groups(stacks)
    for idx in groups:  # a loop over structures, each a batch of variants
        batch = _Batch([stacks[i] for i in idx])
        out[idx] = band_average(lambda g, f, batch=batch: _average_rows(
            batch, g, f, incidence, theta_max, _INNER * rtol), bands, rtol, groups=len(idx))
    for i in others:
        s = stacks[i]
        out[i] = band_average(lambda f, s=s: s._average_nested(f, incidence, theta_max_deg,
                                                               3 * rtol), bands, rtol)
    return out

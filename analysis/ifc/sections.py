"""Section properties of IFC profile definitions.

Axes
----
Member local y is parallel to the profile's xp axis and local z to its yp
axis (IfcStructuralCurveMember: the profile's xp, yp are parallel with the
member's local y, z). Hence

* ``Iy = ∫ z² dA`` is the second moment about the profile x axis (for an
  I-shape, whose depth runs along yp, the MAJOR axis),
* ``Iz = ∫ y² dA`` is the second moment about the profile y axis,
* ``Iyz = ∫ y z dA`` is the product of inertia,

all about centroidal axes parallel to the axes of the profile's underlying
coordinate system (the xy plane of the sweep, i.e. of the member axis).
``cy, cz`` are the centroid's coordinates in that underlying system, so they
include the parameterised profile's ``Position``. With the default
``Position`` they are the centroid's offset from the centre of the bounding
box, which IFC makes the origin of every parameterised profile (IFC2x3 and
later): zero for doubly symmetric shapes, non-zero for L, T, U, C,
asymmetric I and trapezium shapes.

Orientation of the parameterised shapes (as ifcopenshell's geometry kernel
builds them, and as the IFC figures show): L with its corner at bottom
left, horizontal leg (Width) along +x and vertical leg (Depth) along +y;
U and C with the web on the -x side; T with the flange at +y; Z with the
bottom flange running towards +x and the top flange towards -x, each flange
reaching ``FlangeWidth`` from the web's centre line (so ``Iyz < 0``);
asymmetric I with the bottom flange at -y.

Exact versus approximate
------------------------
Exact (closed form): ``A``, ``Iy``, ``Iz``, ``Iyz``, ``cy``, ``cz`` of every
parameterised profile, including fillet radii and edge radii (each rounded
corner is an exact "spandrel" — square minus quarter disc — added or
removed) and the rounded corners of hollow rectangles and C-shapes. Flange,
leg and web slopes are NOT modelled: the shape is taken with parallel faces
of the given thickness and a warning is logged.

Exact to the discretisation (relative chord error 1e-5, i.e. about 1e-5 in
the area): arbitrary profiles, by Green's theorem on the polygonised
outline and voids.

``J``: exact for circle, hollow circle and ellipse; Saint-Venant series for
the solid rectangle; Bredt plus open-wall term for hollow rectangles;
thin-walled open formula ``Σ b t³ / 3`` for L, U, C, Z, with the
El Darwish–Johnston fillet/junction correction for I and T shapes;
``A⁴ / (40 Ip)`` for trapezium and arbitrary profiles (a warning is logged).
Shear areas are engineering approximations, named beside each formula.
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Callable

import numpy as np

from ..errors import IfcInputError

if TYPE_CHECKING:  # pragma: no cover
    import ifcopenshell

__all__ = [
    "SectionProperties",
    "section_properties",
    "section_from_pset",
    "PSET_PROFILE_MECHANICAL",
    "PSET_FIELD_UNITS",
]

logger = logging.getLogger(__name__)

#: relative chord error used when curves are polygonised
CHORD_TOLERANCE = 1e-5
_POISSON_FOR_SHEAR = 0.3  # Poisson's ratio assumed in Cowper's shear coefficients


@dataclass(frozen=True, slots=True)
class SectionProperties:
    """Cross-section properties in the PROFILE's own length unit (the caller converts).

    ``A`` [L²], ``Iy = ∫z² dA`` (about profile x) [L⁴], ``Iz = ∫y² dA``
    (about profile y) [L⁴], ``J`` torsion constant [L⁴], ``Avy``/``Avz``
    shear areas for a shear force along local y (profile x) / local z
    (profile y) [L²], ``Iyz`` product of inertia [L⁴], ``cy``/``cz`` centroid
    in the profile's underlying x/y axes [L], ``name`` the ProfileName.
    """

    A: float
    Iy: float
    Iz: float
    J: float
    Avy: float
    Avz: float
    Iyz: float = 0.0
    cy: float = 0.0
    cz: float = 0.0
    name: str = ""


# --------------------------------------------------------------------------
# Area moments
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Moments:
    """Raw area integrals about the origin: A=∫dA, S=(∫x, ∫y), Q=[[∫x², ∫xy], [∫xy, ∫y²]]."""

    A: float
    S: np.ndarray  # (2,)
    Q: np.ndarray  # (2, 2)

    def __add__(self, other: "_Moments") -> "_Moments":
        return _Moments(self.A + other.A, self.S + other.S, self.Q + other.Q)

    def __neg__(self) -> "_Moments":
        return _Moments(-self.A, -self.S, -self.Q)

    def __sub__(self, other: "_Moments") -> "_Moments":
        return self + (-other)

    def transformed(self, M: np.ndarray, t: np.ndarray) -> "_Moments":
        """Moments of the image of the area under x' = M x + t."""
        d = abs(float(np.linalg.det(M)))
        S = M @ self.S + t * self.A
        MS = np.outer(M @ self.S, t)
        Q = M @ self.Q @ M.T + MS + MS.T + self.A * np.outer(t, t)
        return _Moments(d * self.A, d * S, d * Q)

    def centroid(self) -> np.ndarray:
        return self.S / self.A

    def central(self) -> np.ndarray:
        """Central tensor [[∫x², ∫xy], [∫xy, ∫y²]] about the centroid."""
        c = self.centroid()
        return self.Q - self.A * np.outer(c, c)


_ZERO = _Moments(0.0, np.zeros(2), np.zeros((2, 2)))


def _polygon(xy: np.ndarray) -> _Moments:
    """Green's theorem moments of a closed polygon (n,2); sign follows the orientation."""
    x0, y0 = xy[:, 0], xy[:, 1]
    x1, y1 = np.roll(x0, -1), np.roll(y0, -1)
    cr = x0 * y1 - x1 * y0
    A = cr.sum() / 2.0
    Sx = ((x0 + x1) * cr).sum() / 6.0
    Sy = ((y0 + y1) * cr).sum() / 6.0
    Qxx = ((x0 * x0 + x0 * x1 + x1 * x1) * cr).sum() / 12.0
    Qyy = ((y0 * y0 + y0 * y1 + y1 * y1) * cr).sum() / 12.0
    Qxy = ((x0 * y1 + 2 * x0 * y0 + 2 * x1 * y1 + x1 * y0) * cr).sum() / 24.0
    return _Moments(float(A), np.array([Sx, Sy]), np.array([[Qxx, Qxy], [Qxy, Qyy]]))


def _area(xy: np.ndarray) -> _Moments:
    """Moments of a polygon's area, positive whatever its orientation."""
    m = _polygon(np.asarray(xy, dtype=float))
    return -m if m.A < 0 else m


def _rect(x0: float, x1: float, y0: float, y1: float) -> _Moments:
    return _area(np.array([[x0, y0], [x1, y0], [x1, y1], [x0, y1]]))


def _spandrel(cx: float, cy: float, sx: float, sy: float, r: float) -> _Moments:
    """The region between a square r×r at corner (cx, cy) and the quarter disc
    of radius r centred at (cx + sx r, cy + sy r): what a fillet adds in an
    inner corner, or what an edge radius removes from an outer corner.

    Exact closed form (derived here; checked against polygon integration in
    the tests): with u, v measured from the corner into the square,
    ∫dA = (1 - π/4) r², ∫u dA = (5/6 - π/4) r³, ∫u² dA = (1 - 5π/16) r⁴,
    ∫uv dA = (19/24 - π/4) r⁴.
    """
    if r <= 0.0:
        return _ZERO
    a = (1.0 - math.pi / 4.0) * r * r
    u1 = (5.0 / 6.0 - math.pi / 4.0) * r**3
    u2 = (1.0 - 5.0 * math.pi / 16.0) * r**4
    uv = (19.0 / 24.0 - math.pi / 4.0) * r**4
    Sx = a * cx + sx * u1
    Sy = a * cy + sy * u1
    Qxx = a * cx * cx + 2 * cx * sx * u1 + u2
    Qyy = a * cy * cy + 2 * cy * sy * u1 + u2
    Qxy = a * cx * cy + cx * sy * u1 + cy * sx * u1 + sx * sy * uv
    return _Moments(a, np.array([Sx, Sy]), np.array([[Qxx, Qxy], [Qxy, Qyy]]))


def _ellipse_moments(a: float, b: float) -> _Moments:
    """Centred ellipse, semi-axis a along x, b along y (exact)."""
    A = math.pi * a * b
    return _Moments(A, np.zeros(2), np.diag([A * a * a / 4.0, A * b * b / 4.0]))


# --------------------------------------------------------------------------
# Internal section record: moments in the underlying frame, J, shear tensor
# --------------------------------------------------------------------------


@dataclass
class _Section:
    m: _Moments
    J: float
    K: np.ndarray  # (2,2) shear-area tensor in the frame: diag(Avy, Avz) rotated
    notes: list[str] = field(default_factory=list)

    def transformed(self, M: np.ndarray, t: np.ndarray) -> "_Section":
        d = abs(float(np.linalg.det(M)))
        U = M / math.sqrt(d)  # rotation (or reflection) part for a uniform scale
        return _Section(self.m.transformed(M, t), self.J * d * d, d * (U @ self.K @ U.T), list(self.notes))


def _label(profile) -> str:
    try:
        name = profile.ProfileName
    except Exception:  # not a profile
        name = None
    return f"#{profile.id()} {profile.is_a()} '{name or ''}'"


def _fail(profile, message: str) -> IfcInputError:
    return IfcInputError(f"{_label(profile)}: {message}", profile.id())


def _get(profile, *names: str) -> Any:
    """First attribute among ``names`` that the entity's schema defines (None if unset)."""
    for n in names:
        try:
            return getattr(profile, n)
        except AttributeError:
            continue
    return None


def _dim(profile, *names: str) -> float:
    """A required positive, finite dimension."""
    v = _get(profile, *names)
    if v is None:
        raise _fail(profile, f"{names[0]} is missing")
    v = float(v)
    if not math.isfinite(v) or v <= 0.0:
        raise _fail(profile, f"{names[0]} must be positive and finite, got {v!r}")
    return v


def _opt(profile, *names: str) -> float:
    """An optional non-negative dimension (radius): 0 when unset."""
    v = _get(profile, *names)
    if v is None:
        return 0.0
    v = float(v)
    if not math.isfinite(v) or v < 0.0:
        raise _fail(profile, f"{names[0]} must be non-negative and finite, got {v!r}")
    return v


def _require(profile, condition: bool, message: str) -> None:
    if not condition:
        raise _fail(profile, message)


def _warn_slopes(profile, *names: str) -> None:
    for n in names:
        v = _get(profile, n)
        if v:
            logger.warning(
                "%s: %s = %g is not modelled; faces are taken parallel (approximate A, I)",
                _label(profile),
                n,
                float(v),
            )


def _diag(avy: float, avz: float) -> np.ndarray:
    return np.diag([avy, avz]).astype(float)


def _placement2d(placement) -> tuple[np.ndarray, np.ndarray]:
    """Rotation matrix (columns = local x, y axes) and origin of an IfcAxis2Placement."""
    if placement is None:
        return np.eye(2), np.zeros(2)
    loc = np.array(placement.Location.Coordinates[:2], dtype=float)
    ref = getattr(placement, "RefDirection", None)
    d = np.array(ref.DirectionRatios[:2], dtype=float) if ref is not None else np.array([1.0, 0.0])
    n = np.hypot(*d)
    d = d / n if n > 0 else np.array([1.0, 0.0])
    R = np.array([[d[0], -d[1]], [d[1], d[0]]])
    return R, loc


# --------------------------------------------------------------------------
# Torsion and shear helpers (sources named beside each formula)
# --------------------------------------------------------------------------


def _j_rectangle(a: float, b: float) -> float:
    """Solid rectangle, Saint-Venant series (Timoshenko & Goodier, Theory of
    Elasticity, torsion of rectangular bars — from memory; same as Roark's
    Table 10.1 rectangle to its stated accuracy)."""
    a, b = max(a, b), min(a, b)
    s = sum(math.tanh(n * math.pi * a / (2.0 * b)) / n**5 for n in range(1, 40, 2))
    return a * b**3 / 3.0 * (1.0 - 192.0 / math.pi**5 * (b / a) * s)


def _junction(tf: float, tw: float, r: float) -> float:
    """alpha * D**4 of a web-flange T junction with fillet radius r
    (El Darwish & Johnston, "Torsion of structural shapes", ASCE J. Struct.
    Div. 1965 — from memory; the formula used by European section tables)."""
    alpha = -0.042 + 0.2204 * tw / tf + 0.1355 * r / tf - 0.0865 * r * tw / tf**2 - 0.0725 * tw**2 / tf**2
    D = ((tf + r) ** 2 + tw * (r + tw / 4.0)) / (2.0 * r + tf)
    return alpha * D**4


def _cowper_circle(m: float) -> float:
    """Shear coefficient of a (hollow) circle, m = r_inner / r_outer
    (Cowper, "The shear coefficient in Timoshenko's beam theory", J. Appl.
    Mech. 1966 — from memory), with nu = 0.3."""
    nu = _POISSON_FOR_SHEAR
    m2 = (1.0 + m * m) ** 2
    return 6.0 * (1.0 + nu) * m2 / ((7.0 + 6.0 * nu) * m2 + (20.0 + 12.0 * nu) * m * m)


def _j_saint_venant(m: _Moments) -> float:
    """J ≈ A⁴ / (40 Ip): Saint-Venant's approximation for compact solid
    sections (Saint-Venant 1856, as quoted by Timoshenko & Goodier — from
    memory); errors of several per cent, worse for slender or hollow shapes."""
    C = m.central()
    Ip = C[0, 0] + C[1, 1]
    return m.A**4 / (40.0 * Ip) if Ip > 0 else 0.0


# --------------------------------------------------------------------------
# Parameterised profiles (local frame of Position)
# --------------------------------------------------------------------------


def _rectangle(p) -> _Section:
    b, h = _dim(p, "XDim"), _dim(p, "YDim")
    # 5/6 A: Timoshenko shear coefficient of a rectangle (common practice)
    return _Section(_rect(-b / 2, b / 2, -h / 2, h / 2), _j_rectangle(b, h), _diag(5 / 6 * b * h, 5 / 6 * b * h))


def _rounded_rectangle(p) -> _Section:
    b, h = _dim(p, "XDim"), _dim(p, "YDim")
    r = _opt(p, "RoundingRadius")
    _require(p, 2 * r <= min(b, h), f"RoundingRadius {r:g} exceeds half of the smaller side")
    m = _rect(-b / 2, b / 2, -h / 2, h / 2)
    for sx in (-1, 1):
        for sy in (-1, 1):
            m = m - _spandrel(sx * b / 2, sy * h / 2, -sx, -sy, r)
    # J: rectangle series, rounding ignored (slight over-estimate); 5/6 A as rectangle
    return _Section(m, _j_rectangle(b, h), _diag(5 / 6 * m.A, 5 / 6 * m.A))


def _rectangle_hollow(p) -> _Section:
    b, h, t = _dim(p, "XDim"), _dim(p, "YDim"), _dim(p, "WallThickness")
    ri, ro = _opt(p, "InnerFilletRadius"), _opt(p, "OuterFilletRadius")
    _require(p, 2 * t < min(b, h), f"WallThickness {t:g} leaves no void")
    _require(p, ro <= min(b, h) / 2 and ri <= min(b, h) / 2 - t, "fillet radius too large for the section")
    bi, hi = b - 2 * t, h - 2 * t
    m = _rect(-b / 2, b / 2, -h / 2, h / 2) - _rect(-bi / 2, bi / 2, -hi / 2, hi / 2)
    for sx in (-1, 1):
        for sy in (-1, 1):
            m = m - _spandrel(sx * b / 2, sy * h / 2, -sx, -sy, ro)  # rounded outside
            m = m + _spandrel(sx * bi / 2, sy * hi / 2, -sx, -sy, ri)  # rounded void
    # Bredt's formula on the mid-line plus the open-wall term p t³/3
    # (Roark's Formulas for Stress and Strain, Table 10.7 thin-walled closed
    # sections — from memory), mid-line corner radius rm.
    rm = ro - t / 2 if ro >= t / 2 else (ri + t / 2 if ri > 0 else 0.0)
    Am = (b - t) * (h - t) - (4 - math.pi) * rm * rm
    per = 2 * (b - t) + 2 * (h - t) - (8 - 2 * math.pi) * rm
    J = 4 * Am * Am * t / per + per * t**3 / 3
    # shear areas A h/(b+h) along the depth, A b/(b+h) along the width
    # (EN 1993-1-1 §6.2.6(3) for rectangular hollow sections — from memory)
    return _Section(m, J, _diag(m.A * b / (b + h), m.A * h / (b + h)))


def _circle(p) -> _Section:
    r = _dim(p, "Radius")
    m = _ellipse_moments(r, r)
    k = _cowper_circle(0.0)  # 0.886 for nu = 0.3
    return _Section(m, math.pi * r**4 / 2, _diag(k * m.A, k * m.A))  # J exact


def _circle_hollow(p) -> _Section:
    r, t = _dim(p, "Radius"), _dim(p, "WallThickness")
    _require(p, t < r, f"WallThickness {t:g} must be smaller than Radius {r:g}")
    ri = r - t
    m = _ellipse_moments(r, r) - _ellipse_moments(ri, ri)
    k = _cowper_circle(ri / r)  # -> 0.53 for thin tubes
    return _Section(m, math.pi * (r**4 - ri**4) / 2, _diag(k * m.A, k * m.A))  # J exact


def _ellipse(p) -> _Section:
    a, b = _dim(p, "SemiAxis1"), _dim(p, "SemiAxis2")
    m = _ellipse_moments(a, b)
    # J exact (Saint-Venant; Roark's Table 10.7 solid ellipse — from memory)
    J = math.pi * a**3 * b**3 / (a * a + b * b)
    k = _cowper_circle(0.0)  # circle value used for the ellipse (approximate)
    return _Section(m, J, _diag(k * m.A, k * m.A))


def _i_parts(h, bb, tfb, rb, reb, bt, tft, rt, ret, tw) -> _Moments:
    """Asymmetric I centred on its bounding box; bottom flange at -y."""
    yb, yt = -h / 2 + tfb, h / 2 - tft
    m = _rect(-bb / 2, bb / 2, -h / 2, yb) + _rect(-bt / 2, bt / 2, yt, h / 2) + _rect(-tw / 2, tw / 2, yb, yt)
    for s in (-1, 1):
        m = m + _spandrel(s * tw / 2, yb, s, 1, rb) + _spandrel(s * tw / 2, yt, s, -1, rt)  # fillets
        m = m - _spandrel(s * bb / 2, yb, -s, -1, reb) - _spandrel(s * bt / 2, yt, -s, 1, ret)  # flange edges
    return m


def _i_section(p, h, bb, tfb, rb, reb, bt, tft, rt, ret, tw) -> _Section:
    _require(p, tfb + tft < h, "flange thicknesses exceed the overall depth")
    _require(p, tw < min(bb, bt), "web thickness exceeds a flange width")
    _require(
        p,
        tw / 2 + rb + reb <= bb / 2 * (1 + 1e-12) and tw / 2 + rt + ret <= bt / 2 * (1 + 1e-12),
        "radii do not fit on the flanges",
    )
    _require(p, rb + rt <= h - tfb - tft, "fillet radii do not fit on the web")
    m = _i_parts(h, bb, tfb, rb, reb, bt, tft, rt, ret, tw)
    # Open thin-walled J = Σ b t³/3 with flange-end corrections -0.21 t⁴ per
    # flange (two free ends of 0.105 t⁴ each) and El Darwish–Johnston junctions.
    J = (
        (bb * tfb**3 + bt * tft**3) / 3
        + (h - tfb - tft) * tw**3 / 3
        + _junction(tfb, tw, rb)
        + _junction(tft, tw, rt)
        - 0.21 * (tfb**4 + tft**4)
    )
    # Avz: web area d·tw (AISC Specification G2.1 — from memory);
    # Avy: 5/6 of the flange areas (flanges as rectangles, common practice).
    return _Section(m, J, _diag(5 / 6 * (bb * tfb + bt * tft), h * tw))


def _i_shape(p) -> _Section:
    b, h = _dim(p, "OverallWidth"), _dim(p, "OverallDepth")
    tw, tf = _dim(p, "WebThickness"), _dim(p, "FlangeThickness")
    r, re = _opt(p, "FilletRadius"), _opt(p, "FlangeEdgeRadius")  # FlangeEdgeRadius: IFC4 and later
    _warn_slopes(p, "FlangeSlope")
    return _i_section(p, h, b, tf, r, re, b, tf, r, re, tw)


def _asymmetric_i_shape(p) -> _Section:
    # IFC4+: BottomFlange*; IFC2X3 (subtype of IfcIShapeProfileDef): OverallWidth etc.
    bb = _dim(p, "BottomFlangeWidth", "OverallWidth")
    h = _dim(p, "OverallDepth")
    tw = _dim(p, "WebThickness")
    tfb = _dim(p, "BottomFlangeThickness", "FlangeThickness")
    rb = _opt(p, "BottomFlangeFilletRadius", "FilletRadius")
    bt = _dim(p, "TopFlangeWidth")
    tft = _get(p, "TopFlangeThickness")
    tft = tfb if tft is None else _dim(p, "TopFlangeThickness")
    rt = _get(p, "TopFlangeFilletRadius")
    rt = rb if rt is None else _opt(p, "TopFlangeFilletRadius")
    reb, ret = _opt(p, "BottomFlangeEdgeRadius"), _opt(p, "TopFlangeEdgeRadius")
    _warn_slopes(p, "BottomFlangeSlope", "TopFlangeSlope")
    return _i_section(p, h, bb, tfb, rb, reb, bt, tft, rt, ret, tw)


def _l_shape(p) -> _Section:
    h, t = _dim(p, "Depth"), _dim(p, "Thickness")
    b = _dim(p, "Width") if _get(p, "Width") is not None else h  # Width optional: equal legs
    r, re = _opt(p, "FilletRadius"), _opt(p, "EdgeRadius")
    _warn_slopes(p, "LegSlope")
    _require(p, t < min(b, h), "Thickness must be smaller than Depth and Width")
    x0, y0 = -b / 2, -h / 2
    m = _rect(x0, b / 2, y0, y0 + t) + _rect(x0, x0 + t, y0 + t, h / 2)
    m = m + _spandrel(x0 + t, y0 + t, 1, 1, r)
    m = m - _spandrel(b / 2, y0 + t, -1, -1, re) - _spandrel(x0 + t, h / 2, -1, -1, re)
    # J: thin-walled open, mid-line length (b + h - t) (Roark's Table 10.7 — from memory)
    J = (b + h - t) * t**3 / 3
    # shear areas: 5/6 of the leg along the force (legs as rectangles, common practice)
    return _Section(m, J, _diag(5 / 6 * b * t, 5 / 6 * h * t))


def _u_shape(p) -> _Section:
    h, b = _dim(p, "Depth"), _dim(p, "FlangeWidth")
    tw, tf = _dim(p, "WebThickness"), _dim(p, "FlangeThickness")
    r, re = _opt(p, "FilletRadius"), _opt(p, "EdgeRadius")
    _warn_slopes(p, "FlangeSlope")
    _require(p, 2 * tf < h and tw < b, "flange/web thickness too large for the section")
    x0 = -b / 2
    m = _rect(x0, b / 2, -h / 2, -h / 2 + tf) + _rect(x0, b / 2, h / 2 - tf, h / 2)
    m = m + _rect(x0, x0 + tw, -h / 2 + tf, h / 2 - tf)
    for s in (-1, 1):
        m = m + _spandrel(x0 + tw, s * (h / 2 - tf), 1, -s, r)
        m = m - _spandrel(b / 2, s * (h / 2 - tf), -1, s, re)
    # J = Σ b t³/3 (Roark's Table 10.7 thin-walled open — from memory), no junction term
    J = (2 * b * tf**3 + (h - 2 * tf) * tw**3) / 3
    # Avz: web area d·tw (AISC G2.1 — from memory); Avy: 5/6 flange areas (common practice)
    return _Section(m, J, _diag(5 / 6 * 2 * b * tf, h * tw))


def _t_shape(p) -> _Section:
    h, b = _dim(p, "Depth"), _dim(p, "FlangeWidth")
    tw, tf = _dim(p, "WebThickness"), _dim(p, "FlangeThickness")
    r = _opt(p, "FilletRadius")
    rf, rw = _opt(p, "FlangeEdgeRadius"), _opt(p, "WebEdgeRadius")
    _warn_slopes(p, "WebSlope", "FlangeSlope")
    _require(p, tf < h and tw < b, "flange/web thickness too large for the section")
    yf = h / 2 - tf
    m = _rect(-b / 2, b / 2, yf, h / 2) + _rect(-tw / 2, tw / 2, -h / 2, yf)
    for s in (-1, 1):
        m = m + _spandrel(s * tw / 2, yf, s, -1, r)
        m = m - _spandrel(s * b / 2, yf, -s, 1, rf)
        m = m - _spandrel(s * tw / 2, -h / 2, -s, 1, rw)
    # J: Σ b t³/3 with end corrections 0.105 t⁴ per free end and the
    # El Darwish–Johnston junction term (see _junction)
    J = b * tf**3 / 3 - 0.21 * tf**4 + (h - tf) * tw**3 / 3 - 0.105 * tw**4 + _junction(tf, tw, r)
    # Avz: stem area d·tw (AISC — from memory); Avy: 5/6 flange area (common practice)
    return _Section(m, J, _diag(5 / 6 * b * tf, h * tw))


def _z_shape(p) -> _Section:
    h, b = _dim(p, "Depth"), _dim(p, "FlangeWidth")
    tw, tf = _dim(p, "WebThickness"), _dim(p, "FlangeThickness")
    r, re = _opt(p, "FilletRadius"), _opt(p, "EdgeRadius")
    _require(p, 2 * tf < h and tw / 2 < b, "flange/web thickness too large for the section")
    m = _rect(-tw / 2, tw / 2, -h / 2, h / 2)
    m = m + _rect(tw / 2, b, -h / 2, -h / 2 + tf) + _rect(-b, -tw / 2, h / 2 - tf, h / 2)
    m = m + _spandrel(tw / 2, -h / 2 + tf, 1, 1, r) + _spandrel(-tw / 2, h / 2 - tf, -1, -1, r)
    m = m - _spandrel(b, -h / 2 + tf, -1, -1, re) - _spandrel(-b, h / 2 - tf, 1, 1, re)
    # J = Σ b t³/3 (Roark's Table 10.7 — from memory)
    J = (2 * (b - tw / 2) * tf**3 + h * tw**3) / 3
    # Avz: web area (AISC G2.1 — from memory); Avy: 5/6 flange areas (common practice)
    return _Section(m, J, _diag(5 / 6 * 2 * (b - tw / 2) * tf, h * tw))


def _c_shape(p) -> _Section:
    h, b = _dim(p, "Depth"), _dim(p, "Width")
    t, c = _dim(p, "WallThickness"), _dim(p, "Girth")
    ri = _opt(p, "InternalFilletRadius")
    _require(p, 2 * t < min(b, h) and c < h / 2 and c >= t, "WallThickness/Girth do not fit the section")
    x0, x1 = -b / 2, b / 2
    m = _rect(x0, x0 + t, -h / 2 + t, h / 2 - t)  # web
    for s in (-1, 1):
        m = m + _rect(x0, x1, s * h / 2 - (t if s > 0 else 0), s * h / 2 + (0 if s > 0 else t))  # flanges
        ylo, yhi = (h / 2 - c, h / 2 - t) if s > 0 else (-h / 2 + t, -h / 2 + c)
        m = m + _rect(x1 - t, x1, ylo, yhi)  # lips
        # cold-formed bends: outer radius ri + t, inner radius ri, at all four corners
        for xc, sx in ((x0, 1), (x1, -1)):
            m = m - _spandrel(xc, s * h / 2, sx, -s, ri + t)
            m = m + _spandrel(xc + sx * t, s * (h / 2 - t), sx, -s, ri)
    # J: developed mid-line length × t³/3 (Roark's Table 10.7 — from memory)
    J = ((h - t) + 2 * (b - t) + 2 * (c - t / 2)) * t**3 / 3
    # Avz: web area h t; Avy: 5/6 flange areas (common practice)
    return _Section(m, J, _diag(5 / 6 * 2 * b * t, h * t))


def _trapezium(p) -> _Section:
    bb, bt, h = _dim(p, "BottomXDim"), _dim(p, "TopXDim"), _dim(p, "YDim")
    off = _get(p, "TopXOffset")
    off = float(off) if off is not None else 0.0
    _require(p, math.isfinite(off), "TopXOffset must be finite")
    xy = np.array([[-bb / 2, -h / 2], [bb / 2, -h / 2], [-bb / 2 + off + bt, h / 2], [-bb / 2 + off, h / 2]])
    m = _area(xy)
    # J: Saint-Venant approximation; shear areas 5/6 A (rectangle value, approximate)
    return _Section(m, _j_saint_venant(m), _diag(5 / 6 * m.A, 5 / 6 * m.A), ["J approximate"])


_PARAMETERISED: dict[str, Callable[[Any], _Section]] = {
    "IfcAsymmetricIShapeProfileDef": _asymmetric_i_shape,  # before IfcIShapeProfileDef (IFC2X3 subtype)
    "IfcIShapeProfileDef": _i_shape,
    "IfcRoundedRectangleProfileDef": _rounded_rectangle,
    "IfcRectangleHollowProfileDef": _rectangle_hollow,
    "IfcRectangleProfileDef": _rectangle,
    "IfcCircleHollowProfileDef": _circle_hollow,
    "IfcCircleProfileDef": _circle,
    "IfcEllipseProfileDef": _ellipse,
    "IfcLShapeProfileDef": _l_shape,
    "IfcTShapeProfileDef": _t_shape,
    "IfcUShapeProfileDef": _u_shape,
    "IfcCShapeProfileDef": _c_shape,
    "IfcZShapeProfileDef": _z_shape,
    "IfcTrapeziumProfileDef": _trapezium,
}


# --------------------------------------------------------------------------
# Curves -> polygons
# --------------------------------------------------------------------------


def _arc_steps(sweep: float) -> int:
    """Segments for an arc so that the sagitta is at most CHORD_TOLERANCE × radius."""
    dtheta = 2.0 * math.acos(1.0 - CHORD_TOLERANCE)
    return max(2, int(math.ceil(abs(sweep) / dtheta)))


def _conic_points(curve, t0: float, t1: float) -> np.ndarray:
    """Points of an IfcCircle/IfcEllipse from angle t0 to t1 (radians, any sign of sweep)."""
    R, c = _placement2d(curve.Position)
    if curve.is_a("IfcCircle"):
        a = b = float(curve.Radius)
    else:
        a, b = float(curve.SemiAxis1), float(curve.SemiAxis2)
    n = _arc_steps((t1 - t0) * max(a, b) / min(a, b))
    t = np.linspace(t0, t1, n + 1)
    local = np.column_stack([a * np.cos(t), b * np.sin(t)])
    return local @ R.T + c


def _conic_parameter(curve, point: np.ndarray) -> float:
    R, c = _placement2d(curve.Position)
    u = R.T @ (point - c)
    if curve.is_a("IfcCircle"):
        return math.atan2(u[1], u[0])
    return math.atan2(u[1] / float(curve.SemiAxis2), u[0] / float(curve.SemiAxis1))


def _trim_value(curve, trim, prefer_parameter: bool, angle_scale: float | None):
    """A trimming select list -> ('t', parameter) or ('p', point)."""
    point = param = None
    for item in trim:
        if hasattr(item, "is_a") and item.is_a("IfcCartesianPoint"):
            point = np.array(item.Coordinates[:2], dtype=float)
        elif hasattr(item, "is_a") and item.is_a("IfcParameterValue"):
            param = float(item.wrappedValue)
        elif isinstance(item, (int, float)):
            param = float(item)
    if param is not None and (prefer_parameter or point is None):
        if curve.is_a("IfcConic"):
            if angle_scale is None:
                angle_scale = _angle_scale_of(curve)
            return ("t", param * angle_scale)
        return ("t", param)
    if point is not None:
        return ("p", point)
    raise ValueError("empty trim")


def _trimmed_points(curve, profile, angle_scale: float | None) -> np.ndarray:
    basis = curve.BasisCurve
    prefer_parameter = str(curve.MasterRepresentation).upper() == "PARAMETER"
    try:
        k1, v1 = _trim_value(basis, curve.Trim1, prefer_parameter, angle_scale)
        k2, v2 = _trim_value(basis, curve.Trim2, prefer_parameter, angle_scale)
    except ValueError:
        raise _fail(profile, f"#{curve.id()} IfcTrimmedCurve has an empty trim") from None
    sense = bool(curve.SenseAgreement)
    if basis.is_a("IfcLine"):
        p0 = np.array(basis.Pnt.Coordinates[:2], dtype=float)
        d = np.array(basis.Dir.Orientation.DirectionRatios[:2], dtype=float)
        d = d / np.hypot(*d) * float(basis.Dir.Magnitude)
        a = v1 if k1 == "p" else p0 + v1 * d
        b = v2 if k2 == "p" else p0 + v2 * d
        return np.array([a, b])
    if basis.is_a("IfcCircle") or basis.is_a("IfcEllipse"):
        t1 = v1 if k1 == "t" else _conic_parameter(basis, v1)
        t2 = v2 if k2 == "t" else _conic_parameter(basis, v2)
        if sense:
            while t2 <= t1:
                t2 += 2 * math.pi
        else:
            while t2 >= t1:
                t2 -= 2 * math.pi
        pts = _conic_points(basis, t1, t2)
        # land exactly on given trim points
        if k1 == "p":
            pts[0] = v1
        if k2 == "p":
            pts[-1] = v2
        return pts
    raise _fail(profile, f"trimmed {basis.is_a()} #{basis.id()} is not supported as a profile boundary")


def _arc_through(p0: np.ndarray, pm: np.ndarray, p1: np.ndarray) -> np.ndarray:
    """Polygonised circular arc from p0 through pm to p1."""
    ax, ay = p0
    bx, by = pm
    cx, cy = p1
    d = 2 * (ax * (by - cy) + bx * (cy - ay) + cx * (ay - by))
    if abs(d) < 1e-14 * max(1.0, np.abs([ax, ay, bx, by, cx, cy]).max() ** 2):
        return np.array([p0, p1])  # collinear: a straight segment
    ux = ((ax * ax + ay * ay) * (by - cy) + (bx * bx + by * by) * (cy - ay) + (cx * cx + cy * cy) * (ay - by)) / d
    uy = ((ax * ax + ay * ay) * (cx - bx) + (bx * bx + by * by) * (ax - cx) + (cx * cx + cy * cy) * (bx - ax)) / d
    centre = np.array([ux, uy])
    r = float(np.hypot(*(p0 - centre)))
    t0 = math.atan2(ay - uy, ax - ux)
    tm = math.atan2(by - uy, bx - ux)
    t1 = math.atan2(cy - uy, cx - ux)
    ccw = d > 0  # orientation of p0, pm, p1
    if ccw:
        while tm < t0:
            tm += 2 * math.pi
        while t1 < tm:
            t1 += 2 * math.pi
    else:
        while tm > t0:
            tm -= 2 * math.pi
        while t1 > tm:
            t1 -= 2 * math.pi
    n = _arc_steps(t1 - t0)
    t = np.linspace(t0, t1, n + 1)
    pts = centre + r * np.column_stack([np.cos(t), np.sin(t)])
    pts[0], pts[-1] = p0, p1
    return pts


def _indexed_poly_curve(curve, profile) -> np.ndarray:
    coords = np.array(curve.Points.CoordList, dtype=float)[:, :2]
    segments = curve.Segments
    if not segments:
        return coords
    out: list[np.ndarray] = []
    for seg in segments:
        idx = [int(i) - 1 for i in seg.wrappedValue]
        if seg.is_a("IfcArcIndex"):
            pts = _arc_through(coords[idx[0]], coords[idx[1]], coords[idx[2]])
        elif seg.is_a("IfcLineIndex"):
            pts = coords[idx]
        else:
            raise _fail(profile, f"segment type {seg.is_a()} of #{curve.id()} is not supported")
        out.append(pts if not out else pts[1:])
    return np.vstack(out)


def _curve_points(curve, profile, angle_scale: float | None) -> np.ndarray:
    """Ordered points (n,2) along a bounded 2D curve."""
    if curve.is_a("IfcPolyline"):
        return np.array([p.Coordinates[:2] for p in curve.Points], dtype=float)
    if curve.is_a("IfcIndexedPolyCurve"):
        return _indexed_poly_curve(curve, profile)
    if curve.is_a("IfcTrimmedCurve"):
        return _trimmed_points(curve, profile, angle_scale)
    if curve.is_a("IfcCircle") or curve.is_a("IfcEllipse"):
        return _conic_points(curve, 0.0, 2 * math.pi)[:-1]
    if curve.is_a("IfcCompositeCurve"):
        out: list[np.ndarray] = []
        for seg in curve.Segments:
            if not seg.is_a("IfcCompositeCurveSegment"):
                raise _fail(profile, f"{seg.is_a()} #{seg.id()} in #{curve.id()} is not supported")
            pts = _curve_points(seg.ParentCurve, profile, angle_scale)
            if not seg.SameSense:
                pts = pts[::-1]
            if out and np.allclose(out[-1][-1], pts[0], rtol=0, atol=1e-12 * (1 + np.abs(pts).max())):
                pts = pts[1:]
            out.append(pts)
        return np.vstack(out)
    raise _fail(profile, f"boundary curve {curve.is_a()} #{curve.id()} is not supported")


def _loop(curve, profile, angle_scale: float | None) -> _Moments:
    pts = _curve_points(curve, profile, angle_scale)
    if len(pts) > 1 and np.allclose(pts[0], pts[-1]):
        pts = pts[:-1]
    if len(pts) < 3 or not np.all(np.isfinite(pts)):
        raise _fail(profile, f"boundary #{curve.id()} does not enclose an area")
    m = _area(pts)
    if m.A <= 0.0:
        raise _fail(profile, f"boundary #{curve.id()} encloses no area")
    return m


def _arbitrary(p, angle_scale: float | None) -> _Section:
    if str(p.ProfileType).upper() != "AREA":
        raise _fail(p, f"ProfileType {p.ProfileType} has no area")
    m = _loop(p.OuterCurve, p, angle_scale)
    voids = list(_get(p, "InnerCurves") or [])
    for c in voids:
        m = m - _loop(c, p, angle_scale)
    if m.A <= 0.0:
        raise _fail(p, "the voids cover the whole outline")
    logger.warning(
        "%s: torsion constant J is approximate (A⁴/(40 Ip)%s) and shear areas are 5/6 A",
        _label(p),
        "; the profile has voids, J may be far too low" if voids else "",
    )
    return _Section(m, _j_saint_venant(m), _diag(5 / 6 * m.A, 5 / 6 * m.A), ["J approximate"])


def _operator(op) -> tuple[np.ndarray, np.ndarray]:
    """Matrix (columns = scaled axes) and origin of an IfcCartesianTransformationOperator2D."""
    a1 = getattr(op, "Axis1", None)
    a2 = getattr(op, "Axis2", None)

    def unit(d):
        v = np.array(d.DirectionRatios[:2], dtype=float)
        return v / np.hypot(*v)

    if a1 is not None:
        d1 = unit(a1)
        d2 = np.array([-d1[1], d1[0]])
        if a2 is not None and float(np.dot(unit(a2), d2)) < 0:
            d2 = -d2
    elif a2 is not None:
        d2 = unit(a2)
        d1 = np.array([d2[1], -d2[0]])
    else:
        d1, d2 = np.array([1.0, 0.0]), np.array([0.0, 1.0])
    s1 = float(op.Scale) if getattr(op, "Scale", None) is not None else 1.0
    s2 = float(getattr(op, "Scale2", None) or s1) if op.is_a("IfcCartesianTransformationOperator2DnonUniform") else s1
    M = np.column_stack([d1 * s1, d2 * s2])
    t = np.array(op.LocalOrigin.Coordinates[:2], dtype=float)
    return M, t


def _analyse(profile, angle_scale: float | None, depth: int = 0) -> _Section:
    if depth > 32:
        raise _fail(profile, "profiles nest too deeply (cycle?)")
    if not profile.is_a("IfcProfileDef"):
        raise _fail(profile, "is not an IfcProfileDef")
    cls = profile.is_a()
    for name, fn in _PARAMETERISED.items():
        if profile.is_a(name):
            sec = fn(profile)
            R, t = _placement2d(profile.Position)
            return sec.transformed(R, t)
    if profile.is_a("IfcArbitraryClosedProfileDef"):  # includes IfcArbitraryProfileDefWithVoids
        return _arbitrary(profile, angle_scale)
    if profile.is_a("IfcDerivedProfileDef"):  # includes IfcMirroredProfileDef
        parent = _analyse(profile.ParentProfile, angle_scale, depth + 1)
        M, t = _operator(profile.Operator)
        if not np.all(np.isfinite(M)) or abs(np.linalg.det(M)) == 0:
            raise _fail(profile, "the transformation operator is singular")
        s = np.linalg.svd(M, compute_uv=False)
        if s[0] - s[1] > 1e-9 * s[0]:
            logger.warning("%s: non-uniform scale; J and shear areas are approximate", _label(profile))
        return parent.transformed(M, t)
    if profile.is_a("IfcCompositeProfileDef"):
        parts = [_analyse(p, angle_scale, depth + 1) for p in profile.Profiles]
        if not parts:
            raise _fail(profile, "has no profiles")
        m = parts[0].m
        for q in parts[1:]:
            m = m + q.m
        logger.info("%s: J and shear areas are summed over the parts (parts taken as unconnected)", _label(profile))
        K = parts[0].K
        for q in parts[1:]:
            K = K + q.K
        return _Section(m, sum(q.J for q in parts), K)
    raise _fail(profile, f"profile type {cls} is not supported")


def _angle_scale_of(entity) -> float:
    """SI scale of the plane angle unit of the entity's file (radians if unknown)."""
    try:
        from ..units import angle_scale

        return angle_scale(entity.file)
    except Exception:  # no file / no units: radians
        return 1.0


def section_properties(profile: "ifcopenshell.entity_instance", *, angle_scale: float | None = None) -> SectionProperties:
    """Section properties of any supported IfcProfileDef, in the profile's length unit.

    Parameters
    ----------
    profile : ifcopenshell.entity_instance
        An IfcProfileDef subtype (see the module docstring for the list).
    angle_scale : float, optional
        SI scale of the file's plane angle unit, used only for parameter
        trims of circles and ellipses. Default: from the profile's file.

    Returns
    -------
    SectionProperties
        ``A, Iy, Iz, J, Avy, Avz, Iyz, cy, cz`` in powers of the file length
        unit, about centroidal axes parallel to the profile's underlying x, y.

    Raises
    ------
    IfcInputError
        Unsupported profile type, missing, non-positive or NaN dimension,
        inconsistent dimensions, or a boundary that encloses no area. The
        message starts with ``#<id> <IfcClass> '<ProfileName>': ``.

    Notes
    -----
    See the module docstring for which values are exact and which are
    approximate. Cost: O(1) for parameterised profiles; O(n) in the number
    of boundary points for arbitrary profiles (arcs are polygonised to a
    relative chord error of 1e-5).

    Examples
    --------
    >>> import ifcopenshell
    >>> f = ifcopenshell.file(schema="IFC4")
    >>> p = f.createIfcRectangleProfileDef("AREA", "R", None, 2.0, 4.0)
    >>> s = section_properties(p)
    >>> round(s.A, 6), round(s.Iy, 6), round(s.Iz, 6)
    (8.0, 10.666667, 2.666667)
    """
    sec = _analyse(profile, angle_scale)
    m = sec.m
    if not (m.A > 0 and math.isfinite(m.A)):
        raise _fail(profile, f"area is {m.A!r}")
    c = m.centroid()
    C = m.central()
    name = _get(profile, "ProfileName") or ""
    return SectionProperties(
        A=float(m.A),
        Iy=float(C[1, 1]),
        Iz=float(C[0, 0]),
        J=float(sec.J),
        Avy=float(sec.K[0, 0]),
        Avz=float(sec.K[1, 1]),
        Iyz=float(C[0, 1]),
        cy=float(c[0]),
        cz=float(c[1]),
        name=str(name),
    )


# --------------------------------------------------------------------------
# Pset_ProfileMechanical
# --------------------------------------------------------------------------

#: Pset_ProfileMechanical property -> SectionProperties field.
#:
#: IFC4 / IFC4X3 define the mechanical values about the "section analysis
#: axes" ys, zs ("MomentOfInertiaY: moment of inertia about ys"), and
#: IFC2X3's IfcStructuralProfileProperties states that the structural Y
#: direction maps onto the profile's (negative) X axis and structural Z onto
#: the (negative) Y axis. So ys ∥ xp and zs ∥ yp, i.e. the property set uses
#: the same axes as SectionProperties: MomentOfInertiaY is about the profile
#: x axis (major axis of an I-shape) = our Iy. The sign flips of both axes
#: cancel in the product of inertia, so MomentOfInertiaYZ = our Iyz.
#: Centre of gravity is given along xp / yp = our cy / cz.
#: For stiffness the *shear deformation* areas are the right values; the
#: plain ShearAreaY/Z (for shear stress) are used only when those are absent.
PSET_PROFILE_MECHANICAL: dict[str, str] = {
    "CrossSectionArea": "A",
    "MomentOfInertiaY": "Iy",
    "MomentOfInertiaZ": "Iz",
    "MomentOfInertiaYZ": "Iyz",
    "TorsionalConstantX": "J",
    "ShearDeformationAreaY": "Avy",
    "ShearDeformationAreaZ": "Avz",
    "CentreOfGravityInX": "cy",
    "CentreOfGravityInY": "cz",
}
_PSET_FALLBACK = {"ShearAreaY": "Avy", "ShearAreaZ": "Avz"}

#: SectionProperties field -> UnitScales field of the property's measure type
#: (IfcAreaMeasure, IfcMomentOfInertiaMeasure, IfcLengthMeasure).
PSET_FIELD_UNITS: dict[str, str] = {
    "A": "area",
    "Iy": "moment_of_inertia",
    "Iz": "moment_of_inertia",
    "Iyz": "moment_of_inertia",
    "J": "moment_of_inertia",
    "Avy": "area",
    "Avz": "area",
    "cy": "length",
    "cz": "length",
}
_MAY_BE_NEGATIVE = {"Iyz", "cy", "cz"}


def section_from_pset(values: dict[str, Any]) -> dict[str, float]:
    """Overrides for :class:`SectionProperties` from Pset_ProfileMechanical values.

    Parameters
    ----------
    values : dict
        Property name -> value, e.g. from ``ifcopenshell.util.element.get_psets``
        (extra keys such as ``id`` are ignored; wrapped values are unwrapped).

    Returns
    -------
    dict
        SectionProperties field -> value in the FILE's unit of the measure
        type (convert each with ``PSET_FIELD_UNITS[field]`` of
        :class:`~analysis.units.UnitScales`). Only properties present and
        valid are returned; apply with ``dataclasses.replace`` after
        converting. Invalid values (NaN, or non-positive where a positive
        value is required) are skipped with a warning.

    Examples
    --------
    >>> section_from_pset({"CrossSectionArea": 5381.0, "MomentOfInertiaY": 8.356e7, "id": 7})
    {'A': 5381.0, 'Iy': 83560000.0}
    """
    out: dict[str, float] = {}
    for table in (PSET_PROFILE_MECHANICAL, _PSET_FALLBACK):
        for prop, fld in table.items():
            if fld in out or prop not in values or values[prop] is None:
                continue
            raw = values[prop]
            raw = getattr(raw, "wrappedValue", raw)
            try:
                v = float(raw)
            except (TypeError, ValueError):
                logger.warning("Pset_ProfileMechanical.%s = %r is not a number; ignored", prop, raw)
                continue
            if not math.isfinite(v) or (fld not in _MAY_BE_NEGATIVE and v <= 0.0):
                logger.warning("Pset_ProfileMechanical.%s = %r is not valid; ignored", prop, raw)
                continue
            out[fld] = v
    return out

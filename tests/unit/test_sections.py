"""Section properties of IFC profiles: handbook values, polygon integration, ifcopenshell geometry."""
from __future__ import annotations

import logging
import math

import numpy as np
import pytest

import ifcopenshell  # noqa: E402  (a hard dependency: never skipped)
import ifcopenshell.geom  # noqa: E402
import ifcopenshell.guid  # noqa: E402

from analysis.errors import IfcInputError  # noqa: E402
from analysis.ifc.sections import (  # noqa: E402
    PSET_FIELD_UNITS,
    SectionProperties,
    _polygon,
    _spandrel,
    section_from_pset,
    section_properties,
)

SCHEMAS = ["IFC2X3", "IFC4", "IFC4X3"]


def _file(schema="IFC4"):
    return ifcopenshell.file(schema=schema)


def _placement(f, x=0.0, y=0.0, ref=None):
    loc = f.createIfcCartesianPoint((float(x), float(y)))
    d = f.createIfcDirection(tuple(float(v) for v in ref)) if ref is not None else None
    return f.createIfcAxis2Placement2D(loc, d)


def _i_shape(f, name, b, h, tw, tf, r):
    # IFC2X3 requires Position; IFC4X3 allows None — give it always
    return f.create_entity(
        "IfcIShapeProfileDef",
        ProfileType="AREA",
        ProfileName=name,
        Position=_placement(f),
        OverallWidth=b,
        OverallDepth=h,
        WebThickness=tw,
        FlangeThickness=tf,
        FilletRadius=r,
    )


# ---------------------------------------------------------------- handbooks


@pytest.mark.parametrize("schema", SCHEMAS)
def test_ipe300_against_european_tables(schema):
    f = _file(schema)
    s = section_properties(_i_shape(f, "IPE300", 150.0, 300.0, 7.1, 10.7, 15.0))  # mm
    # IPE 300: A = 53.8 cm², Iy = 8356 cm⁴, Iz = 604 cm⁴, It = 20.1 cm⁴
    # (European section tables — from memory); tolerances cover rounding of
    # the tables' fillet treatment: 0.5 % on A, I; 2 % on It.
    assert s.A == pytest.approx(53.8e2, rel=5e-3)
    assert s.Iy == pytest.approx(8356e4, rel=5e-3)
    assert s.Iz == pytest.approx(604e4, rel=5e-3)
    assert s.J == pytest.approx(20.1e4, rel=2e-2)
    assert s.Iyz == pytest.approx(0.0, abs=1e-6 * s.Iy)
    assert (s.cy, s.cz) == pytest.approx((0.0, 0.0), abs=1e-9)
    assert s.name == "IPE300"
    # shear areas: web area d·tw along the web (AISC G2.1 — from memory),
    # 5/6 of the flanges across (common practice, no source)
    assert s.Avz == pytest.approx(300.0 * 7.1)
    assert s.Avy == pytest.approx(5 / 6 * 2 * 150.0 * 10.7)


@pytest.mark.parametrize("schema", SCHEMAS)
def test_hea200_against_european_tables(schema):
    f = _file(schema)
    s = section_properties(_i_shape(f, "HEA200", 200.0, 190.0, 6.5, 10.0, 18.0))
    # HE 200 A: A = 53.8 cm², Iy = 3692 cm⁴, Iz = 1336 cm⁴, It = 20.98 cm⁴
    # (European section tables — from memory)
    assert s.A == pytest.approx(53.8e2, rel=5e-3)
    assert s.Iy == pytest.approx(3692e4, rel=5e-3)
    assert s.Iz == pytest.approx(1336e4, rel=5e-3)
    assert s.J == pytest.approx(20.98e4, rel=3e-2)


def test_w14x90_against_aisc_manual():
    f = _file("IFC4")
    # W14x90 in inches: d 14.0, bf 14.5, tw 0.440, tf 0.710, k_des 1.31 -> r = 0.60
    s = section_properties(_i_shape(f, "W14X90", 14.5, 14.0, 0.44, 0.71, 0.60))
    # A = 26.5 in², Ix = 999 in⁴, Iy = 362 in⁴, J = 4.06 in⁴
    # (AISC Steel Construction Manual, Table 1-1 — from memory); 1.5 %
    # because the manual's d, tf are rounded.
    assert s.A == pytest.approx(26.5, rel=1.5e-2)
    assert s.Iy == pytest.approx(999.0, rel=1.5e-2)
    assert s.Iz == pytest.approx(362.0, rel=1.5e-2)
    assert s.J == pytest.approx(4.06, rel=3e-2)


@pytest.mark.parametrize("schema", SCHEMAS)
def test_rectangle_closed_forms(schema):
    f = _file(schema)
    b, h = 2.0, 4.0
    s = section_properties(f.createIfcRectangleProfileDef("AREA", "R", _placement(f), b, h))
    # b h³/12 and h b³/12 (any strength-of-materials text, exact)
    assert s.Iy == pytest.approx(b * h**3 / 12)
    assert s.Iz == pytest.approx(h * b**3 / 12)
    # torsion of a 2:1 rectangle: J = 0.229 a b³ with a = 2b
    # (Roark's Formulas for Stress and Strain, Table 10.7 case 4 — from memory)
    assert s.J == pytest.approx(0.229 * h * b**3, rel=2e-3)
    assert s.Avy == pytest.approx(5 / 6 * b * h) and s.Avz == pytest.approx(5 / 6 * b * h)
    sq = section_properties(f.createIfcRectangleProfileDef("AREA", "Q", _placement(f), 1.0, 1.0))
    assert sq.J == pytest.approx(0.1406, rel=1e-3)  # square: 0.1406 a⁴ (Roark's — from memory)


@pytest.mark.parametrize("schema", SCHEMAS)
def test_circles_and_ellipse(schema):
    f = _file(schema)
    r, t = 0.1, 0.01
    c = section_properties(f.createIfcCircleProfileDef("AREA", "C", _placement(f), r))
    # π r⁴/4, J = π r⁴/2 (exact, any strength-of-materials text)
    assert c.Iy == pytest.approx(math.pi * r**4 / 4) and c.J == pytest.approx(math.pi * r**4 / 2)
    # shear coefficient 6(1+ν)/(7+6ν) = 0.886 at ν = 0.3 (Cowper 1966 — from memory)
    assert c.Avz / c.A == pytest.approx(0.886, abs=1e-3)
    h = section_properties(f.createIfcCircleHollowProfileDef("AREA", "CHS", _placement(f), r, t))
    ri = r - t
    assert h.A == pytest.approx(math.pi * (r**2 - ri**2))
    assert h.J == pytest.approx(math.pi * (r**4 - ri**4) / 2)
    # thin tube shear coefficient tends to 1/2 (Cowper 1966 — from memory)
    assert 0.5 < h.Avy / h.A < 0.56
    e = section_properties(f.createIfcEllipseProfileDef("AREA", "E", _placement(f), 0.2, 0.1))
    # π a b³/4 about the major axis; J = π a³ b³/(a²+b²) (Roark's Table 10.7 — from memory)
    assert e.Iy == pytest.approx(math.pi * 0.2 * 0.1**3 / 4)
    assert e.Iz == pytest.approx(math.pi * 0.1 * 0.2**3 / 4)
    assert e.J == pytest.approx(math.pi * 0.2**3 * 0.1**3 / (0.2**2 + 0.1**2))


def test_rhs_bredt():
    f = _file("IFC4")
    b, h, t = 100.0, 200.0, 5.0
    s = section_properties(f.createIfcRectangleHollowProfileDef("AREA", "RHS", _placement(f), b, h, t, None, None))
    # Bredt: 4 Am² t / p on the mid-line (Roark's Table 10.7 — from memory), + p t³/3
    Am, p = (b - t) * (h - t), 2 * (b - t + h - t)
    assert s.J == pytest.approx(4 * Am**2 * t / p + p * t**3 / 3)
    assert s.A == pytest.approx(b * h - (b - 2 * t) * (h - 2 * t))
    # A h/(b+h) along the depth (EN 1993-1-1 §6.2.6(3) — from memory)
    assert s.Avz == pytest.approx(s.A * h / (b + h))


def test_angle_centroid_and_product_of_inertia():
    f = _file("IFC4")
    h, b, t = 200.0, 100.0, 10.0
    s = section_properties(f.createIfcLShapeProfileDef("AREA", "L", _placement(f), h, b, t, None, None, None))
    # two rectangles, composite-area method (any statics text, exact)
    a1, a2 = b * t, (h - t) * t
    x1, y1 = -b / 2 + b / 2, -h / 2 + t / 2
    x2, y2 = -b / 2 + t / 2, -h / 2 + t + (h - t) / 2
    A = a1 + a2
    cx, cy = (a1 * x1 + a2 * x2) / A, (a1 * y1 + a2 * y2) / A
    assert (s.cy, s.cz) == pytest.approx((cx, cy))
    Ixy = a1 * (x1 - cx) * (y1 - cy) + a2 * (x2 - cx) * (y2 - cy)
    assert s.Iyz == pytest.approx(Ixy) and s.Iyz < 0
    # equal-leg check: IFC origin is the centre of the bounding box, corner at (-b/2, -h/2)
    assert s.cy < 0 and s.cz < 0


def test_spandrel_matches_polygon():
    # the fillet "spandrel" closed form against a fine polygon (exact to discretisation):
    # corner, then the quarter arc centred at (cx + sx r, cy + sy r)
    r, cx, cy, sx, sy = 0.7, 1.3, -0.4, -1, 1
    t = np.linspace(0, math.pi / 2, 20001)
    centre = np.array([cx + sx * r, cy + sy * r])
    arc = centre + r * np.column_stack([-sx * np.cos(t), -sy * np.sin(t)])
    m = _polygon(np.vstack([[cx, cy], arc]))
    m = -m if m.A < 0 else m
    s = _spandrel(cx, cy, sx, sy, r)
    assert s.A == pytest.approx(m.A, rel=1e-6)
    np.testing.assert_allclose(s.S, m.S, rtol=1e-6)
    np.testing.assert_allclose(s.Q, m.Q, rtol=1e-6)


# ------------------------------------------------- polygon integration (exact)


def _poly_profile(f, pts, name="P", voids=()):
    def curve(points):
        cps = [f.createIfcCartesianPoint(tuple(map(float, p))) for p in points]
        return f.createIfcPolyline(cps + [cps[0]])

    if voids:
        return f.createIfcArbitraryProfileDefWithVoids("AREA", name, curve(pts), [curve(v) for v in voids])
    return f.createIfcArbitraryClosedProfileDef("AREA", name, curve(pts))


def _i_outline_indexed(f, b, h, tw, tf, r):
    """IPE-like outline as an IfcIndexedPolyCurve with IfcArcIndex fillets."""
    y = h / 2 - tf
    pts, segs = [], []

    def add(p):
        pts.append(tuple(map(float, p)))
        return len(pts)

    # counter-clockwise, starting bottom-left
    outline = [(-b / 2, -h / 2), (b / 2, -h / 2), (b / 2, -y)]
    idx = [add(p) for p in outline]
    s = 1 / math.sqrt(2)
    # bottom-right fillet from (tw/2 + r, -y) to (tw/2, -y + r), centre (tw/2 + r, -y + r)
    a0 = add((tw / 2 + r, -y))
    am = add((tw / 2 + r - r * s, -y + r - r * s))
    a1 = add((tw / 2, -y + r))
    b0 = add((tw / 2, y - r))
    bm = add((tw / 2 + r - r * s, y - r + r * s))
    b1 = add((tw / 2 + r, y))
    c = [add(p) for p in [(b / 2, y), (b / 2, h / 2), (-b / 2, h / 2), (-b / 2, y)]]
    d0 = add((-tw / 2 - r, y))
    dm = add((-tw / 2 - r + r * s, y - r + r * s))
    d1 = add((-tw / 2, y - r))
    e0 = add((-tw / 2, -y + r))
    em = add((-tw / 2 - r + r * s, -y + r - r * s))
    e1 = add((-tw / 2 - r, -y))
    f_ = add((-b / 2, -y))
    segs = [
        f.createIfcLineIndex([idx[0], idx[1], idx[2], a0]),
        f.createIfcArcIndex([a0, am, a1]),
        f.createIfcLineIndex([a1, b0]),
        f.createIfcArcIndex([b0, bm, b1]),
        f.createIfcLineIndex([b1] + c + [d0]),
        f.createIfcArcIndex([d0, dm, d1]),
        f.createIfcLineIndex([d1, e0]),
        f.createIfcArcIndex([e0, em, e1]),
        f.createIfcLineIndex([e1, f_, idx[0]]),
    ]
    pl = f.createIfcCartesianPointList2D(pts)
    curve = f.createIfcIndexedPolyCurve(pl, segs, False)
    return f.createIfcArbitraryClosedProfileDef("AREA", "IPE300 outline", curve)


@pytest.mark.parametrize("schema", ["IFC4", "IFC4X3"])
def test_i_shape_with_fillets_equals_indexed_polycurve_outline(schema):
    f = _file(schema)
    closed = section_properties(_i_shape(f, "IPE300", 150.0, 300.0, 7.1, 10.7, 15.0))
    poly = section_properties(_i_outline_indexed(f, 150.0, 300.0, 7.1, 10.7, 15.0))
    # exact closed form vs Green's theorem on the polygonised arcs (chord error 1e-5)
    for k in ("A", "Iy", "Iz"):
        assert getattr(poly, k) == pytest.approx(getattr(closed, k), rel=1e-5), k


@pytest.mark.parametrize("schema", SCHEMAS)
def test_sharp_shapes_equal_polylines(schema):
    f = _file(schema)
    b, h, tw, tf = 100.0, 200.0, 8.0, 12.0
    # U-shape, web on -x (IFC: origin at the centre of the bounding box)
    u = f.create_entity(
        "IfcUShapeProfileDef", ProfileType="AREA", ProfileName="U", Position=_placement(f),
        Depth=h, FlangeWidth=b, WebThickness=tw, FlangeThickness=tf,
    )
    x0, y0 = -b / 2, -h / 2
    u_pts = [(x0, y0), (b / 2, y0), (b / 2, y0 + tf), (x0 + tw, y0 + tf), (x0 + tw, h / 2 - tf),
             (b / 2, h / 2 - tf), (b / 2, h / 2), (x0, h / 2)]
    # Z-shape: bottom flange towards +x, top flange towards -x, flanges reach b from the web centre
    z = f.create_entity(
        "IfcZShapeProfileDef", ProfileType="AREA", ProfileName="Z", Position=_placement(f),
        Depth=h, FlangeWidth=b, WebThickness=tw, FlangeThickness=tf,
    )
    z_pts = [(-tw / 2, y0), (b, y0), (b, y0 + tf), (tw / 2, y0 + tf), (tw / 2, h / 2), (-b, h / 2),
             (-b, h / 2 - tf), (-tw / 2, h / 2 - tf)]
    # T-shape: flange at +y
    t = f.create_entity(
        "IfcTShapeProfileDef", ProfileType="AREA", ProfileName="T", Position=_placement(f),
        Depth=h, FlangeWidth=b, WebThickness=tw, FlangeThickness=tf,
    )
    t_pts = [(-tw / 2, y0), (tw / 2, y0), (tw / 2, h / 2 - tf), (b / 2, h / 2 - tf), (b / 2, h / 2),
             (-b / 2, h / 2), (-b / 2, h / 2 - tf), (-tw / 2, h / 2 - tf)]
    for shape, pts in ((u, u_pts), (z, z_pts), (t, t_pts)):
        a, p = section_properties(shape), section_properties(_poly_profile(f, pts))
        for k in ("A", "Iy", "Iz", "Iyz", "cy", "cz"):
            assert getattr(a, k) == pytest.approx(getattr(p, k), rel=1e-9, abs=1e-9 * a.Iy), (shape.is_a(), k)
    assert section_properties(z).Iyz < 0


@pytest.mark.parametrize("schema", SCHEMAS)
def test_rectangle_hollow_equals_profile_with_void(schema):
    f = _file(schema)
    b, h, t = 120.0, 80.0, 6.0
    rhs = section_properties(f.createIfcRectangleHollowProfileDef("AREA", "RHS", _placement(f), b, h, t, None, None))
    outer = [(-b / 2, -h / 2), (b / 2, -h / 2), (b / 2, h / 2), (-b / 2, h / 2)]
    inner = [(x * (b - 2 * t) / b, y * (h - 2 * t) / h) for x, y in outer][::-1]  # clockwise void
    void = section_properties(_poly_profile(f, outer, voids=[inner]))
    for k in ("A", "Iy", "Iz"):
        assert getattr(void, k) == pytest.approx(getattr(rhs, k), rel=1e-12)


def test_trimmed_circle_in_degrees_and_composite_curve():
    # a half disc: IfcCompositeCurve of a trimmed IfcCircle (parameters in degrees) and a line
    f = _file("IFC4")
    f.create_entity("IfcProject", GlobalId=ifcopenshell.guid.new(), Name="P")
    deg = f.createIfcConversionBasedUnit(
        f.createIfcDimensionalExponents(0, 0, 0, 0, 0, 0, 0), "PLANEANGLEUNIT", "degree",
        f.createIfcMeasureWithUnit(f.create_entity("IfcPlaneAngleMeasure", math.pi / 180),
                                   f.createIfcSIUnit(None, "PLANEANGLEUNIT", None, "RADIAN")),
    )
    f.by_type("IfcProject")[0].UnitsInContext = f.createIfcUnitAssignment([deg])
    r = 2.0
    circle = f.createIfcCircle(_placement(f), r)
    arc = f.createIfcTrimmedCurve(
        circle, [f.create_entity("IfcParameterValue", 0.0)], [f.create_entity("IfcParameterValue", 180.0)],
        True, "PARAMETER",
    )
    line = f.createIfcPolyline([f.createIfcCartesianPoint((-r, 0.0)), f.createIfcCartesianPoint((r, 0.0))])
    cc = f.createIfcCompositeCurve(
        [f.createIfcCompositeCurveSegment("CONTINUOUS", True, arc),
         f.createIfcCompositeCurveSegment("CONTINUOUS", True, line)], False,
    )
    s = section_properties(f.createIfcArbitraryClosedProfileDef("AREA", "half", cc))
    # half disc: A = π r²/2, centroid 4r/(3π) (any statics text, exact);
    # tolerance: polygonised arc, chord error 1e-5 relative
    assert s.A == pytest.approx(math.pi * r**2 / 2, rel=2e-5)
    assert s.cz == pytest.approx(4 * r / (3 * math.pi), rel=2e-5)
    assert s.Iz == pytest.approx(math.pi * r**4 / 8, rel=5e-5)
    # a full IfcCircle as outline equals the circle profile
    full = section_properties(f.createIfcArbitraryClosedProfileDef("AREA", "o", circle))
    assert full.Iy == pytest.approx(math.pi * r**4 / 4, rel=5e-5)


def test_arbitrary_profile_warns_that_j_is_approximate(caplog):
    f = _file("IFC4")
    with caplog.at_level(logging.WARNING, logger="analysis.ifc.sections"):
        s = section_properties(_poly_profile(f, [(0, 0), (2, 0), (2, 1), (0, 1)]))
    assert "approximate" in caplog.text
    # Saint-Venant A⁴/(40 Ip) vs the series value 0.229 a b³ for a 2:1 rectangle
    # (Roark's Table 10.7 — from memory): within 10 %
    assert s.J == pytest.approx(0.229 * 2 * 1, rel=0.1)


# ------------------------------------------------ ifcopenshell geometry kernel


def _kernel_props(profile, size):
    """A, centroid, central moments from ifcopenshell's own triangulation/outline."""
    s = ifcopenshell.geom.settings()
    s.set("mesher-linear-deflection", 1e-5 * size)
    sh = ifcopenshell.geom.create_shape(s, profile)
    v = np.array(sh.verts, dtype=float).reshape(-1, 3)[:, :2]
    faces = np.array(sh.faces, dtype=int).reshape(-1, 3)
    if len(faces):  # curved profiles come back triangulated: sum the triangles
        P = v[faces]
        x0, y0, x1, y1 = P[:, :, 0], P[:, :, 1], np.roll(P[:, :, 0], -1, 1), np.roll(P[:, :, 1], -1, 1)
    else:  # polygonal profiles come back as boundary edges only
        e = np.array(sh.edges, dtype=int).reshape(-1, 2)
        x0, y0, x1, y1 = v[e[:, 0], 0], v[e[:, 0], 1], v[e[:, 1], 0], v[e[:, 1], 1]
    cr = x0 * y1 - x1 * y0
    sign = 1.0 if len(faces) == 0 else np.sign(cr.sum(axis=-1, keepdims=True))
    cr = cr * sign
    A = cr.sum() / 2
    cx, cy = ((x0 + x1) * cr).sum() / 6 / A, ((y0 + y1) * cr).sum() / 6 / A
    Qxx = ((x0 * x0 + x0 * x1 + x1 * x1) * cr).sum() / 12
    Qyy = ((y0 * y0 + y0 * y1 + y1 * y1) * cr).sum() / 12
    Qxy = ((x0 * y1 + 2 * x0 * y0 + 2 * x1 * y1 + x1 * y0) * cr).sum() / 24
    if A < 0:
        A, Qxx, Qyy, Qxy = -A, -Qxx, -Qyy, -Qxy
    return {"A": A, "cy": cx, "cz": cy, "Iy": Qyy - A * cy * cy, "Iz": Qxx - A * cx * cx, "Iyz": Qxy - A * cx * cy}


def _kernel_cases(f):
    P = lambda: _placement(f)  # noqa: E731
    return [
        f.createIfcLShapeProfileDef("AREA", "L", P(), 0.2, 0.1, 0.01, 0.012, 0.005, None),
        f.createIfcUShapeProfileDef("AREA", "U", P(), 0.2, 0.1, 0.01, 0.015, 0.01, 0.005, None),
        f.createIfcTShapeProfileDef("AREA", "T", P(), 0.2, 0.1, 0.01, 0.015, 0.01, 0.005, 0.004, None, None),
        f.createIfcZShapeProfileDef("AREA", "Z", P(), 0.2, 0.1, 0.01, 0.015, 0.01, 0.005),
        f.createIfcCShapeProfileDef("AREA", "C", P(), 0.2, 0.1, 0.005, 0.02, 0.005),
        f.createIfcIShapeProfileDef("AREA", "I", P(), 0.15, 0.3, 0.0071, 0.0107, 0.015, 0.004, None),
        f.createIfcAsymmetricIShapeProfileDef(
            "AREA", "AI", P(), 0.2, 0.3, 0.01, 0.02, 0.01, 0.1, 0.012, 0.008, 0.003, None, 0.002, None
        ),
        f.createIfcRectangleHollowProfileDef("AREA", "RHS", P(), 0.1, 0.2, 0.01, 0.01, 0.02),
        f.createIfcRoundedRectangleProfileDef("AREA", "RR", P(), 0.1, 0.2, 0.02),
        f.createIfcCircleHollowProfileDef("AREA", "CHS", P(), 0.1, 0.01),
        f.createIfcEllipseProfileDef("AREA", "E", P(), 0.2, 0.1),
        f.createIfcTrapeziumProfileDef("AREA", "Tr", P(), 0.2, 0.1, 0.3, 0.07),
        f.createIfcLShapeProfileDef("AREA", "L moved", _placement(f, 0.03, -0.02, (0.6, 0.8)), 0.2, 0.1, 0.01,
                                    None, None, None),
    ]


def test_closed_forms_match_ifcopenshell_geometry():
    f = _file("IFC4")
    for profile in _kernel_cases(f):
        mine = section_properties(profile)
        ref = _kernel_props(profile, 0.3)
        # the kernel polygonises arcs (deflection 1e-5 of the size): 1e-4 relative
        for k, v in ref.items():
            scale = mine.A if k in ("A",) else (math.sqrt(mine.A) if k in ("cy", "cz") else mine.Iy + mine.Iz)
            assert getattr(mine, k) == pytest.approx(v, abs=1e-4 * scale), (profile.ProfileName, k)


# -------------------------------------------------- derived and composite


@pytest.mark.parametrize("schema", SCHEMAS)
def test_derived_profile_rotated_90_degrees_swaps_axes(schema):
    f = _file(schema)
    parent = _i_shape(f, "IPE300", 150.0, 300.0, 7.1, 10.7, 15.0)
    op = f.createIfcCartesianTransformationOperator2D(
        f.createIfcDirection((0.0, 1.0)), None, f.createIfcCartesianPoint((10.0, 20.0)), None
    )
    d = f.createIfcDerivedProfileDef("AREA", "IPE300 rotated", parent, op, None)
    a, b = section_properties(parent), section_properties(d)
    assert b.Iy == pytest.approx(a.Iz) and b.Iz == pytest.approx(a.Iy)
    assert b.Avy == pytest.approx(a.Avz) and b.Avz == pytest.approx(a.Avy)
    assert (b.A, b.J) == pytest.approx((a.A, a.J))
    assert (b.cy, b.cz) == pytest.approx((10.0, 20.0))


def test_mirrored_angle_flips_product_of_inertia():
    f = _file("IFC4")
    angle = f.createIfcLShapeProfileDef("AREA", "L", _placement(f), 0.2, 0.1, 0.01, None, None, None)
    op = f.createIfcCartesianTransformationOperator2D(
        f.createIfcDirection((-1.0, 0.0)), f.createIfcDirection((0.0, 1.0)), f.createIfcCartesianPoint((0.0, 0.0)), None
    )
    m = section_properties(f.createIfcDerivedProfileDef("AREA", "L mirrored", angle, op, None))
    a = section_properties(angle)
    assert m.Iyz == pytest.approx(-a.Iyz) and m.cy == pytest.approx(-a.cy) and m.Iy == pytest.approx(a.Iy)


def test_rotation_by_45_degrees_is_a_tensor_rotation():
    f = _file("IFC4")
    angle = f.createIfcLShapeProfileDef("AREA", "L", _placement(f), 0.2, 0.1, 0.01, None, None, None)
    c = s = 1 / math.sqrt(2)
    op = f.createIfcCartesianTransformationOperator2D(f.createIfcDirection((c, s)), None, f.createIfcCartesianPoint((0.0, 0.0)), None)
    r = section_properties(f.createIfcDerivedProfileDef("AREA", "L45", angle, op, None))
    a = section_properties(angle)
    # Mohr's circle: invariants Iy + Iz and Iy Iz - Iyz² are kept (any mechanics text, exact)
    assert r.Iy + r.Iz == pytest.approx(a.Iy + a.Iz)
    assert r.Iy * r.Iz - r.Iyz**2 == pytest.approx(a.Iy * a.Iz - a.Iyz**2)
    # explicit rotation of the area tensor by +45° (exact)
    T = np.array([[a.Iz, a.Iyz], [a.Iyz, a.Iy]])  # [[∫x², ∫xy], [∫xy, ∫y²]]
    R = np.array([[c, -s], [s, c]])
    T2 = R @ T @ R.T
    assert (r.Iz, r.Iyz, r.Iy) == pytest.approx((T2[0, 0], T2[0, 1], T2[1, 1]))


def test_composite_profile_sums_parts():
    f = _file("IFC4")
    lower = f.createIfcRectangleProfileDef("AREA", "a", _placement(f, 0.0, -0.5), 2.0, 1.0)
    upper = f.createIfcRectangleProfileDef("AREA", "b", _placement(f, 0.0, 0.5), 2.0, 1.0)
    both = section_properties(f.createIfcCompositeProfileDef("AREA", "ab", [lower, upper], None))
    whole = section_properties(f.createIfcRectangleProfileDef("AREA", "w", _placement(f), 2.0, 2.0))
    for k in ("A", "Iy", "Iz", "Iyz", "cy", "cz"):
        assert getattr(both, k) == pytest.approx(getattr(whole, k), abs=1e-12), k


# ---------------------------------------------------------------- errors


@pytest.mark.parametrize("schema", SCHEMAS)
def test_unsupported_profile_raises_with_entity(schema):
    f = _file(schema)
    pts = [f.createIfcCartesianPoint((0.0, 0.0)), f.createIfcCartesianPoint((1.0, 0.0))]
    p = f.createIfcArbitraryOpenProfileDef("CURVE", "open", f.createIfcPolyline(pts))
    with pytest.raises(IfcInputError, match=r"^#\d+ IfcArbitraryOpenProfileDef 'open': ") as err:
        section_properties(p)
    assert err.value.entity_id == p.id()


@pytest.mark.parametrize("value", [0.0, -5.0])
def test_non_positive_dimension_raises(value):
    f = _file("IFC4")
    p = f.createIfcRectangleProfileDef("AREA", "bad", _placement(f), value, 10.0)
    with pytest.raises(IfcInputError, match=r"#\d+ IfcRectangleProfileDef 'bad': XDim"):
        section_properties(p)


def test_nan_dimension_raises():
    # ifcopenshell refuses to store NaN, so a stand-in entity carries it
    class Fake:
        ProfileName = "nan"
        ProfileType = "AREA"
        Position = None
        XDim = float("nan")
        YDim = 1.0

        def id(self):
            return 99

        def is_a(self, name=None):
            chain = ("IfcRectangleProfileDef", "IfcParameterizedProfileDef", "IfcProfileDef")
            return "IfcRectangleProfileDef" if name is None else name in chain

    with pytest.raises(IfcInputError, match=r"^#99 IfcRectangleProfileDef 'nan': XDim"):
        section_properties(Fake())


def test_inconsistent_dimensions_raise():
    f = _file("IFC4")
    p = f.createIfcCircleHollowProfileDef("AREA", "thick", _placement(f), 10.0, 12.0)
    with pytest.raises(IfcInputError, match=r"#\d+ IfcCircleHollowProfileDef 'thick'"):
        section_properties(p)


# ------------------------------------------------------ Pset_ProfileMechanical


def test_pset_profile_mechanical_mapping(caplog):
    values = {
        "id": 12,
        "CrossSectionArea": 5381.0,
        "MomentOfInertiaY": 8.356e7,  # about ys ∥ profile x: our Iy (major axis of an IPE)
        "MomentOfInertiaZ": 6.038e6,
        "MomentOfInertiaYZ": -1.0,
        "TorsionalConstantX": 2.01e5,
        "ShearAreaY": 3000.0,  # fallback only
        "ShearDeformationAreaZ": 2568.0,
        "CentreOfGravityInX": -3.0,
        "CentreOfGravityInY": 0.0,
        "ShearAreaZ": -4.0,  # ignored: Avz already from the deformation area
    }
    out = section_from_pset(values)
    assert out == {
        "A": 5381.0, "Iy": 8.356e7, "Iz": 6.038e6, "Iyz": -1.0, "J": 2.01e5,
        "Avz": 2568.0, "cy": -3.0, "cz": 0.0, "Avy": 3000.0,
    }
    assert set(out) <= set(PSET_FIELD_UNITS)
    with caplog.at_level(logging.WARNING):
        assert section_from_pset({"CrossSectionArea": -1.0, "MomentOfInertiaY": "x"}) == {}
    assert "CrossSectionArea" in caplog.text
    # overrides apply with dataclasses.replace
    import dataclasses

    base = SectionProperties(1.0, 1.0, 1.0, 1.0, 1.0, 1.0)
    assert dataclasses.replace(base, **out).Iy == 8.356e7

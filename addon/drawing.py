"""Blender objects for the analytical frame and its results.

Everything lives under one collection of our own (found by the custom
property ``pf_root``), with one child collection per role: members, nodes,
supports, releases, deformed shape, diagrams, legend. Every mesh carries a
colour attribute ``pf_colour`` so the Workbench renderer (colour type
'Attribute') and the material ``PF colour`` (EEVEE) show the same colours.

Symbols (our own): a node is a small ball; a support that holds every
component is a flat block under the node, one that holds the translations a
pyramid with its apex at the node, one that holds only some components a
pyramid standing on a separate slab; a released member end is a ball on the
member close to that end. Internal-force diagrams are drawn on the member,
moments on the side of the stretched fibres (My > 0 towards local +z,
Mz > 0 towards local -y), N, T and Vz towards local +z, Vy towards +y.
"""
from __future__ import annotations

import math

import bpy
import numpy as np

from . import readout

__all__ = ["ROLES", "PALETTE", "root_collection", "role_collection", "clear_role", "clear_all",
           "draw_frame", "store_results", "store_stability", "draw_deformed", "draw_mechanism", "draw_shape",
           "colour_members",
           "draw_diagram", "member_objects", "colour_scale", "shade_viewports"]

ROLES = {
    "members": "PF members",
    "nodes": "PF nodes",
    "supports": "PF supports",
    "releases": "PF releases",
    "deformed": "PF deformed shape",
    "diagrams": "PF diagrams",
    "legend": "PF legend",
}

def _linear(rgb):
    """sRGB display values -> the linear values Blender stores in colour attributes."""
    c = np.asarray(rgb, float)
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


# Colours of our own, written as display (sRGB) values.
_PALETTE_SRGB = {
    "member": (0.62, 0.65, 0.69),
    "node": (0.20, 0.21, 0.24),
    "support": (0.22, 0.55, 0.45),
    "release": (0.98, 0.80, 0.25),
    "deformed": (0.90, 0.45, 0.15),
    "mechanism": (0.85, 0.15, 0.60),
    "text": (0.10, 0.10, 0.12),
}
PALETTE = {k: tuple(_linear(v)) + (1.0,) for k, v in _PALETTE_SRGB.items()}
# Colour scales of our own: signed quantities run from cool (negative) through
# a pale middle to warm (positive); magnitudes from pale to dark.
_SIGNED = _linear([(0.15, 0.30, 0.65), (0.35, 0.70, 0.80), (0.92, 0.92, 0.87),
                   (0.96, 0.66, 0.22), (0.70, 0.12, 0.14)])
_MAGNITUDE = _linear([(0.92, 0.92, 0.87), (0.96, 0.80, 0.35), (0.93, 0.50, 0.16),
                      (0.75, 0.18, 0.14), (0.38, 0.06, 0.12)])

MATERIAL_NAME = "PF colour"
COLOUR_ATTRIBUTE = "pf_colour"


# --------------------------------------------------------------------------- collections
def root_collection(scene) -> bpy.types.Collection:
    """plumbframe's collection in ``scene`` (created when missing)."""
    for coll in scene.collection.children_recursive:
        if coll.get("pf_root"):
            return coll
    coll = bpy.data.collections.new("plumbframe")
    coll["pf_root"] = True
    scene.collection.children.link(coll)
    return coll


def role_collection(scene, role: str) -> bpy.types.Collection:
    root = root_collection(scene)
    for coll in root.children:
        if coll.get("pf_role") == role:
            return coll
    coll = bpy.data.collections.new(ROLES[role])
    coll["pf_role"] = role
    root.children.link(coll)
    return coll


def clear_role(scene, role: str) -> None:
    """Delete the objects (and their data) of one role."""
    coll = role_collection(scene, role)
    for obj in list(coll.objects):
        data = obj.data
        bpy.data.objects.remove(obj, do_unlink=True)
        if data is not None and data.users == 0:
            _remove_data(data)


def clear_all(scene) -> None:
    for role in ROLES:
        clear_role(scene, role)


def _remove_data(data) -> None:
    if isinstance(data, bpy.types.Mesh):
        bpy.data.meshes.remove(data)
    elif isinstance(data, bpy.types.Curve):
        bpy.data.curves.remove(data)


def member_objects(scene) -> dict[str, bpy.types.Object]:
    """Member id -> member object."""
    return {obj["pf_id"]: obj for obj in role_collection(scene, "members").objects if "pf_id" in obj}


def _node_objects(scene) -> dict[str, bpy.types.Object]:
    return {obj["pf_id"]: obj for obj in role_collection(scene, "nodes").objects if "pf_id" in obj}


# --------------------------------------------------------------------------- meshes
def _material() -> bpy.types.Material:
    mat = bpy.data.materials.get(MATERIAL_NAME)
    if mat is None:
        mat = bpy.data.materials.new(MATERIAL_NAME)
        if mat.node_tree is None:  # Blender < 5.0 creates materials without nodes
            mat.use_nodes = True
        nodes, links = mat.node_tree.nodes, mat.node_tree.links
        bsdf = next((n for n in nodes if n.type == "BSDF_PRINCIPLED"), None) or nodes.new("ShaderNodeBsdfPrincipled")
        attr = nodes.new("ShaderNodeAttribute")
        attr.attribute_name = COLOUR_ATTRIBUTE
        links.new(attr.outputs["Color"], bsdf.inputs["Base Color"])
        bsdf.inputs["Roughness"].default_value = 0.6
    return mat


def _mesh(name: str, verts: np.ndarray, loops: np.ndarray, sizes: np.ndarray,
          colours: np.ndarray | None = None, domain: str = "POINT", values: np.ndarray | None = None) -> bpy.types.Mesh:
    """A mesh from flat arrays: ``verts (v,3)``, ``loops`` (vertex of each corner), ``sizes`` (corners per face)."""
    me = bpy.data.meshes.new(name)
    verts = np.asarray(verts, np.float32).reshape(-1, 3)
    loops = np.asarray(loops, np.int32).ravel()
    sizes = np.asarray(sizes, np.int32).ravel()
    me.vertices.add(len(verts))
    me.vertices.foreach_set("co", verts.ravel())
    me.loops.add(len(loops))
    me.loops.foreach_set("vertex_index", loops)
    me.polygons.add(len(sizes))
    starts = np.zeros(len(sizes), np.int32)
    if len(sizes) > 1:
        starts[1:] = np.cumsum(sizes)[:-1]
    me.polygons.foreach_set("loop_start", starts)
    me.update(calc_edges=True)
    me.validate(clean_customdata=False)
    if colours is None:
        colours = np.tile(PALETTE["member"], (len(verts) if domain == "POINT" else len(sizes), 1))
    _set_colours(me, colours, domain)
    if values is not None:
        attr = me.attributes.new("pf_value", "FLOAT", domain)
        attr.data.foreach_set("value", np.asarray(values, np.float32).ravel())
    me.materials.append(_material())
    return me


def _set_colours(me, colours, domain: str = "POINT") -> None:
    """Colour per vertex (``domain='POINT'``) or per face ('FACE', stored per face corner)."""
    attr = me.color_attributes.get(COLOUR_ATTRIBUTE)
    if attr is not None:
        me.color_attributes.remove(attr)
    colours = np.asarray(colours, np.float32)
    if domain == "FACE":  # colour attributes live on points or corners only
        if colours.ndim == 2:
            sizes = np.zeros(len(me.polygons), np.int32)
            me.polygons.foreach_get("loop_total", sizes)
            colours = np.repeat(colours, sizes, axis=0)
        domain = "CORNER"
    attr = me.color_attributes.new(COLOUR_ATTRIBUTE, "FLOAT_COLOR", domain)
    if colours.ndim == 1:
        colours = np.tile(colours, (len(attr.data), 1))
    attr.data.foreach_set("color", colours.ravel())
    me.color_attributes.active_color = attr
    me.color_attributes.render_color_index = me.color_attributes.active_color_index


def _perpendiculars(direction: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    d = direction / np.linalg.norm(direction)
    helper = np.array([0.0, 0.0, 1.0]) if abs(d[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
    a = np.cross(d, helper)
    a /= np.linalg.norm(a)
    return a, np.cross(d, a)


def _tube(points: np.ndarray, radius: float, sides: int = 8, ey=None, ez=None):
    """Vertices, loops and face sizes of a tube through ``points (k,3)``."""
    points = np.asarray(points, float)
    k = len(points)
    if ey is None or ez is None:
        ey, ez = _perpendiculars(points[-1] - points[0])
    ang = np.linspace(0.0, 2.0 * math.pi, sides, endpoint=False)
    ring = np.cos(ang)[:, None] * ey[None, :] + np.sin(ang)[:, None] * ez[None, :]
    verts = (points[:, None, :] + radius * ring[None, :, :]).reshape(-1, 3)
    i = np.arange(k - 1)[:, None]
    j = np.arange(sides)[None, :]
    jn = (j + 1) % sides
    quads = np.stack([i * sides + j, i * sides + jn, (i + 1) * sides + jn, (i + 1) * sides + j], axis=-1).reshape(-1, 4)
    cap0 = np.arange(sides)[::-1]
    cap1 = (k - 1) * sides + np.arange(sides)
    loops = np.concatenate([quads.ravel(), cap0, cap1])
    sizes = np.concatenate([np.full(len(quads), 4), [sides, sides]])
    return verts, loops, sizes


def _merge(parts):
    """Concatenate several (verts, loops, sizes) triples into one."""
    verts, loops, sizes, offset = [], [], [], 0
    for v, lo, s in parts:
        verts.append(v)
        loops.append(np.asarray(lo) + offset)
        sizes.append(s)
        offset += len(v)
    if not verts:
        return np.zeros((0, 3)), np.zeros(0, np.int32), np.zeros(0, np.int32)
    return np.concatenate(verts), np.concatenate(loops), np.concatenate(sizes)


def _uv_ball(radius: float, rings: int = 6, segments: int = 10):
    """Vertices, loops and sizes of a small ball centred on the origin."""
    verts = [(0.0, 0.0, radius)]
    for r in range(1, rings):
        phi = math.pi * r / rings
        for s in range(segments):
            th = 2 * math.pi * s / segments
            verts.append((radius * math.sin(phi) * math.cos(th), radius * math.sin(phi) * math.sin(th), radius * math.cos(phi)))
    verts.append((0.0, 0.0, -radius))
    loops, sizes = [], []
    last = len(verts) - 1
    for s in range(segments):
        loops += [0, 1 + s, 1 + (s + 1) % segments]
        sizes.append(3)
    for r in range(rings - 2):
        a, b = 1 + r * segments, 1 + (r + 1) * segments
        for s in range(segments):
            sn = (s + 1) % segments
            loops += [a + s, b + s, b + sn, a + sn]
            sizes.append(4)
    a = 1 + (rings - 2) * segments
    for s in range(segments):
        loops += [a + s, last, a + (s + 1) % segments]
        sizes.append(3)
    return np.array(verts), np.array(loops), np.array(sizes)


def _box(centre, size_xyz):
    c, h = np.asarray(centre, float), np.asarray(size_xyz, float) / 2
    corners = np.array([[sx, sy, sz] for sz in (-1, 1) for sy in (-1, 1) for sx in (-1, 1)], float) * h + c
    faces = [(0, 2, 3, 1), (4, 5, 7, 6), (0, 1, 5, 4), (2, 6, 7, 3), (0, 4, 6, 2), (1, 3, 7, 5)]
    return corners, np.array(faces).ravel(), np.full(6, 4)


def _pyramid(apex, height, half_width):
    a = np.asarray(apex, float)
    base = a + np.array([[-half_width, -half_width, -height], [half_width, -half_width, -height],
                         [half_width, half_width, -height], [-half_width, half_width, -height]])
    verts = np.vstack([a, base])
    loops = [0, 1, 2, 0, 2, 3, 0, 3, 4, 0, 4, 1, 4, 3, 2, 1]
    return verts, np.array(loops), np.array([3, 3, 3, 3, 4])


def _object(name: str, data, collection, location=(0.0, 0.0, 0.0)) -> bpy.types.Object:
    obj = bpy.data.objects.new(name, data)
    obj.location = location
    collection.objects.link(obj)
    return obj


def _sizes(frame) -> dict[str, float]:
    ext = readout.model_extent(frame)
    r = max(ext * 0.004, 0.01)
    return {"extent": ext, "radius": r, "node": 2.2 * r, "support": max(ext * 0.025, 0.08), "release": 2.0 * r}


def _member_axes(frame) -> np.ndarray:
    """Member axes from the engine (rows: local x, y, z in world components)."""
    from .engine import engine

    return engine("model").member_axes(frame)


# --------------------------------------------------------------------------- the frame
def draw_frame(scene, frame, labels: dict | None = None) -> dict[str, int]:
    """Draw members, nodes, supports and releases of ``frame``; returns counts per role."""
    clear_all(scene)
    sz = _sizes(frame)
    R = _member_axes(frame) if frame.n_members else np.zeros((0, 3, 3))
    counts = dict.fromkeys(ROLES, 0)

    members = role_collection(scene, "members")
    for k, mid in enumerate(frame.member_ids):
        pts = readout.axis_points(frame, k, np.array([0.0, float(frame.lengths[k])]))
        centre = pts.mean(axis=0)
        v, lo, s = _tube(pts - centre, sz["radius"], ey=R[k, 1], ez=R[k, 2])
        obj = _object(f"PF member {mid}", _mesh(f"PF member {mid}", v, lo, s), members, centre)
        i, j = frame.members[k]
        obj["pf_kind"] = "member"
        obj["pf_id"] = mid
        obj["pf_label"] = frame.member_labels[k]
        obj["pf_source"] = frame.member_sources[k] or ""
        obj["pf_nodes"] = [frame.node_ids[i], frame.node_ids[j]]
        obj["pf_length"] = float(frame.lengths[k])
        obj["pf_section"] = frame.section_names[k]
        obj["pf_material"] = frame.material_names[k]
        obj["pf_truss"] = bool(frame.truss[k])
        obj["pf_axes"] = [float(x) for x in R[k].ravel()]
        counts["members"] += 1

    nodes = role_collection(scene, "nodes")
    ball = _mesh("PF node", *_uv_ball(sz["node"]), colours=np.array(PALETTE["node"]))
    dof = ("ux", "uy", "uz", "rx", "ry", "rz")
    for n, nid in enumerate(frame.node_ids):
        obj = _object(f"PF node {nid}", ball, nodes, tuple(frame.nodes[n]))
        obj["pf_kind"] = "node"
        obj["pf_id"] = nid
        obj["pf_label"] = frame.node_labels[n]
        obj["pf_source"] = frame.node_sources[n] or ""
        obj["pf_restraints"] = " ".join(d for d, r in zip(dof, frame.restraints[n]) if r)
        counts["nodes"] += 1

    supports = role_collection(scene, "supports")
    h, w = sz["support"], 0.6 * sz["support"]
    for n in np.flatnonzero(frame.supported):
        rest = frame.restraints[n]
        if rest.all():
            parts = [_box((0, 0, -0.25 * h), (2 * w, 2 * w, 0.5 * h))]
            kind = "fixed"
        elif rest[:3].all():
            parts = [_pyramid((0, 0, 0), h, w)]
            kind = "pinned"
        else:
            parts = [_pyramid((0, 0, 0), 0.8 * h, w), _box((0, 0, -1.05 * h), (2.4 * w, 2.4 * w, 0.2 * h))]
            kind = "partial"
        nid = frame.node_ids[n]
        me = _mesh(f"PF support {nid}", *_merge(parts), colours=np.array(PALETTE["support"]))
        obj = _object(f"PF support {nid}", me, supports, tuple(frame.nodes[n]))
        obj["pf_kind"] = "support"
        obj["pf_id"] = nid
        obj["pf_support"] = kind
        obj["pf_restraints"] = " ".join(d for d, r in zip(dof, rest) if r)
        if (frame.springs[n] > 0).any():
            obj["pf_springs"] = [float(x) for x in frame.springs[n]]
        counts["supports"] += 1

    releases = role_collection(scene, "releases")
    rball = _mesh("PF release", *_uv_ball(sz["release"]), colours=np.array(PALETTE["release"]))
    actions = ("N", "Vy", "Vz", "T", "My", "Mz")
    for k in np.flatnonzero(frame.releases.any(axis=(1, 2))):
        L = float(frame.lengths[k])
        for end in (0, 1):
            rel = frame.releases[k, end]
            if not rel.any():
                continue
            at = min(0.05 * L, 4 * sz["node"])
            s = at if end == 0 else L - at
            pos = readout.axis_points(frame, k, np.array([s]))[0]
            mid = frame.member_ids[k]
            obj = _object(f"PF release {mid} {'ij'[end]}", rball, releases, tuple(pos))
            obj["pf_kind"] = "release"
            obj["pf_id"] = mid
            obj["pf_end"] = "ij"[end]
            obj["pf_released"] = " ".join(a for a, r in zip(actions, rel) if r)
            counts["releases"] += 1
    return counts


# --------------------------------------------------------------------------- results
def store_results(scene, results) -> None:
    """Copy the results onto the member and node objects as custom properties (SI units)."""
    frame = results.frame
    cases = list(results.cases)
    envelopes = results.envelopes()
    for k, mid in enumerate(frame.member_ids):
        obj = member_objects(scene).get(mid)
        if obj is None:
            continue
        per_case = {}
        for case in cases:
            dg = results.diagram(case, k)
            entry = {"stations": [float(x) for x in dg.stations]}
            for q in readout.FORCES:
                entry[q] = [float(x) for x in dg[q]]
            entry["dy"] = [float(x) for x in dg["dy"]]
            entry["dz"] = [float(x) for x in dg["dz"]]
            per_case[case] = entry
        obj["pf_results"] = per_case
        obj["pf_envelope"] = {q: [float(v) for v in envelopes[mid][q]] for q in readout.FORCES}
    nodes = _node_objects(scene)
    dof = ("ux", "uy", "uz", "rx", "ry", "rz")
    forces = ("fx", "fy", "fz", "mx", "my", "mz")
    supported = frame.supported
    for n, nid in enumerate(frame.node_ids):
        obj = nodes.get(nid)
        if obj is None:
            continue
        obj["pf_displacements"] = {c: {d: float(v) for d, v in zip(dof, results.cases[c].displacements[n])} for c in cases}
        if supported[n]:
            obj["pf_reactions"] = {c: {f: float(v) for f, v in zip(forces, results.cases[c].reactions[n])} for c in cases}
    scene["pf_cases"] = cases
    scene["pf_units"] = "SI: m, N, N*m, rad"


def _auto(scale: float, largest: float, target: float) -> float:
    if scale > 0:
        return scale
    return target / largest if largest > 0 else 1.0


def draw_deformed(scene, results, case: str, scale: float = 0.0) -> tuple[bpy.types.Object, float]:
    """The deflected axes of all members for ``case``; returns the object and the scale used."""
    clear_role(scene, "deformed")
    frame = results.frame
    sz = _sizes(frame)
    largest = max((float(readout.member_values(results, case, k, "DISPLACEMENT")[1].max())
                   for k in range(frame.n_members)), default=0.0)
    scale = _auto(scale, largest, sz["extent"] / 20.0)
    R = _member_axes(frame)
    parts = [_tube(readout.displaced_axis(results, case, k, scale), sz["radius"] * 0.8, ey=R[k, 1], ez=R[k, 2])
             for k in range(frame.n_members)]
    me = _mesh(f"PF deformed {case}", *_merge(parts), colours=np.array(PALETTE["deformed"]))
    obj = _object(f"PF deformed {case}", me, role_collection(scene, "deformed"))
    obj["pf_kind"] = "deformed"
    obj["pf_case"] = case
    obj["pf_scale"] = scale
    obj["pf_max_displacement"] = largest
    return obj, scale


def draw_mechanism(scene, frame, motion: np.ndarray, index: int = 0, text: str = "") -> bpy.types.Object:
    """A mechanism mode (nodal motion ``(n,6)``, any scale) drawn as straight members between moved nodes."""
    if index == 0:
        clear_role(scene, "deformed")
    sz = _sizes(frame)
    motion = np.asarray(motion, float).reshape(frame.n_nodes, 6)
    largest = float(np.linalg.norm(motion[:, :3], axis=1).max()) if frame.n_nodes else 0.0
    scale = _auto(0.0, largest, sz["extent"] / 8.0)
    moved = frame.nodes + scale * motion[:, :3]
    parts = []
    for k in range(frame.n_members):
        i, j = frame.members[k]
        parts.append(_tube(np.array([moved[i] + frame.offsets[k, 0], moved[j] + frame.offsets[k, 1]]), sz["radius"]))
    me = _mesh(f"PF mechanism {index + 1}", *_merge(parts), colours=np.array(PALETTE["mechanism"]))
    obj = _object(f"PF mechanism {index + 1}", me, role_collection(scene, "deformed"))
    obj["pf_kind"] = "mechanism"
    obj["pf_mechanism"] = index + 1
    obj["pf_description"] = text
    obj["pf_scale"] = scale
    return obj


def store_stability(scene, results) -> None:
    """Critical factors, frequencies and modal masses of ``results`` as the scene's ``pf_stability``."""
    doc = {"theory": str(getattr(results, "theory", "first-order"))}
    buckling = getattr(results, "buckling", None)
    if buckling is not None:
        doc["buckling"] = {name: [float(m.factor) for m in found] for name, found in buckling.items()}
    modes = getattr(results, "modes", None)
    if modes is not None:
        # float lists only (what ID properties hold plainly), one entry per mode
        doc["modes"] = {"frequency": [float(m.frequency) for m in modes], "period": [float(m.period) for m in modes],
                        **{f"mass_{a}": [float(m.effective_mass_ratio[i]) for m in modes] for i, a in enumerate("xyz")}}
        doc["mass"] = float(results.mass.total)
    scene["pf_stability"] = doc


def draw_shape(scene, frame, along, scale: float = 0.0, label: str = "") -> tuple[bpy.types.Object, float]:
    """A buckling or natural mode (per member its points end i → end j, largest translation 1), drawn at ``scale``."""
    clear_role(scene, "deformed")
    sz = _sizes(frame)
    scale = scale if scale > 0 else sz["extent"] / 8.0
    parts = []
    for k, pts in enumerate(along):
        i, j = frame.members[k]
        pts = np.asarray(pts, float)
        t = np.linspace(0.0, 1.0, len(pts))[:, None]
        base = (1 - t) * (frame.nodes[i] + frame.offsets[k, 0]) + t * (frame.nodes[j] + frame.offsets[k, 1])
        parts.append(_tube(base + scale * pts[:, :3], sz["radius"] * 0.8))
    me = _mesh("PF shape", *_merge(parts), colours=np.array(PALETTE["mechanism"]))
    obj = _object("PF shape", me, role_collection(scene, "deformed"))
    obj["pf_kind"] = "shape"
    obj["pf_description"] = label
    obj["pf_scale"] = scale
    return obj, scale


def colour_scale(values: np.ndarray, vmin: float, vmax: float, signed: bool) -> np.ndarray:
    """RGBA ``(s,4)`` for ``values`` on our colour scales."""
    values = np.asarray(values, float)
    stops = _SIGNED if signed else _MAGNITUDE
    span = vmax - vmin
    t = np.clip((values - vmin) / span, 0.0, 1.0) if span > 0 else np.full(values.shape, 0.5 if signed else 0.0)
    x = t * (len(stops) - 1)
    lo = np.minimum(np.floor(x).astype(int), len(stops) - 2)
    f = (x - lo)[:, None]
    rgb = stops[lo] * (1 - f) + stops[lo + 1] * f
    return np.concatenate([rgb, np.ones((len(values), 1))], axis=1)


def colour_members(scene, results, case: str, quantity: str) -> tuple[float, float]:
    """Colour every member by ``quantity`` along its length and draw the legend; returns (vmin, vmax)."""
    frame = results.frame
    sz = _sizes(frame)
    R = _member_axes(frame)
    objs = member_objects(scene)
    data = [readout.member_values(results, case, k, quantity) for k in range(frame.n_members)]
    signed = quantity != "DISPLACEMENT"
    peak = max((float(np.abs(v).max()) for _, v in data if v.size), default=0.0)
    vmin, vmax = (-peak, peak) if signed else (0.0, peak)
    for k, mid in enumerate(frame.member_ids):
        obj = objs.get(mid)
        if obj is None:
            continue
        s, v = data[k]
        pts = readout.axis_points(frame, k, s) - np.asarray(obj.location)
        verts, loops, sizes = _tube(pts, sz["radius"], ey=R[k, 1], ez=R[k, 2])
        ring = verts.shape[0] // len(s)
        colours = np.repeat(colour_scale(v, vmin, vmax, signed), ring, axis=0)
        old = obj.data
        obj.data = _mesh(f"PF member {mid}", verts, loops, sizes, colours=colours, values=np.repeat(v, ring))
        if old.users == 0:
            bpy.data.meshes.remove(old)
        obj["pf_colour_quantity"] = quantity
        obj["pf_colour_case"] = case
        obj["pf_colour_range"] = [float(v.min()), float(v.max())] if v.size else [0.0, 0.0]
    _legend(scene, frame, quantity, case, vmin, vmax, signed)
    return vmin, vmax


def _text(name: str, body: str, size: float, location, collection, rotation=None) -> bpy.types.Object:
    """Text as a mesh object (upright, readable from -Y) coloured like the rest of our geometry.

    ``rotation`` (3×3, columns: the text's right, up and facing directions) turns it into a view's plane
    and centres it on ``location``."""
    cu = bpy.data.curves.new(name, "FONT")
    cu.body = body
    cu.size = size
    if rotation is not None:
        cu.align_x, cu.align_y = "CENTER", "CENTER"
    tmp = bpy.data.objects.new(name, cu)
    me = bpy.data.meshes.new_from_object(tmp)
    bpy.data.objects.remove(tmp)
    bpy.data.curves.remove(cu)
    _set_colours(me, np.array(PALETTE["text"]), "POINT")
    me.materials.append(_material())
    obj = _object(name, me, collection, location)
    if rotation is None:
        obj.rotation_euler = (math.pi / 2, 0.0, 0.0)
    else:
        from mathutils import Matrix

        obj.rotation_euler = Matrix(np.asarray(rotation).tolist()).to_euler()
    obj["pf_text"] = body
    return obj


def _legend(scene, frame, quantity: str, case: str, vmin: float, vmax: float, signed: bool) -> None:
    clear_role(scene, "legend")
    coll = role_collection(scene, "legend")
    ext = readout.model_extent(frame)
    lo, hi = frame.nodes.min(axis=0), frame.nodes.max(axis=0)
    x0, y0, z0 = hi[0] + 0.12 * ext, hi[1], lo[2]  # beyond the frame's far right corner seen from -Y
    height, width, bands = 0.6 * ext, 0.05 * ext, 12
    verts, loops, sizes, colours = [], [], [], []
    for b in range(bands):
        za, zb = z0 + height * b / bands, z0 + height * (b + 1) / bands
        base = len(verts)
        verts += [(x0, y0, za), (x0 + width, y0, za), (x0 + width, y0, zb), (x0, y0, zb)]
        loops += [base, base + 1, base + 2, base + 3]
        sizes.append(4)
        colours.append(colour_scale(np.array([vmin + (vmax - vmin) * (b + 0.5) / bands]), vmin, vmax, signed)[0])
    me = _mesh("PF legend", np.array(verts), np.array(loops), np.array(sizes), colours=np.array(colours), domain="FACE")
    bar = _object("PF legend", me, coll)
    bar["pf_kind"] = "legend"
    bar["pf_quantity"] = quantity
    bar["pf_case"] = case
    bar["pf_range"] = [vmin, vmax]
    size = 0.03 * ext
    for t in range(5):
        value = vmin + (vmax - vmin) * t / 4
        _text(f"PF legend {t}", readout.format_value(quantity, value), size,
              (x0 + width * 1.3, y0, z0 + height * t / 4 - size / 3), coll)
    unit = readout.DISPLAY_UNITS[quantity][0]
    title = "displacement" if quantity == "DISPLACEMENT" else quantity
    _text("PF legend title", f"{title} [{unit}], {case}", size * 1.2, (x0, y0, z0 + height + size), coll)


_SIGN_COLOURS = colour_scale(np.array([0.7, -0.7]), -1.0, 1.0, True)


def _diagram_direction(quantity: str, R: np.ndarray) -> np.ndarray:
    if quantity == "Mz":
        return -R[1]
    if quantity == "Vy":
        return R[1]
    return R[2]


def _split_at_zeros(s: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Add the stations where ``v`` changes sign between two stations (linear)."""
    out_s, out_v = [s[0]], [v[0]]
    for a in range(len(s) - 1):
        if v[a] * v[a + 1] < 0:
            t = v[a] / (v[a] - v[a + 1])
            out_s.append(s[a] + t * (s[a + 1] - s[a]))
            out_v.append(0.0)
        out_s.append(s[a + 1])
        out_v.append(v[a + 1])
    return np.array(out_s), np.array(out_v)


def draw_diagram(scene, results, case: str, quantity: str, scale: float = 0.0, max_labels: int = 60):
    """The ``quantity`` diagram of every member as filled geometry; returns (object, scale used)."""
    clear_role(scene, "diagrams")
    frame = results.frame
    R = _member_axes(frame)
    ext = readout.model_extent(frame)
    data = [readout.member_values(results, case, k, quantity) for k in range(frame.n_members)]
    peak = max((float(np.abs(v).max()) for _, v in data if v.size), default=0.0)
    scale = _auto(scale, peak, ext / 10.0)
    verts, loops, sizes, colours, values = [], [], [], [], []
    from .engine import engine

    views = engine("report.views")
    view = views.drawing_view(frame)
    # fills of members in one plane overlap (a truss's N): each member's a hair nearer the viewer than the
    # one before, so the renderer shows one of them instead of stripes of both
    layer = 2e-4 * ext * view.n
    for k in range(frame.n_members):
        s, v = _split_at_zeros(*data[k])
        base = readout.axis_points(frame, k, s) + (k % 16) * layer
        tip = base + scale * v[:, None] * _diagram_direction(quantity, R[k])[None, :]
        first = sum(len(x) for x in verts)
        verts.append(np.concatenate([base, tip]))
        n = len(s)
        for a in range(n - 1):
            if s[a + 1] - s[a] <= 0 and v[a + 1] == v[a]:
                continue
            mean = 0.5 * (v[a] + v[a + 1])
            quad = [first + a, first + a + 1, first + n + a + 1, first + n + a]
            loops += quad if mean >= 0 else quad[::-1]  # one winding: every face's normal on the same side
            sizes.append(4)
            colours.append(_SIGN_COLOURS[0 if mean >= 0 else 1])
            values.append(mean)
    allv = np.concatenate(verts) if verts else np.zeros((0, 3))
    me = _mesh(f"PF diagram {quantity} {case}", allv, np.array(loops, np.int32), np.array(sizes, np.int32),
               colours=np.array(colours).reshape(-1, 4), domain="FACE", values=np.array(values))
    coll = role_collection(scene, "diagrams")
    obj = _object(f"PF diagram {quantity} {case}", me, coll)
    obj["pf_kind"] = "diagram"
    obj["pf_quantity"] = quantity
    obj["pf_case"] = case
    obj["pf_scale"] = scale
    obj["pf_peak"] = peak
    # the report's labels: member ends and extremes, placed without overlap in the frame's plane (or the
    # axonometric view of a space frame), the text lying in that view's plane
    size = 0.022 * ext
    towards_viewer = 0.01 * ext * view.n  # in front of the fill
    limit = max_labels if view.in_plane else min(max_labels, 24)  # a space frame: the largest values only
    placed = views.diagram_labels(results, case, quantity, view, scale=scale, text_height=size, limit=limit,
                            fmt=lambda value: readout.format_value(quantity, value), local=True)
    for lab, text, where in placed:
        mid = frame.member_ids[lab.member]
        label = _text(f"PF value {quantity} {mid}", text, size, tuple(where + towards_viewer), coll,
                      rotation=view.rotation())
        label["pf_kind"] = "diagram value"
        label["pf_id"] = mid
        label["pf_value"] = lab.value
    return obj, scale


def shade_viewports(context) -> None:
    """Show the colour attribute in the Workbench (viewports and renders)."""
    scene = context.scene
    try:
        scene.display.shading.color_type = "VERTEX"
    except TypeError:
        pass
    screen = getattr(context, "screen", None)
    if screen is None:
        return
    for area in screen.areas:
        if area.type == "VIEW_3D":
            for space in area.spaces:
                if space.type == "VIEW_3D":
                    space.shading.color_type = "VERTEX"

"""The check panel's joint-by-joint count, through the installed extension (headless)."""
from __future__ import annotations

import importlib
import pathlib
import types

import pytest

pytestmark = pytest.mark.addon

SAMPLES = pathlib.Path(__file__).resolve().parents[2] / "sample_models"


class _Layout:
    """Stands in for a panel's layout: records the label texts a draw() call produces."""

    def __init__(self, texts):
        self.texts = texts

    def column(self, **_):
        return self

    def box(self):
        return self

    def row(self, **_):
        return self

    def label(self, text="", **_):
        self.texts.append(text)


def test_check_panel_lists_the_count_joint_by_joint(bpy_clean, addon, engine):
    bpy = bpy_clean
    scene = bpy.context.scene
    settings = scene.plumbframe
    settings.plane = "PLANE"
    settings.inextensible = True
    settings.condense_pinned = True
    assert bpy.ops.plumbframe.load_ifc(filepath=str(SAMPLES / "roof_truss.ifc")) == {"FINISHED"}
    assert bpy.ops.plumbframe.check() == {"FINISHED"}

    # a determinate roof truss with every bar rigid: no joint can move (common practice, no source)
    check = scene["pf_check"]
    assert check["kinematic"] == 0
    joints = check["joints"].to_dict()
    frame = addon.engine.session(scene).frame
    assert list(joints) == list(frame.node_ids)
    assert sum(len(v["unknowns"]) + v["own_rotations"] for v in joints.values()) == 0
    assert sum(len(v["eliminated"]) for v in joints.values()) == frame.n_members

    # the panel shows what the engine formatted: one line per joint and the totals, nothing computed here
    lines = [str(x) for x in scene["pf_check_joints"]]
    count = importlib.import_module(engine.__name__ + ".indeterminacy").indeterminacy
    direct = count(frame, engine.AnalysisOptions(plane=True, inextensible=True, condense_pinned=True)).joint_lines()
    assert lines == direct and len(lines) == frame.n_nodes + 1
    assert lines[-1].startswith("total:") and "= 0 unknowns" in lines[-1]

    panel = addon.panels.PLUMBFRAME_PT_check_joints
    assert panel.poll(bpy.context)
    texts: list[str] = []
    panel.draw(types.SimpleNamespace(layout=_Layout(texts), LIMIT=panel.LIMIT), bpy.context)
    shown = " ".join(texts)
    assert frame.node_ids[0] in shown and "= 0 unknowns" in shown

    assert bpy.ops.plumbframe.clear() == {"FINISHED"}
    assert "pf_check_joints" not in scene and not panel.poll(bpy.context)

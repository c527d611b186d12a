"""The extension in the real host: Blender as a Python module (``bpy`` from the package
registry; CI runs this file on the newest 5.0.x and on 4.2 LTS).

Outside sources of truth: the host's own extension tool (``blender_ext.py validate``,
shipped inside the bpy package), the host's own install and preferences operators,
and what Blender's mesh API reports.  bpy can be imported once per process, so each
scenario is a script in tests/host_scripts run in its own process, with every
BLENDER_USER_* folder in a fresh temporary directory (nothing touches the real user's
configuration).  Expected selections are computed here with numpy from the vertex
positions the host reports, by a formula (arccos of normalised dot products in 3D)
independent of the add-on's (atan2 in each triangle's plane).
"""

import importlib.util
import json
import os
import subprocess
import sys
import zipfile
from pathlib import Path

import numpy as np
import pytest

from addon import build

ROOT = Path(__file__).resolve().parent.parent
SCRIPTS = Path(__file__).resolve().parent / "host_scripts"
EXTENSION = "bl_ext.user_default.flat_region_remesh"
MARK = "HOST-FACTS "
SETTINGS = {"min_angle", "max_edge_length", "smoothing", "point_limit", "flat_angle",
            "break_at_seams", "break_at_sharp", "break_at_material_borders",
            "keep_boundary", "straight_run_tolerance", "keep_interior_vertices"}
CLASSES = ["FlatRegionRemeshLastRun", "FlatRegionRemeshSettings",
           "MESH_OT_select_thin_triangles", "MESH_OT_remesh_flat_regions",
           "OBJECT_OT_remesh_flat_regions", "MESH_OT_flip_to_better_angles",
           "SCENE_OT_flat_region_remesh_preset", "VIEW3D_OT_flat_region_remesh_overlay",
           "VIEW3D_PT_flat_region_remesh"]
OPERATORS = ["mesh.select_thin_triangles", "mesh.remesh_flat_regions",
             "object.remesh_flat_regions", "mesh.flip_to_better_angles",
             "scene.flat_region_remesh_preset", "view3d.flat_region_remesh_overlay"]
FACE_ENTRY = EXTENSION + ".panel.draw_face_menu_entries"


def bpy_dir():
    """The installed bpy package folder; fails (never skips) when bpy is missing."""
    spec = importlib.util.find_spec("bpy")
    if spec is None or not spec.submodule_search_locations:
        pytest.fail("the host module `bpy` is not installed in this Python; it comes with "
                    "the test extra (pip install -e '.[test]') and needs Python 3.11")
    return Path(spec.submodule_search_locations[0])


def validator():
    """The host's own extension tool inside the bpy package."""
    found = sorted(bpy_dir().glob("*/scripts/addons_core/bl_pkg/cli/blender_ext.py"))
    assert found, f"blender_ext.py not found under {bpy_dir()}"
    return found[0]


@pytest.fixture(scope="module")
def extension_zip(tmp_path_factory):
    return build.build(tmp_path_factory.mktemp("dist"))


def host_env(folder):
    """Environment for a host process whose user folders all live in `folder`."""
    env = dict(os.environ)
    env["BLENDER_USER_RESOURCES"] = str(folder)
    for kind in ("CONFIG", "SCRIPTS", "DATAFILES", "EXTENSIONS"):
        env[f"BLENDER_USER_{kind}"] = str(folder / kind.lower())
    return env


def run_host(script, tmp_path, *args):
    """Run a scenario script in a fresh host process; return the facts it reports."""
    user = tmp_path / "user"
    user.mkdir()
    proc = subprocess.run([sys.executable, str(SCRIPTS / script), *map(str, args)],
                          env=host_env(user), cwd=tmp_path, capture_output=True,
                          text=True, timeout=300, check=False)
    lines = [ln for ln in proc.stdout.splitlines() if ln.startswith(MARK)]
    if proc.returncode != 0 or len(lines) != 1:
        pytest.fail(f"{script} exited {proc.returncode}\n--- stdout\n{proc.stdout[-4000:]}"
                    f"\n--- stderr\n{proc.stderr[-4000:]}")
    return json.loads(lines[0][len(MARK):]), user


def run_validator(path):
    return subprocess.run([sys.executable, str(validator()), "validate", str(path)],
                          capture_output=True, text=True, timeout=120, check=False)


def test_host_validator_accepts_the_built_zip(extension_zip):
    proc = run_validator(extension_zip)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert "Success" in proc.stdout
    assert "rror" not in proc.stdout + proc.stderr


def test_host_validator_rejects_a_broken_manifest(extension_zip, tmp_path):
    """The validator really checks: the same zip with a bad id and a tagline ending
    in a full stop is refused."""
    broken = tmp_path / "broken.zip"
    with zipfile.ZipFile(extension_zip) as src, zipfile.ZipFile(broken, "w") as dst:
        for name in src.namelist():
            data = src.read(name)
            if name == "blender_manifest.toml":
                data = (data.replace(b'id = "flat_region_remesh"', b'id = "flat-region remesh"')
                        .replace(b'triangles"', b'triangles."'))
            dst.writestr(name, data)
    proc = run_validator(broken)
    assert proc.returncode != 0
    assert 'key "id"' in proc.stdout and 'key "tagline"' in proc.stdout


def test_install_enable_and_disable_in_the_host(extension_zip, tmp_path):
    facts, user = run_host("install_cycle.py", tmp_path, extension_zip)
    assert facts["install"] == ["FINISHED"]
    # isolated: the host installed into the temporary user folder
    assert Path(facts["user_extensions"]).resolve().is_relative_to(user.resolve())
    with zipfile.ZipFile(extension_zip) as zf:
        assert facts["installed_files"] == sorted(zf.namelist())

    on = facts["after_enable"]
    assert on["enabled"]
    assert sorted(on["classes"]) == sorted(CLASSES)
    assert sorted(on["types"]) == sorted(c for c in CLASSES if "_OT_" in c or "_PT_" in c)
    assert on["operators"] == OPERATORS and on["scene_property"]
    assert on["menu_entries"] == {
        "VIEW3D_MT_select_edit_mesh": [EXTENSION + ".panel.draw_select_menu_entry"],
        "VIEW3D_MT_edit_mesh_faces": [FACE_ENTRY],
        "VIEW3D_MT_edit_mesh_context_menu": [FACE_ENTRY]}
    assert on["handlers"] == []          # the overlay's handler exists only while it is on

    # the engine came from inside the extension (relative imports), not from the repo
    assert all(m == EXTENSION or m.startswith(EXTENSION + ".") for m in facts["modules"])
    assert EXTENSION + ".engine.quality" in facts["modules"]
    assert not facts["top_level_engine_imported"]

    settings = facts["settings"]
    assert set(settings) == SETTINGS
    for name, prop in settings.items():
        text = prop["description"]
        assert text and prop["name"], name
        if "angle" in name:
            assert prop["type"] == "FLOAT" and "degrees" in text, name
        if prop["unit"] == "LENGTH":
            assert "scene units" in text and "0 =" in text, name
    assert {n for n, p in settings.items() if p["unit"] == "LENGTH"} == {
        "max_edge_length", "straight_run_tolerance"}
    assert settings["smoothing"]["type"] == "BOOLEAN"
    assert settings["point_limit"]["type"] == "INT" and "0 =" in \
        settings["point_limit"]["description"]
    assert facts["defaults"]["max_edge_length"] == 0.0
    for name, prop in facts["last_run"].items():
        assert prop["description"], name

    assert facts["panel"] == {"space": "VIEW_3D", "region": "UI", "category": "Flat Regions"}
    drawn = [name for kind, name in facts["panel_draws"] if kind == "prop"]
    assert sorted(drawn) == sorted(SETTINGS)  # every setting, once
    # Object Mode: the object remesh button, the three presets, the overlay toggle
    assert ["operator", "object.remesh_flat_regions"] in facts["panel_draws"]
    assert facts["panel_draws"].count(["operator", "scene.flat_region_remesh_preset"]) == 3
    assert ["operator", "view3d.flat_region_remesh_overlay"] in facts["panel_draws"]

    ops = facts["operators"]
    assert set(ops) == set(OPERATORS)
    for name in ("mesh.remesh_flat_regions", "object.remesh_flat_regions",
                 "mesh.flip_to_better_angles", "mesh.select_thin_triangles"):
        assert {"REGISTER", "UNDO"} <= set(ops[name]["options"]), name
        assert ops[name]["description"], name
    for name in ("mesh.remesh_flat_regions", "object.remesh_flat_regions"):
        props = ops[name]["properties"]
        assert set(props) == SETTINGS, name
        assert props["min_angle"]["unit"] != "LENGTH" and "degrees" in \
            props["min_angle"]["description"]
        assert "scene units" in props["max_edge_length"]["description"]
        assert "degrees" in props["flat_angle"]["description"]
    assert set(ops["mesh.flip_to_better_angles"]["properties"]) == {
        "flat_angle", "break_at_seams", "break_at_sharp", "break_at_material_borders"}
    assert "degrees" in ops["mesh.select_thin_triangles"]["properties"]["min_angle"][
        "description"]

    assert facts["disable"] == ["FINISHED"]
    off = facts["after_disable"]
    assert off == {"enabled": False, "classes": [], "types": [], "operators": [],
                   "scene_property": False, "handlers": [],
                   "menu_entries": {"VIEW3D_MT_select_edit_mesh": [],
                                    "VIEW3D_MT_edit_mesh_faces": [],
                                    "VIEW3D_MT_edit_mesh_context_menu": []}}


def smallest_angles_3d(positions, faces):
    """Smallest corner angle (degrees) of each triangle, arccos of normalised dots."""
    p = np.asarray(positions, dtype=np.float64)[np.asarray(faces)]
    angles = []
    for k in range(3):
        u = p[:, (k + 1) % 3] - p[:, k]
        w = p[:, (k + 2) % 3] - p[:, k]
        cos = (u * w).sum(1) / (np.linalg.norm(u, axis=1) * np.linalg.norm(w, axis=1))
        angles.append(np.degrees(np.arccos(np.clip(cos, -1.0, 1.0))))
    return np.min(angles, axis=0)


def expected_selection(state, threshold):
    """Visible triangles with a corner under `threshold`; also the smallest distance of
    any triangle's smallest angle from the threshold (the test's safety margin)."""
    tri_ids = [i for i, f in enumerate(state["faces"]) if len(f) == 3]
    mins = smallest_angles_3d(state["positions"], [state["faces"][i] for i in tri_ids])
    hidden = set(state["hidden"])
    chosen = {i for i, a in zip(tri_ids, mins) if a < threshold and i not in hidden}
    return chosen, float(np.abs(mins - threshold).min()), dict(zip(tri_ids, mins))


def test_select_thin_triangles_in_edit_mode_matches_numpy(extension_zip, tmp_path):
    facts, _ = run_host("select_thin.py", tmp_path, extension_zip)
    assert facts["install"] == ["FINISHED"]
    assert facts["poll_object_mode"] is False  # an Edit Mode operator
    assert facts["select_mode"] == [False, False, True]
    thresholds = {"25": 25.0, "12": 12.0, "12_extend": 12.0, "12_again": 12.0}
    for run, threshold in thresholds.items():
        assert facts["runs"][run]["result"] == ["FINISHED"]
        for name, state in facts["runs"][run]["objects"].items():
            chosen, margin, mins = expected_selection(state, threshold)
            assert margin > 1e-3, (run, name)  # no triangle is a rounding call
            expected = set(chosen)
            if run == "12_extend" and name == "plate":
                assert len(state["faces"][0]) == 4  # the hand-picked face is a quad
                expected.add(0)
            assert sorted(state["selected"]) == sorted(expected), (run, name)
            corners = {v for i in expected for v in state["faces"][i]}
            assert sorted(state["selected_vertices"]) == sorted(corners), (run, name)
            # the cases are not trivial: some triangles in, some out, hidden thin ones out
            assert 0 < len(chosen) < len(mins), (run, name)
            if name == "plate":
                assert state["hidden"] and all(mins[i] < threshold for i in state["hidden"])
    plate25 = facts["runs"]["25"]["objects"]["plate"]["selected"]
    plate12 = facts["runs"]["12"]["objects"]["plate"]["selected"]
    assert set(plate12) < set(plate25)


def test_repository_addon_registers_in_the_host(tmp_path):
    """The same add-on code imported from the repository (not from the zip)."""
    facts, _ = run_host("repo_register.py", tmp_path, ROOT)
    assert facts["engine_module"] == "engine"
    assert Path(facts["engine_file"]).resolve().parent == (ROOT / "engine").resolve()
    assert len(facts["registered"]) == len(CLASSES) and facts["scene_property"]
    assert facts["select"] == ["FINISHED"]
    # a 24-triangle fan: every triangle has a 360/24 = 15 degree corner at the centre
    assert facts["circle_faces"] == 24 and facts["circle_selected"] == 24
    assert facts["after_unregister"] == []

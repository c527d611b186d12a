"""The extension package without the host: what `python -m addon.build` writes, the
version contract, the add-on importing without bpy, and the add-on's angle measure
against an independent formula and textbook triangles."""

import ast
import subprocess
import sys
import tomllib
import zipfile
from pathlib import Path

import numpy as np
import pytest

import engine
from addon import build, measure

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    return build.build(tmp_path_factory.mktemp("dist"))


def test_zip_layout(built):
    assert built.name == "flat_region_remesh-0.1.0.zip"
    with zipfile.ZipFile(built) as zf:
        names = zf.namelist()
        assert zf.read("__init__.py") == (ROOT / "addon" / "__init__.py").read_bytes()
        assert zf.read("blender_manifest.toml") == (ROOT / "blender_manifest.toml").read_bytes()
    engine_files = {f"engine/{p.name}" for p in (ROOT / "engine").glob("*.py")}
    addon_files = {p.name for p in (ROOT / "addon").glob("*.py")} - build.NOT_SHIPPED
    assert {"build.py", "batch.py", "demo_scene.py"} <= build.NOT_SHIPPED
    assert set(names) == {"blender_manifest.toml"} | engine_files | addon_files
    assert not [n for n in names if "test" in n or "__pycache__" in n or n.endswith(".pyc")]


def test_build_is_reproducible_and_runs_as_a_module(built, tmp_path):
    proc = subprocess.run([sys.executable, "-m", "addon.build", "--out", str(tmp_path)],
                          cwd=ROOT, capture_output=True, text=True, check=True)
    again = Path(proc.stdout.strip())
    assert again == tmp_path / built.name
    assert again.read_bytes() == built.read_bytes()


def test_manifest_contract():
    manifest = tomllib.loads((ROOT / "blender_manifest.toml").read_text(encoding="utf-8"))
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert manifest["version"] == project["project"]["version"] == engine.__version__
    assert manifest["id"] == "flat_region_remesh" and manifest["name"] == "Flat Region Remesh"
    assert manifest["type"] == "add-on" and manifest["blender_version_min"] == "4.2.0"
    assert manifest["license"] == ["SPDX:GPL-3.0-or-later"]
    assert "permissions" not in manifest  # it reads no files and uses no network


def test_version_mismatch_is_refused(tmp_path):
    (tmp_path / "blender_manifest.toml").write_text('id = "x"\nversion = "9.9.9"\n')
    (tmp_path / "pyproject.toml").write_text('[project]\nversion = "0.1.0"\n')
    with pytest.raises(ValueError, match="9.9.9"):
        build.read_versions(tmp_path)


def test_addon_imports_without_the_host():
    code = ("import sys; sys.modules['bpy'] = None; sys.modules['bmesh'] = None\n"
            "import addon, addon.measure, addon.build, addon.engine_link as link\n"
            "import engine; assert link.engine is engine\n"
            "try:\n    addon.register()\nexcept ImportError:\n    print('needs host')\n")
    proc = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                          text=True, check=False)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "needs host"


def test_engine_imports_stay_relative_and_host_free():
    """The engine is copied into the zip: it may not import itself by absolute name,
    nor any host module."""
    for path in (ROOT / "engine").glob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                tops = [a.name.split(".")[0] for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.level == 0:
                tops = [node.module.split(".")[0]]
            else:
                continue
            assert not set(tops) & {"engine", "addon", "bpy", "bmesh", "mathutils"}, path


def arccos_smallest(points):
    p = np.asarray(points, dtype=np.float64)
    out = []
    for k in range(3):
        u, w = p[:, (k + 1) % 3] - p[:, k], p[:, (k + 2) % 3] - p[:, k]
        c = (u * w).sum(1) / np.linalg.norm(u, axis=1) / np.linalg.norm(w, axis=1)
        out.append(np.degrees(np.arccos(np.clip(c, -1, 1))))
    return np.min(out, axis=0)


def test_smallest_angles_of_textbook_triangles():
    s3 = np.sqrt(3.0)
    tris = np.array([
        [[0, 0, 0], [2, 0, 0], [1, s3, 0]],        # equilateral: 60
        [[0, 0, 5], [0, 1, 5], [0, 0, 6]],         # right isosceles: 45
        [[1, 1, 1], [1 + s3, 1, 1], [1, 1, 2]],    # 30-60-90: 30
        [[0, 0, 0], [1, 1, 1], [2, 2, 2]],         # collinear: 0
        [[3, 3, 3], [3, 3, 3], [4, 5, 6]],         # two corners on one point: 0
    ], dtype=float)
    got = measure.smallest_angles(tris.reshape(-1, 3), np.arange(15).reshape(5, 3))
    assert np.allclose(got, [60, 45, 30, 0, 0], atol=1e-9)


def test_smallest_angles_match_arccos_in_3d():
    rng = np.random.default_rng(7)
    pts = rng.normal(size=(600, 3)) * rng.uniform(0.01, 100, size=(600, 1))
    tris = rng.permutation(600).reshape(200, 3)
    assert np.allclose(measure.smallest_angles(pts, tris), arccos_smallest(pts[tris]),
                       atol=1e-6)


def test_thin_mask_skips_quads_and_hidden_faces():
    # a unit quad, then two 1 x 0.1 right triangles (smallest angle atan(0.1) = 5.71)
    pos = np.array([[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [0, 0.1, 0], [1, 0.1, 0]])
    corner_verts = np.array([0, 1, 2, 3, 0, 1, 5, 0, 5, 4])
    starts, totals = np.array([0, 4, 7]), np.array([4, 3, 3])
    assert measure.thin_triangle_mask(pos, starts, totals, corner_verts, 6).tolist() == [
        False, True, True]
    assert measure.thin_triangle_mask(pos, starts, totals, corner_verts, 5).tolist() == [
        False, False, False]
    hidden = np.array([False, True, False])
    assert measure.thin_triangle_mask(pos, starts, totals, corner_verts, 6,
                                      hidden).tolist() == [False, False, True]


def test_report_line_names_why_a_region_is_not_complete():
    # the one-line report: a region stopped by the point limit and one left
    # above the size limit are told apart (the engine's stop reasons)
    from addon import jobs
    figures = jobs.Figures(meshes=1)
    figures.add_regions([
        engine.RegionReport(region=0, faces=4, status="changed", complete=False,
                            stopped_by="point_cap",
                            reason="max_points reached: 10 points added, 3 triangles "
                                   "and 0 segments still queued"),
        engine.RegionReport(region=1, faces=4, status="changed", complete=False,
                            stopped_by="size_limit",
                            reason="2 triangle(s) above the size limits"),
        engine.RegionReport(region=2, faces=4, status="changed"),
    ])
    line = figures.line()
    assert "Remeshed 3 region(s)" in line
    assert "1 stopped at the point limit" in line
    assert "1 left above the size limit" in line

"""The headless batch command (``python -m addon.batch``) end to end in the real host.

Input files are invented meshes written by the host's own exporters
(tests/host_scripts/batch_inputs.py); every result is read back by the host's own
importers (tests/host_scripts/read_back.py), each in its own process with its user
folders in a temporary directory.  The checks use outside facts, computed here with
numpy from what the importers report:

* a closed oriented surface has every edge in exactly two faces and every directed
  edge once (the definition of a closed oriented 2-manifold);
* the volume of a closed solid is the flux of the position field through its surface
  (divergence theorem: V = 1/6 sum over triangles of p0 . (p1 x p2)); the invented
  plate's exact volume is its outline area times its thickness;
* Euler's formula for a connected surface of genus 0 with b boundary loops:
  V - E + F = 2 - b;
* a polygon of k corners splits into k - 2 triangles (polygon triangulation theorem),
  so the triangles an STL exporter writes recount the report's figures;
* angles recomputed independently (arccos of normalised dot products in 3D);
* the area of a regular n-gon of circumradius r is n r^2 sin(2 pi / n) / 2;
* the report is parsed by Python's ``json`` and the picture by ``xml.etree`` (well-formed
  XML whose root is ``svg`` in the SVG namespace http://www.w3.org/2000/svg, W3C SVG 1.1).
"""

import json
import math
import shutil
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

from tests.test_host_extension import host_env, run_host

ROOT = Path(__file__).resolve().parent.parent
SVG = "{http://www.w3.org/2000/svg}"
FLOAT32_VOLUME = 2e-6      # positions stored as float32 (relative spacing 6e-8)


def batch(args, user, timeout=300):
    """Run the batch command in its own process, user folders isolated."""
    return subprocess.run([sys.executable, "-m", "addon.batch", *map(str, args)], cwd=ROOT,
                          env=host_env(user), capture_output=True, text=True,
                          timeout=timeout, check=False)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """Write the inputs, run the batch command on each, the demo, and read everything
    back with the host's importers."""
    top = tmp_path_factory.mktemp("batch")
    inputs, out = top / "in", top / "out"
    inputs.mkdir()
    out.mkdir()
    made, _ = run_host("batch_inputs.py", tmp_path_factory.mktemp("inputs"), inputs)
    user = top / "user"
    user.mkdir()
    procs = {
        "stl": batch([inputs / "plate.stl", "-o", out / "plate-out.stl", "--report",
                      out / "plate.json", "--picture", out / "plate.svg"], user),
        "obj": batch([inputs / "floor.obj", "-o", out / "floor-out.obj", "--min-angle", 25,
                      "--max-edge-length", 1.5, "--report", out / "floor.json"], user),
        "ply": batch([inputs / "soup.ply", "-o", out / "soup-out.ply", "--report",
                      out / "soup.json"], user),
        "blend": batch([inputs / "plate.stl", "-o", out / "plate-kept.blend",
                        "--keep-boundary", "--report", out / "plate-kept.json"], user),
        "demo": batch(["--demo", out / "demo"], user),
    }
    files = [inputs / "plate.stl", inputs / "soup.ply", inputs / "floor.obj",
             out / "plate-out.stl", out / "floor-out.obj", out / "soup-out.ply",
             out / "plate-kept.blend", out / "demo" / "demo-result.blend",
             out / "demo" / "demo-result.stl"]
    missing = [f for f in files if not f.exists()]
    if missing:
        pytest.fail("no output: " + ", ".join(map(str, missing)) + "\n" + "\n".join(
            f"{k}: {p.returncode} {p.stdout} {p.stderr}" for k, p in procs.items()))
    meshes, _ = run_host("read_back.py", tmp_path_factory.mktemp("read"), *files)
    return {"inputs": inputs, "out": out, "made": made, "procs": procs, "meshes": meshes,
            "user": user, "top": top}


# ---------------------------------------------------------------- numpy facts
def edges_of(faces):
    for f in faces:
        yield from zip(f, f[1:] + f[:1])


def undirected_counts(faces):
    counts = {}
    for a, b in edges_of(faces):
        key = (min(a, b), max(a, b))
        counts[key] = counts.get(key, 0) + 1
    return counts


def is_closed_and_oriented(faces):
    directed = {}
    for a, b in edges_of(faces):
        directed[a, b] = directed.get((a, b), 0) + 1
    return set(undirected_counts(faces).values()) == {2} and set(directed.values()) == {1}


def volume(mesh):
    """Divergence theorem over a fan triangulation of every face."""
    p = np.asarray(mesh["positions"])
    tris = np.array([[f[0], f[k], f[k + 1]] for f in mesh["faces"]
                     for k in range(1, len(f) - 1)])
    q = p[tris]
    return float(np.einsum("ij,ij->i", q[:, 0], np.cross(q[:, 1], q[:, 2])).sum() / 6.0)


def corner_angles(points):
    """Angles (degrees) at the corners of a polygon, arccos of normalised dot products."""
    p = np.asarray(points)
    out = []
    for k in range(len(p)):
        u, w = p[(k + 1) % len(p)] - p[k], p[k - 1] - p[k]
        c = u @ w / (np.linalg.norm(u) * np.linalg.norm(w))
        out.append(math.degrees(math.acos(max(-1.0, min(1.0, c)))))
    return out


def face_key(points):
    rows = [tuple(round(float(x), 5) for x in p) for p in points]
    k = rows.index(min(rows))
    return tuple(rows[k:] + rows[:k])


def changed_faces(before, after):
    """Faces (as point arrays) only in `before`, and only in `after`."""
    pb, pa = np.asarray(before["positions"]), np.asarray(after["positions"])
    kb = {face_key(pb[f]): f for f in before["faces"]}
    ka = {face_key(pa[f]): f for f in after["faces"]}
    return ([pb[kb[k]] for k in kb.keys() - ka.keys()],
            [pa[ka[k]] for k in ka.keys() - kb.keys()])


def smallest(polygons):
    return min(min(corner_angles(p)) for p in polygons)


def only(meshes, name):
    found = meshes[name]
    assert len(found) == 1, [m["name"] for m in found]
    return found[0]


def ok(proc):
    assert proc.returncode == 0, proc.stderr
    assert proc.stderr == ""        # the host's own messages stay out of the way
    assert "Traceback" not in proc.stdout


def load_report(path):
    return json.loads(Path(path).read_text(encoding="utf-8"))    # parsed by json


# ---------------------------------------------------------------- single files
def test_stl_closed_solid_stays_closed_with_its_volume(runs):
    ok(runs["procs"]["stl"])
    before = only(runs["meshes"], "plate.stl")
    after = only(runs["meshes"], "plate-out.stl")
    assert is_closed_and_oriented(before["faces"])
    assert is_closed_and_oriented(after["faces"])
    exact = runs["made"]["plate_volume"]          # outline area x thickness
    assert volume(before) == pytest.approx(exact, rel=FLOAT32_VOLUME)
    assert volume(after) == pytest.approx(volume(before), rel=FLOAT32_VOLUME)
    gone, new = changed_faces(before, after)
    assert len(new) > len(gone) > 0
    # the job: the changed faces' smallest angle goes from a sliver to a fair one
    assert smallest(gone) < 2.0
    assert smallest(new) > 25.0


def test_stl_report_recounts_from_the_files(runs):
    report = load_report(runs["out"] / "plate.json")
    before = only(runs["meshes"], "plate.stl")
    after = only(runs["meshes"], "plate-out.stl")
    [ob] = report["objects"]
    assert report["input"].endswith("plate.stl") and report["output"].endswith("plate-out.stl")
    assert report["host"].startswith("Blender ")
    assert report["settings"]["min_angle"] == 30.0
    assert report["seconds"] >= 0.0 and ob["seconds"] >= 0.0 and ob["engine_seconds"] >= 0.0
    # an STL holds triangles only: the exporter wrote k - 2 triangles per k-gon
    assert ob["before"]["triangles"] == len(before["faces"])
    assert ob["after"]["triangles"] == len(after["faces"])
    assert ob["before"]["closed"] and ob["after"]["closed"]
    assert ob["after"]["volume"] == pytest.approx(volume(after), rel=FLOAT32_VOLUME)
    gone, new = changed_faces(before, after)
    assert ob["changed_faces"]["smallest_angle_before"] == pytest.approx(smallest(gone), abs=1e-3)
    assert ob["changed_faces"]["smallest_angle_after"] == pytest.approx(smallest(new), abs=1e-3)
    # per region: faces and smallest angle before/after; skipped ones say why
    changed = [r for r in ob["regions"] if r["status"] == "changed"]
    assert len(changed) == ob["regions_changed"] == report["totals"]["regions_changed"] > 0
    for r in changed:
        assert r["faces"] > 0 and r["triangles_after"] > 0
        assert r["min_angle_after"] >= r["min_angle_before"] - 1e-9
    assert sum(r["triangles_before"] for r in changed) == ob["changed_faces"]["triangles_before"]
    assert len(ob["skipped"]) == ob["regions_skipped"]
    assert all(s["reason"] for s in ob["skipped"])
    largest = max(r["faces"] for r in changed)
    assert report["picture"]["object"] == ob["name"]
    assert next(r for r in changed if r["region"] == report["picture"]["region"])["faces"] == \
        largest


def test_picture_is_svg_of_the_largest_region(runs):
    report = load_report(runs["out"] / "plate.json")
    root = ET.parse(runs["out"] / "plate.svg").getroot()
    assert root.tag == SVG + "svg"
    region = next(r for r in report["objects"][0]["regions"]
                  if r["region"] == report["picture"]["region"])
    polygons = root.findall(f"{SVG}polygon")
    # the before view holds the region's faces, the after view at least its triangles
    assert len(polygons) >= region["faces"] + region["triangles_after"]
    text = " ".join(t.text or "" for t in root.iter(f"{SVG}text"))
    assert f"before: {region['faces']} faces" in text
    assert "smallest angle" in text


def test_ply_triangle_soup_is_welded_first(runs):
    ok(runs["procs"]["ply"])
    made = runs["made"]
    report = load_report(runs["out"] / "soup.json")
    # every corner of the soup is its own vertex: welding leaves one per position
    assert report["totals"]["vertices_merged"] == made["soup_corners"] - made["soup_positions"]
    after = only(runs["meshes"], "soup-out.ply")
    assert is_closed_and_oriented(after["faces"])
    assert volume(after) == pytest.approx(made["plate_volume"], rel=FLOAT32_VOLUME)


def test_obj_open_floor_keeps_its_outline_topology(runs):
    ok(runs["procs"]["obj"])
    before = only(runs["meshes"], "floor.obj")
    after = only(runs["meshes"], "floor-out.obj")
    for mesh in (before, after):
        counts = undirected_counts(mesh["faces"])
        v = len({v for f in mesh["faces"] for v in f})
        # connected, genus 0, outer outline + three pillar holes: V - E + F = 2 - 4
        assert v - len(counts) + len(mesh["faces"]) == -2
    gone, new = changed_faces(before, after)
    assert smallest(gone) < 1.0
    assert smallest(new) >= 25.0 - 1e-3
    longest = max(np.linalg.norm(p - np.roll(p, 1, axis=0), axis=1).max() for p in new)
    assert longest <= 1.5 * (1 + 1e-6)
    # the floor stays flat: every vertex at the floor height (0.5, read in the OBJ's
    # Y-up frame and turned back by the importer)
    heights = np.asarray(after["positions"])[:, 2]
    assert np.allclose(heights, 0.5, atol=1e-6)


def test_blend_output_with_kept_outlines(runs):
    ok(runs["procs"]["blend"])
    before = only(runs["meshes"], "plate.stl")
    after = only(runs["meshes"], "plate-kept.blend")
    assert is_closed_and_oriented(after["faces"])
    assert volume(after) == pytest.approx(volume(before), rel=FLOAT32_VOLUME)
    # --keep-boundary adds no vertex on an outline: every crease edge of the input
    # (faces meeting at more than a degree) is an edge of the result, unsplit
    p = np.asarray(before["positions"])
    normal = {}
    for i, f in enumerate(before["faces"]):
        n = np.cross(p[f[1]] - p[f[0]], p[f[2]] - p[f[0]])
        normal[i] = n / np.linalg.norm(n)
    users = {}
    for i, f in enumerate(before["faces"]):
        for a, b in zip(f, f[1:] + f[:1]):
            users.setdefault((min(a, b), max(a, b)), []).append(i)
    creases = {(a, b) for (a, b), fs in users.items() if normal[fs[0]] @ normal[fs[1]] <
               math.cos(math.radians(1.0))}
    assert creases
    q = np.asarray(after["positions"])
    result_edges = {frozenset((face_key([q[a]])[0], face_key([q[b]])[0]))
                    for a, b in undirected_counts(after["faces"])}
    for a, b in creases:
        assert frozenset((face_key([p[a]])[0], face_key([p[b]])[0])) in result_edges


# ---------------------------------------------------------------- folder mode
def test_folder_with_two_workers_skips_the_broken_file(runs, tmp_path):
    folder = tmp_path / "many"
    folder.mkdir()
    for name in ("plate.stl", "floor.obj", "soup.ply"):
        shutil.copy(runs["inputs"] / name, folder / name)
    (folder / "broken.ply").write_text("ply\nformat nonsense\nend_header\n")
    (folder / "notes.txt").write_text("not a mesh; folder mode reads mesh formats only\n")
    out = tmp_path / "results"
    proc = batch([folder, "-o", out, "--jobs", 2, "--report", tmp_path / "all.json",
                  "--picture", tmp_path / "pictures"], runs["user"])
    assert proc.returncode == 1                      # one file failed
    errors = proc.stderr.strip().splitlines()
    assert len(errors) == 1 and "broken.ply" in errors[0], proc.stderr
    assert "Traceback" not in proc.stdout + proc.stderr
    assert sorted(p.name for p in out.iterdir()) == ["floor.obj", "plate.stl", "soup.ply"]
    assert sorted(p.name for p in (tmp_path / "pictures").iterdir()) == \
        ["floor.svg", "plate.svg", "soup.svg"]
    table = proc.stdout.splitlines()
    assert table[0].split() == ["file", "regions", "triangles", "smallest", "angle", "status"]
    rows = {line.split()[0]: line for line in table[2:6]}
    assert sorted(rows) == ["broken.ply", "floor.obj", "plate.stl", "soup.ply"]
    assert "failed" in rows["broken.ply"]
    assert all(rows[n].rstrip().endswith("ok") for n in ("floor.obj", "plate.stl", "soup.ply"))
    combined = load_report(tmp_path / "all.json")
    assert combined["failed"] == 1 and combined["jobs"] == 2
    status = {Path(f["file"]).name: f["status"] for f in combined["files"]}
    assert status == {"broken.ply": "failed", "floor.obj": "ok", "plate.stl": "ok",
                      "soup.ply": "ok"}
    for f in combined["files"]:
        if f["status"] == "ok":
            single = load_report(runs["out"] / {"plate.stl": "plate.json",
                                                "floor.obj": "floor.json",
                                                "soup.ply": "soup.json"}[Path(f["file"]).name])
            if Path(f["file"]).name != "floor.obj":   # the floor ran with other settings
                assert f["report"]["totals"]["triangles_after"] == \
                    single["totals"]["triangles_after"]


# ---------------------------------------------------------------- error paths
def one_line_error(proc, name, words):
    assert proc.returncode != 0
    lines = proc.stderr.splitlines()
    assert len(lines) == 1, proc.stderr
    assert name in lines[0] and words in lines[0], lines[0]
    assert "Traceback" not in proc.stdout + proc.stderr
    assert proc.stdout == ""


@pytest.mark.parametrize("case", ["missing file", "unknown format", "no mesh inside",
                                  "unreadable file", "unreadable blend"])
def test_error_paths_say_one_line(runs, tmp_path, case):
    if case == "missing file":
        source, words = tmp_path / "absent.stl", "no such file"
    elif case == "unknown format":
        source, words = tmp_path / "part.step", "unknown format"
        source.write_text("ISO-10303-21;\n")
    elif case == "no mesh inside":
        source, words = tmp_path / "empty.obj", "no mesh inside"
        source.write_text("# an OBJ file with nothing in it\n")
    elif case == "unreadable file":
        source, words = tmp_path / "damaged.ply", "cannot read"
        source.write_bytes(b"\x00\x17 not a header at all" * 20)
    else:
        source, words = tmp_path / "damaged.blend", "cannot read"
        source.write_bytes(b"BLENDER?" + bytes(range(256)) * 4)
    proc = batch([source, "-o", tmp_path / "out.stl"], runs["user"])
    one_line_error(proc, source.name, words)
    assert not (tmp_path / "out.stl").exists()


def test_unknown_output_format_is_one_line(runs, tmp_path):
    proc = batch([runs["inputs"] / "plate.stl", "-o", tmp_path / "out.fbx"], runs["user"])
    one_line_error(proc, "plate.stl", "unknown output format")


# ---------------------------------------------------------------- demo
def test_demo_writes_the_scene_report_and_picture(runs):
    proc = runs["procs"]["demo"]
    ok(proc)
    demo = runs["out"] / "demo"
    assert sorted(p.name for p in demo.iterdir()) == [
        "demo-input.stl", "demo-picture.svg", "demo-report.json", "demo-result.blend",
        "demo-result.stl"]
    assert "closed before and after" in proc.stdout
    report = load_report(demo / "demo-report.json")
    assert [o["name"] for o in report["objects"]] == ["Machined Plate", "Navmesh Floor"]
    plate_report = report["objects"][0]
    assert plate_report["vertices_merged"] > 0          # built as a triangle soup
    assert ET.parse(demo / "demo-picture.svg").getroot().tag == SVG + "svg"
    blend = runs["meshes"]["demo-result.blend"]
    plate = next(m for m in blend if m["name"] == "Machined Plate")
    floor = next(m for m in blend if m["name"] == "Navmesh Floor")
    assert is_closed_and_oriented(plate["faces"])
    # 12 x 8 x 1 plate with four regular 12-gon holes of circumradius 0.6
    exact = (12 * 8 - 4 * 12 * 0.6 ** 2 * math.sin(2 * math.pi / 12) / 2) * 1.0
    assert volume(plate) == pytest.approx(exact, rel=FLOAT32_VOLUME)
    counts = undirected_counts(floor["faces"])
    v = len({i for f in floor["faces"] for i in f})
    assert v - len(counts) + len(floor["faces"]) == 2 - 4        # outline + 3 pillars
    for mesh in (plate, floor):
        new_min = min(min(corner_angles(np.asarray(mesh["positions"])[f]))
                      for f in mesh["faces"])
        assert new_min > 25.0
    # the STL holds the same triangles as the .blend (k - 2 per face)
    stl = only(runs["meshes"], "demo-result.stl")
    assert len(stl["faces"]) == sum(len(f) - 2 for m in blend for f in m["faces"])
    # the summary prints the figures of the report
    totals = report["totals"]
    assert f"{totals['smallest_angle_before']:.1f}° → " in proc.stdout
    assert "Machined Plate" in proc.stdout and "Navmesh Floor" in proc.stdout


def test_committed_demo_picture_is_svg():
    root = ET.parse(ROOT / "docs" / "demo.svg").getroot()
    assert root.tag == SVG + "svg"
    assert root.findall(f"{SVG}polygon")

"""The batch command (``python -m addon.batch``) on bad input files: each gives one line
naming the file and its problem, a non-zero exit code, and no output file; in folder
mode the good files beside them are still processed.

The bad files are invented here byte by byte from the formats' own layouts (values from
memory):

* binary STL: an 80-byte header, a little-endian uint32 triangle count, then 50 bytes
  per triangle (normal and three corners as 12 float32, a uint16), so a file holds
  exactly 84 + 50 n bytes; ASCII STL: ``solid`` ... ``vertex x y z`` lines (the STL
  format of the StereoLithography Interface Specification, 3D Systems 1988);
* OBJ: ``v x y z`` lines and ``f`` lines whose corner numbers count from 1, or back
  from the last vertex when negative (Wavefront OBJ format description);
* IEEE 754: NaN and inf are floats but no coordinates.
"""

import math
import struct

import pytest

from tests.test_host_batch import batch

# file name -> words its one-line message must hold
BAD = {
    "empty.stl": "empty file",
    "header_only.stl": "truncated binary STL (40 bytes",
    "truncated.stl": "says 12 triangle(s), 684 bytes, but the file has 254 bytes",
    "count_too_high.stl": "says 10 triangle(s), 584 bytes, but the file has 184 bytes",
    "garbage.stl": "ASCII STL line 4: a vertex needs three numbers",
    "nan_ascii.stl": "ASCII STL line 5: a vertex is not finite (NaN or inf)",
    "inf_binary.stl": "binary STL triangle 4: a corner is not finite (NaN or inf)",
    "random_bytes.stl": "not a readable STL file",
    "out_of_range.obj": "OBJ line 4: face corner 9 is out of range (3 vertices so far)",
    "before_its_vertex.obj": "OBJ line 2: face corner 1 is out of range (0 vertices so far)",
    "nan.obj": "OBJ line 2: a vertex is not finite (NaN or inf)",
}


def box_triangles():
    """The 12 triangles of a unit cube, outward."""
    c = [(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (1, 1, 1),
         (0, 1, 1)]
    quads = [(0, 3, 2, 1), (4, 5, 6, 7), (0, 1, 5, 4), (1, 2, 6, 5), (2, 3, 7, 6),
             (3, 0, 4, 7)]
    return [[c[a], c[b], c[d]] for a, b, d, _ in quads] + \
        [[c[a], c[d], c[e]] for a, _, d, e in quads]


def binary_stl(triangles, count=None):
    out = b"invented test part".ljust(80, b" ")
    out += struct.pack("<I", len(triangles) if count is None else count)
    for tri in triangles:
        out += struct.pack("<3f", 0.0, 0.0, 0.0)
        for corner in tri:
            out += struct.pack("<3f", *corner)
        out += b"\0\0"
    return out


def write_good_stl(path):
    path.write_bytes(binary_stl(box_triangles()))


def write_bad_files(folder):
    box = box_triangles()
    (folder / "empty.stl").write_bytes(b"")
    (folder / "header_only.stl").write_bytes(binary_stl(box)[:40])
    (folder / "truncated.stl").write_bytes(binary_stl(box)[:254])
    (folder / "count_too_high.stl").write_bytes(binary_stl(box[:2], count=10))
    (folder / "garbage.stl").write_text(
        "solid part\n facet normal 0 0 1\n  outer loop\n   vertex 0 0 zero\n"
        "   vertex 1 0 0\n   vertex 0 1 0\n  endloop\n endfacet\nendsolid part\n")
    (folder / "nan_ascii.stl").write_text(
        "solid part\n facet normal 0 0 1\n  outer loop\n   vertex 0 0 0\n"
        "   vertex nan 0 0\n   vertex 0 1 0\n  endloop\n endfacet\nendsolid part\n")
    broken = [list(t) for t in box]
    broken[3][1] = (float("inf"), 0.0, 1.0)
    (folder / "inf_binary.stl").write_bytes(binary_stl(broken))
    (folder / "random_bytes.stl").write_bytes(bytes((k * 7919 + 13) % 256 for k in range(3001)))
    (folder / "out_of_range.obj").write_text("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 9\n")
    (folder / "before_its_vertex.obj").write_text("# a face first\nf 1 2 3\nv 0 0 0\n")
    (folder / "nan.obj").write_text("v 0 0 0\nv nan 0 0\nv 0 1 0\nv 1 1 0\nf 1 2 3\n"
                                    "f 2 4 3\n")


@pytest.fixture(scope="module")
def user(tmp_path_factory):
    return tmp_path_factory.mktemp("user")


def one_line(proc, name, words):
    """Exit code not 0, one line on stderr naming the file and the problem, nothing on
    stdout, no traceback."""
    assert proc.returncode != 0
    lines = proc.stderr.splitlines()
    assert len(lines) == 1, proc.stderr
    assert name in lines[0] and words in lines[0], lines[0]
    assert proc.stdout == ""
    assert "Traceback" not in proc.stderr


@pytest.mark.parametrize("name", sorted(BAD))
def test_bad_file_one_line_and_no_output(tmp_path, user, name):
    write_bad_files(tmp_path)
    out = tmp_path / "out" / "result.stl"
    proc = batch([tmp_path / name, "-o", out], user)
    one_line(proc, name, BAD[name])
    assert not out.parent.exists() or not any(out.parent.iterdir())


@pytest.mark.parametrize("case", ["missing path", "unknown extension", "folder without meshes"])
def test_paths_that_are_not_mesh_files(tmp_path, user, case):
    if case == "missing path":
        source, words = tmp_path / "absent.obj", "no such file"
    elif case == "unknown extension":
        source, words = tmp_path / "part.xyz", "unknown format '.xyz'"
        source.write_text("1 2 3\n")
    else:
        source, words = tmp_path / "notes", "no mesh files found"
        source.mkdir()
        (source / "readme.txt").write_text("no mesh here\n")
    out = tmp_path / "out"
    proc = batch([source, "-o", out / ("result.stl" if case != "folder without meshes"
                                       else "")], user)
    one_line(proc, source.name, words)
    assert not out.exists()


def test_folder_processes_the_good_file_and_names_every_bad_one(tmp_path, user):
    folder = tmp_path / "parts"
    folder.mkdir()
    write_bad_files(folder)
    write_good_stl(folder / "good.stl")
    (folder / "notes.xyz").write_text("folder mode reads mesh formats only\n")
    out = tmp_path / "results"
    proc = batch([folder, "-o", out, "--jobs", 2], user)
    assert proc.returncode == 1
    assert "Traceback" not in proc.stdout + proc.stderr
    lines = proc.stderr.splitlines()
    assert len(lines) == len(BAD), proc.stderr
    for name, words in BAD.items():
        [line] = [ln for ln in lines if ln.startswith(str(folder / name) + ":")]
        assert words in line, line
    # only the good file has a result
    assert sorted(p.name for p in out.iterdir()) == ["good.stl"]
    written = (out / "good.stl").read_bytes()
    count = struct.unpack_from("<I", written, 80)[0]
    assert len(written) == 84 + 50 * count and count >= 12     # a well-formed binary STL
    corners = [struct.unpack_from("<9f", written, 84 + 50 * k + 12) for k in range(count)]
    assert all(math.isfinite(x) for c in corners for x in c)
    assert f"{len(BAD) + 1 - len(BAD)} of {len(BAD) + 1} file(s) done, {len(BAD)} failed" \
        in proc.stdout

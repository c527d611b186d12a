"""Before/after picture of a remeshed region as SVG (an open W3C standard).

Pure Python + numpy (no host import), so the batch command, the tests and
anyone with a MeshEdit can draw one.  Faces are coloured by their smallest
corner angle with this project's own ramp (dark plum for slivers through
amber to sea green and deep teal for well-shaped triangles), and a legend and
the run's figures are written beside the two views.
"""

from xml.sax.saxutils import escape

import numpy as np

from .measure_faces import polygon_min_angles

# (angle in degrees, (r, g, b)): the project's own ramp
RAMP = (
    (0.0, (96, 20, 70)),
    (10.0, (200, 60, 50)),
    (20.0, (236, 160, 40)),
    (30.0, (170, 205, 90)),
    (40.0, (70, 165, 125)),
    (60.0, (25, 95, 130)),
)
PANEL = 440.0
MARGIN = 20.0


def ramp_colour(angle):
    """Hex colour of a smallest angle (degrees) on the ramp."""
    a = float(np.clip(angle, RAMP[0][0], RAMP[-1][0]))
    for (a0, c0), (a1, c1) in zip(RAMP, RAMP[1:]):
        if a <= a1:
            s = (a - a0) / (a1 - a0)
            rgb = [round(c0[k] + s * (c1[k] - c0[k])) for k in range(3)]
            return "#{:02x}{:02x}{:02x}".format(*rgb)
    return "#{:02x}{:02x}{:02x}".format(*RAMP[-1][1])


def project(points3, normal):
    """2D coordinates of 3D points in an orthonormal frame of the plane."""
    n = np.asarray(normal, dtype=np.float64)
    n = n / np.linalg.norm(n)
    axis = np.zeros(3)
    axis[int(np.argmin(np.abs(n)))] = 1.0
    e1 = np.cross(n, axis)
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(n, e1)
    p = np.asarray(points3, dtype=np.float64)
    return np.column_stack((p @ e1, p @ e2))


def region_views(vertices, faces, edit, region):
    """(before polygons, after polygons) of one region as lists of (k, 2) arrays
    in its plane, from the mesh arrays and the MeshEdit."""
    from .engine_link import engine

    polys = engine.PolygonList.from_faces(faces)
    report = next(r for r in edit.regions if r.region == region)
    verts = np.asarray(vertices, dtype=np.float64)
    all_verts = np.vstack((verts, edit.new_vertices))
    before = [project(verts[polys.face(f)], report.normal) for f in report.face_ids]
    after = [project(all_verts[edit.faces.face(k)], report.normal)
             for k in np.flatnonzero(edit.face_region == region).tolist()]
    return before, after


def _panel(polygons, x_off, y_off, lo, scale, height):
    out = []
    angles = polygon_min_angles(polygons)
    for poly, angle in zip(polygons, angles):
        pts = " ".join(f"{x_off + (x - lo[0]) * scale:.2f},{y_off + height - (y - lo[1]) * scale:.2f}"
                       for x, y in poly)
        out.append(f'<polygon points="{pts}" fill="{ramp_colour(angle)}" '
                   f'stroke="#202020" stroke-width="0.4"/>')
    return out


def before_after_svg(before, after, title, figures, threshold=30.0):
    """SVG text: two views (lists of (k, 2) polygons sharing one frame), a
    legend of the ramp and the figures (a dict of label -> value)."""
    every = np.vstack([p for p in before + after]) if before or after else np.zeros((1, 2))
    lo, hi = every.min(axis=0), every.max(axis=0)
    span = max(float((hi - lo).max()), 1e-300)
    scale = (PANEL - 2 * MARGIN) / span
    height = float((hi - lo)[1]) * scale
    top = 60.0
    width = 2 * PANEL + 230.0
    total_h = max(top + height + 2 * MARGIN + 30.0, 420.0)
    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{width:.0f}" height="{total_h:.0f}" '
        f'viewBox="0 0 {width:.0f} {total_h:.0f}" font-family="sans-serif">',
        '<rect width="100%" height="100%" fill="#fbfbf7"/>',
        f'<text x="{MARGIN}" y="28" font-size="18">{escape(title)}</text>',
        f'<text x="{MARGIN}" y="{top - 8}" font-size="14">before: {len(before)} faces</text>',
        f'<text x="{PANEL + MARGIN}" y="{top - 8}" font-size="14">after: {len(after)} faces'
        '</text>',
    ]
    parts += _panel(before, MARGIN, top, lo, scale, height)
    parts += _panel(after, PANEL + MARGIN, top, lo, scale, height)
    # legend: the ramp as stacked bands, 0 to 60 degrees
    lx, ly = 2 * PANEL + 20.0, top
    parts.append(f'<text x="{lx}" y="{ly - 8}" font-size="13">smallest angle</text>')
    for k in range(60):
        parts.append(f'<rect x="{lx}" y="{ly + k * 4}" width="24" height="4.5" '
                     f'fill="{ramp_colour(k + 0.5)}"/>')
    for a in (0, 10, 20, 30, 40, 50, 60):
        parts.append(f'<text x="{lx + 30}" y="{ly + a * 4 + 4}" font-size="11">{a}°</text>')
    parts.append(f'<line x1="{lx - 4}" x2="{lx + 28}" y1="{ly + threshold * 4}" '
                 f'y2="{ly + threshold * 4}" stroke="#000" stroke-dasharray="3,2"/>')
    fy = ly + 260.0
    for label, value in figures.items():
        parts.append(f'<text x="{lx}" y="{fy}" font-size="12">{escape(str(label))}: '
                     f'{escape(str(value))}</text>')
        fy += 16.0
    parts.append("</svg>")
    return "\n".join(parts) + "\n"

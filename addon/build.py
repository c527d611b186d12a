"""Build the extension zip: ``python -m addon.build [--out DIR]``.

Writes ``dist/flat_region_remesh-<version>.zip`` with plain :mod:`zipfile` (no host
needed): the manifest and the add-on's host modules at the top (this package's
``__init__.py`` becomes the extension's), and the engine as the subpackage ``engine``.
Entries are sorted and dated 1980-01-01, so the same sources give the same bytes.
"""

import argparse
import sys
import tomllib
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
MANIFEST = "blender_manifest.toml"
NOT_SHIPPED = {"build.py", "batch.py", "demo_scene.py"}  # modules that stay in the repository
# (the batch command reads and writes files; the extension itself touches none)
FIXED_DATE = (1980, 1, 1, 0, 0, 0)


def read_versions(root=ROOT):
    """(id, version) from the manifest; raises ValueError when pyproject.toml or the
    engine disagree on the version."""
    manifest = tomllib.loads((root / MANIFEST).read_text(encoding="utf-8"))
    project = tomllib.loads((root / "pyproject.toml").read_text(encoding="utf-8"))
    version = manifest["version"]
    if project["project"]["version"] != version:
        raise ValueError(f"{MANIFEST} says version {version}, pyproject.toml says "
                         f"{project['project']['version']}")
    return manifest["id"], version


def package_files(root=ROOT):
    """Sorted (name in the zip, source path) pairs: no tests, caches or build tools."""
    files = [(MANIFEST, root / MANIFEST)]
    files += [(p.name, p) for p in sorted((root / "addon").glob("*.py"))
              if p.name not in NOT_SHIPPED]
    files += [(f"engine/{p.name}", p) for p in sorted((root / "engine").glob("*.py"))]
    return files


def build(out_dir=None, root=ROOT):
    """Write the zip and return its path."""
    ext_id, version = read_versions(root)
    out_dir = Path(out_dir) if out_dir else root / "dist"
    out_dir.mkdir(parents=True, exist_ok=True)
    target = out_dir / f"{ext_id}-{version}.zip"
    with zipfile.ZipFile(target, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        for name, path in package_files(root):
            info = zipfile.ZipInfo(name, date_time=FIXED_DATE)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            zf.writestr(info, path.read_bytes())
    return target


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", help="output folder (default: dist/ in the repository)")
    args = parser.parse_args(argv)
    print(build(args.out))
    return 0


if __name__ == "__main__":
    sys.exit(main())

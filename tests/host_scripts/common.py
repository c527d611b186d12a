"""Shared steps of the host scenarios.  Each scenario script runs in its own process
with the test venv's Python and the real host (the ``bpy`` module), in a user folder
made for it by tests/test_host_extension.py (BLENDER_USER_* variables)."""

import json
import sys

import bpy

REPO = "user_default"
EXTENSION = f"bl_ext.{REPO}.flat_region_remesh"
MARK = "HOST-FACTS "


def install_and_enable(zip_path):
    """Install the zip with the host's own operator, enabled on install."""
    result = bpy.ops.extensions.package_install_files(
        filepath=zip_path, repo=REPO, enable_on_install=True)
    return sorted(result)


def disable():
    """Disable the extension with the host's own preferences operator."""
    return sorted(bpy.ops.preferences.addon_disable(module=EXTENSION))


def extension_modules():
    return sorted(m for m in sys.modules if m == EXTENSION or m.startswith(EXTENSION + "."))


def report(facts):
    """Hand the facts to the test (one JSON line on stdout)."""
    sys.stdout.write(MARK + json.dumps(facts) + "\n")
    sys.stdout.flush()

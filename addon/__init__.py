"""Flat Region Remesh, the Blender host layer.

Inside the extension zip this file is the extension's top-level ``__init__.py``
(the package ``bl_ext.<repo>.flat_region_remesh``), with the geometry engine as the
subpackage ``engine`` beside it.  In the repository it is the package ``addon`` next to
the top-level ``engine``.  It imports no ``bpy`` itself, so the repository's tests and
the batch command can import it anywhere; the host modules load on ``register()``.
"""


def register():
    """Register every class, the scene settings and the menu entries (host only)."""
    from . import registration

    registration.register()


def unregister():
    """Undo :func:`register`."""
    from . import registration

    registration.unregister()

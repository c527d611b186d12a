"""Flat Region Remesh host layer (Blender).  The operators, panel and
extension build arrive with the add-on work; the geometry lives in `engine`."""

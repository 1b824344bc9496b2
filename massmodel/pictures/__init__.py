"""Pictures: display meshes, off-screen VTK rendering, the drawing sheet, the CG chart, ballast plots.

VTK/pyvista and matplotlib are imported inside the functions that need them.

May import: every layer below it (core up to report); never :mod:`massmodel.page`, :mod:`massmodel.cli`
or :mod:`massmodel.notebook`.
"""

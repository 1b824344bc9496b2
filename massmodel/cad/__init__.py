"""CAD: B-rep solids and meshes of the primitives, STEP and mesh shapes, STEP/STL/GLB export, packaging checks.

cadquery, OCP, trimesh and manifold3d are imported inside the functions that need them, so importing this package
stays light.

May import: :mod:`massmodel.core` (not :mod:`massmodel.vehicle`, its sibling of layer 1).
"""

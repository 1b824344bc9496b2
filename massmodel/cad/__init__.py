"""CAD: B-rep solids and meshes of the primitives, STEP and mesh shapes, STEP/STL/GLB export, packaging checks.

OCP, trimesh and manifold3d are imported inside the functions that need them, so importing this package stays light;
solids are OpenCascade shapes (``OCP.TopoDS.TopoDS_Shape``) built with OCP directly, and the STEP, STL and GLB
writers use OCP and trimesh too: nothing here imports cadquery (which brings VTK and more along). The fit of a box block in a box slot has a closed form in
:mod:`massmodel.cad.boxfit` (numpy only).

May import: :mod:`massmodel.core` (not :mod:`massmodel.vehicle`, its sibling of layer 1).
"""

"""The core: numpy only, no file formats, no CAD kernel, no plotting.

Holds units and the expression language, frames and poses, the immutable mass-properties value object and its
pure functions (``massprops``), the vectorised roll-up (``batch``), materials, closed-form primitive shapes
(``shapes``, on the numpy meshes of ``geometry`` and the polygon maths of ``polygons``), part paths and groups (``groups``), the model
objects (components, slots, rules, vehicle, load cases), the error type of user input, atomic writes, the cautions
text and the measurement-uncertainty helpers.

May import: numpy and the standard library; numba only lazily, in ``kernels`` (which compiles ``closed_forms`` for
``batch``, loaded only for very large batches). Nothing else in massmodel.
"""

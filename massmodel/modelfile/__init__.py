"""Input files: the one reader (TOML, errors naming file, item and field, ``extends``) and the model-file loader
with its load cases and seated-driver tables.

May import: :mod:`massmodel.core`, :mod:`massmodel.vehicle`, :mod:`massmodel.cad` (STEP and mesh shapes, loaded lazily),
:mod:`massmodel.uncertainty`.
"""
